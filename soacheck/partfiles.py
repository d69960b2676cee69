"""Part folders: ``part.toml``, ``soa.csv`` and ``zth.csv``, read into a :class:`~soacheck.parts.Part`
and written atomically (the format is documented in ``docs/part-format.md``).
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import numpy as np

from soacheck.bipolar import Gain
from soacheck.csvtables import read_table, significant
from soacheck.errors import SoacheckError
from soacheck.mosfet import TransferCurves
from soacheck.outputs import replace_text, write_folder
from soacheck.partheader import BIPOLAR_KINDS, PART_FILE, SOA_FILE, read_header
from soacheck.parts import Part, Ratings, SoaCurve
from soacheck.quantities import CURRENT, DURATION, THERMAL_RESISTANCE, VOLTAGE, Quantity
from soacheck.tomlfiles import check_keys, read_toml, toml_number, toml_text
from soacheck.units import format_duration, parse_duration

ZTH_FILE = "zth.csv"
TRANSFER_FILE = "transfer.csv"
_DERATING_KEYS = ("second_breakdown",)
_PAIRED_KEYS = {"thermal": ("foster_r", "foster_tau"), "gain": ("current", "hfe")}


def _number_list(where: str, value: Any) -> np.ndarray:
    if not isinstance(value, list) or not value:
        raise SoacheckError(f"{where} must be a non-empty list of numbers, such as [0.1, 0.2]")
    return np.array([toml_number(f"{where}[{i}]", v) for i, v in enumerate(value)])


def read_part_toml(path: Path) -> dict[str, Any]:
    """Parse ``part.toml`` into a dict, turning syntax errors into a clear message."""
    return read_toml(path, "part")


def read_part(folder: str | Path) -> Part:
    """Read and validate a part folder holding ``part.toml`` and ``soa.csv``.

    The format is documented in ``docs/part-format.md``. The folder name must equal the
    part's ``id``, so that a part can be found by its id without reading every part.
    """
    folder = Path(folder)
    header = read_header(folder)
    data, where, kind, part_id, r = header.data, header.where, header.kind, header.id, header.ratings
    ratings = Ratings(
        v_max_v=r["v_max"],
        i_max_a=r["i_max"],
        p_max_w=r["p_max"],
        tj_max_c=r["tj_max"],
        rth_jc_k_per_w=r["rth_jc"],
        i_pulse_max_a=r.get("i_pulse_max"),
    )

    sb_case_c = sb_fraction = np.zeros(0)
    if "derating" in data:
        derating = data["derating"]
        if not isinstance(derating, dict):
            raise SoacheckError(f"{where}: 'derating' must be a table: write [derating] on its own line")
        check_keys(f"{where} [derating]", derating, _DERATING_KEYS, ())
        if "second_breakdown" in derating:
            sb_case_c, sb_fraction = _derating_table(
                f"{where}: derating.second_breakdown", derating["second_breakdown"]
            )

    foster_r = foster_tau = np.zeros(0)
    if "thermal" in data:
        foster_r, foster_tau = _paired_lists(where, "thermal", data["thermal"], "one time constant per resistance")

    bipolar = kind in BIPOLAR_KINDS
    gain = _gain_table(where, data["gain"]) if "gain" in data else None
    darlington = data.get("darlington", False)
    if not isinstance(darlington, bool):
        raise SoacheckError(f"{where}: darlington is {darlington!r}; write true or false")
    if not bipolar and (gain is not None or darlington):
        key = "[gain]" if gain is not None else "darlington"
        raise SoacheckError(f"{where}: {key} describes a bipolar part, but kind is '{kind}'; remove it or fix kind")

    curves = read_soa_curves(folder / SOA_FILE, kind=kind, ratings=ratings)
    zth_time = zth_value = np.zeros(0)
    if (folder / ZTH_FILE).exists():
        zth_time, zth_value = read_zth(folder / ZTH_FILE)
    transfer = None
    if (folder / TRANSFER_FILE).exists():
        if bipolar:
            raise SoacheckError(
                f"{folder / TRANSFER_FILE}: a transfer characteristic describes a FET or IGBT, but kind is "
                f"'{kind}'; remove the file or fix kind in {PART_FILE}"
            )
        transfer = read_transfer(folder / TRANSFER_FILE)
    return Part(
        id=part_id,
        kind=kind,
        description=toml_text(f"{where}: description", data["description"]),
        source=toml_text(f"{where}: source", data["source"]),
        ratings=ratings,
        curves=curves,
        breakdown_case_c=sb_case_c,
        breakdown_fraction=sb_fraction,
        foster_r_k_per_w=foster_r,
        foster_tau_s=foster_tau,
        zth_time_s=zth_time,
        zth_k_per_w=zth_value,
        transfer=transfer,
        gain=gain,
        darlington=darlington,
        folder=folder,
    )


def _paired_lists(where: str, name: str, value: Any, rule: str) -> tuple[np.ndarray, np.ndarray]:
    """A table of two equally long lists of numbers above zero: ``[thermal]`` or ``[gain]``."""
    if not isinstance(value, dict):
        raise SoacheckError(f"{where}: '{name}' must be a table: write [{name}] on its own line")
    keys = _PAIRED_KEYS[name]
    check_keys(f"{where} [{name}]", value, keys, keys)
    first, second = (_number_list(f"{where}: {name}.{key}", value[key]) for key in keys)
    if first.size != second.size:
        raise SoacheckError(
            f"{where}: {name}.{keys[0]} has {first.size} values and {name}.{keys[1]} {second.size}; give {rule}"
        )
    return first, second


def _gain_table(where: str, value: Any) -> Gain:
    """``[gain]``: ``current = [...]`` (A, rising) and ``hfe = [...]`` (above zero), one h_FE per current."""
    current, hfe = _paired_lists(where, "gain", value, "one h_FE per current")
    back = np.flatnonzero(np.diff(current) <= 0)
    if back.size:
        k = int(back[0]) + 1
        raise SoacheckError(
            f"{where}: gain.current[{k}] = {current[k]:g} A does not rise above {current[k - 1]:g} A; "
            "list currents from low to high"
        )
    return Gain(current, hfe)


def read_transfer(path: Path) -> TransferCurves:
    """Read a transfer characteristic: columns ``temp,vgs,current`` (°C, V, A), one curve per temperature.

    At least two temperatures; each curve at least two points, listed from low to high gate
    voltage, with the current above zero and rising with the gate voltage.
    """
    table = read_table(path, numeric=("temp", "vgs", "current"), positive=("current",))
    temp, vgs, current = (table.columns[name] for name in ("temp", "vgs", "current"))
    temps = np.unique(temp)
    if temps.size < 2:
        raise SoacheckError(
            f"{path}: only one temperature ({temps[0]:g} °C); digitize the transfer curves at two or more junction "
            "temperatures"
        )
    v_curves, i_curves, line_curves = [], [], []
    for t in temps:
        rows = np.flatnonzero(temp == t)
        if rows.size < 2:
            raise SoacheckError(f"{table.where(int(rows[0]))}: the {t:g} °C curve has one point; digitize at least two")
        v, i = vgs[rows], current[rows]
        for name, values, unit in (("vgs", v, "V"), ("current", i, "A")):
            back = np.flatnonzero(np.diff(values) <= 0)
            if back.size:
                k = int(back[0]) + 1
                raise SoacheckError(
                    f"{table.where(int(rows[k]))}: {name} {values[k]:g} {unit} does not rise above "
                    f"{values[k - 1]:g} {unit} in the {t:g} °C curve; list each curve from low to high gate voltage, "
                    "the current rising with it"
                )
        v_curves.append(v)
        i_curves.append(i)
        line_curves.append(table.lines[rows])
    return TransferCurves(temps, tuple(v_curves), tuple(i_curves), tuple(line_curves))


def _derating_table(where: str, value: Any) -> tuple[np.ndarray, np.ndarray]:
    if not isinstance(value, list) or not value:
        raise SoacheckError(f"{where} must be a list of [case_c, fraction] pairs, such as [[25, 1.0], [100, 0.7]]")
    case_c, fraction = [], []
    for i, row in enumerate(value):
        if not isinstance(row, list) or len(row) != 2:
            raise SoacheckError(f"{where}[{i}] is {row!r}; write a pair [case_c, fraction]")
        case_c.append(toml_number(f"{where}[{i}] case temperature", row[0], positive=False))
        fraction.append(toml_number(f"{where}[{i}] fraction", row[1], positive=False))
    case = np.array(case_c)
    frac = np.array(fraction)
    if np.any(np.diff(case) <= 0):
        raise SoacheckError(f"{where}: case temperatures must rise from row to row")
    if np.any(frac < 0) or np.any(frac > 1):
        raise SoacheckError(f"{where}: fractions must lie between 0 and 1 (1 = not derated)")
    return case, frac


def read_soa_curves(path: Path, *, kind: str, ratings: Ratings) -> tuple[SoaCurve, ...]:
    """Read ``soa.csv`` (columns ``pulse,voltage,current``) into curves, shortest pulse first.

    Each curve must list its points from low to high voltage with no repeated voltage,
    and its current must not rise with voltage, except for an on-resistance line at the
    start of a FET or IGBT curve and digitizing noise along a current limit (slope
    within ±0.15 on log-log axes).
    """
    table = read_table(path, numeric=("voltage", "current"), text=("pulse",), positive=("voltage", "current"))
    pulse, voltage, current = (table.columns[name] for name in ("pulse", "voltage", "current"))
    pulse_s = np.array([parse_duration(p, where=table.where(i) + ": pulse") for i, p in enumerate(pulse)])
    may_rise_at_start = kind not in ("npn", "pnp")
    file_lines = table.lines
    curves = []
    for width in sorted(set(pulse_s.tolist())):  # np.unique would import numpy.ma (6 ms at start-up)
        rows = np.flatnonzero(pulse_s == width)
        v, i = voltage[rows], current[rows]
        label = pulse[rows[0]]
        if rows.size < 2:
            raise SoacheckError(f"{table.where(int(rows[0]))}: curve '{label}' has one point; digitize at least two")
        dv = np.diff(v)
        back = np.flatnonzero(dv < 0)
        if back.size:
            k = int(rows[back[0] + 1])
            raise SoacheckError(
                f"{table.where(k)}: voltage {v[back[0] + 1]:g} V follows {v[back[0]]:g} V in curve '{label}'; "
                "list each curve's points from low to high voltage"
            )
        same = np.flatnonzero(dv == 0)
        if same.size:
            k = int(rows[same[0] + 1])
            raise SoacheckError(
                f"{table.where(k)}: voltage {v[same[0]]:g} V appears twice in curve '{label}'; keep one point "
                "(the voltage limit at ratings.v_max is implied, no vertical line is needed)"
            )
        slope = np.diff(np.log(i)) / np.diff(np.log(v))
        rising = slope > 0.15
        if may_rise_at_start:
            # an on-resistance line may open a FET or IGBT curve: allow the leading run
            lead = int(np.argmin(rising)) if not rising.all() else rising.size
            rising[:lead] = False
        if rising.any():
            k = int(np.argmax(rising))
            raise SoacheckError(
                f"{table.where(int(rows[k + 1]))}: current rises from {i[k]:g} A to {i[k + 1]:g} A as voltage rises "
                f"in curve '{label}'; an SOA boundary must fall"
                + ("" if may_rise_at_start else " (only a FET or IGBT curve may open with an on-resistance line)")
            )
        if v[-1] > ratings.v_max_v * 1.0001:
            k = int(rows[-1])
            raise SoacheckError(
                f"{table.where(k)}: curve '{label}' reaches {v[-1]:g} V, above ratings.v_max = "
                f"{ratings.v_max_v:g} V; end the curve at v_max or correct the rating"
            )
        curves.append(SoaCurve(pulse_s=float(width), voltage_v=v, current_a=i, lines=file_lines[rows]))
    if not curves[-1].is_dc:
        raise SoacheckError(f"{path}: no 'dc' curve; digitize the DC curve too (pulse = dc)")
    return tuple(curves)


def read_zth(path: Path) -> tuple[np.ndarray, np.ndarray]:
    """Read a digitized single-pulse thermal impedance curve: columns ``time,zth`` in s and K/W.

    Times must rise from row to row and the impedance must not fall with time (heat only
    spreads further); both must be above zero.
    """
    table = read_table(path, numeric=("time", "zth"), positive=("time", "zth"))
    t, z = table.columns["time"], table.columns["zth"]
    if t.size < 2:
        raise SoacheckError(f"{path}: a Zth curve needs at least two points")
    step = np.flatnonzero(np.diff(t) <= 0)
    if step.size:
        k = int(step[0]) + 1
        raise SoacheckError(
            f"{table.where(k)}: time {t[k]:g} s does not rise after {t[k - 1]:g} s; list times from short to long"
        )
    fall = np.flatnonzero(np.diff(z) < 0)
    if fall.size:
        k = int(fall[0]) + 1
        raise SoacheckError(
            f"{table.where(k)}: zth falls from {z[k - 1]:g} to {z[k]:g} K/W; a single-pulse Zth curve never "
            "falls with time (check for a misread decade)"
        )
    return t, z


def output_folder(folder: Path) -> Path:
    """Make sure ``folder`` exists (with its parents) to write into; one clear error when it cannot."""
    folder = Path(folder)
    try:
        folder.mkdir(parents=True, exist_ok=True)
    except FileExistsError:
        raise SoacheckError(f"{folder}: is a file, not a folder; choose another output folder") from None
    except OSError as err:
        raise SoacheckError(
            f"{folder}: cannot make this folder ({err.strerror}); choose a folder you can write to"
        ) from None
    return folder


def write_output(path: Path, text: str | bytes) -> None:
    """Write one file (text or bytes) atomically, making its folder; file-system errors as one clear line."""
    if path.is_dir():
        raise SoacheckError(f"{path}: is a folder; give the file to write, such as {path / path.name}")
    output_folder(path.parent)
    try:
        replace_text(path, text)
    except OSError as err:
        raise SoacheckError(f"{path}: cannot write it ({err.strerror}); choose a folder you can write to") from None


def write_new_part(folder: Path, toml: str, soa: str, *, force: bool = False) -> tuple[str, ...]:
    """Write ``part.toml`` and, unless the folder already holds curves, ``soa.csv``.

    Digitized curves are never lost: a ``soa.csv`` or ``zth.csv`` already in the folder is
    kept, with or without ``force``; ``force`` replaces only an existing ``part.toml``.
    Other files in the folder are left alone. A new folder is written atomically.

    Returns
    -------
    tuple of str
        The names of the curve files that were kept.
    """
    folder = Path(folder)
    if not folder.exists():
        output_folder(folder.parent)
        try:
            write_folder(folder, {PART_FILE: toml, SOA_FILE: soa})
        except OSError as err:
            raise SoacheckError(
                f"{folder}: cannot write it ({err.strerror}); choose a folder you can write to"
            ) from None
        return ()
    if not folder.is_dir():
        raise SoacheckError(f"{folder}: is a file, not a part folder; choose another id or --into folder")
    if (folder / PART_FILE).exists() and not force:
        raise SoacheckError(
            f"{folder / PART_FILE}: exists; add --force to replace it (soa.csv and zth.csv are kept either way)"
        )
    kept = tuple(name for name in (SOA_FILE, ZTH_FILE) if (folder / name).exists())
    if SOA_FILE not in kept:
        write_output(folder / SOA_FILE, soa)
    write_output(folder / PART_FILE, toml)
    return kept


def add_curves(path: Path, curves: dict[str, tuple[np.ndarray, np.ndarray]], *, force: bool = False) -> int:
    """Add pulse curves to ``soa.csv`` in one atomic write, keeping every other row; returns the rows written.

    ``curves`` maps a pulse width (``dc``, ``1ms`` ...) to its voltages and currents. A
    curve of the same pulse width already in the file is replaced only with ``force``.
    The folder is made when it does not exist.
    """
    path = Path(path)
    for pulse, (voltage_v, current_a) in curves.items():
        _digitized_values(voltage_v, f"curve '{pulse}': voltage", VOLTAGE)
        _digitized_values(current_a, f"curve '{pulse}': current", CURRENT)
    labels = [format_duration(parse_duration(pulse, where="pulse")) for pulse in curves]
    if len(set(labels)) < len(labels):
        raise SoacheckError(f"pulse widths {', '.join(curves)}: a pulse width is given twice; one curve per width")
    kept: list[str] = []
    if path.is_file():
        table = read_table(path, numeric=("voltage", "current"), text=("pulse",))
        frame = table.frame
        existing = [format_duration(parse_duration(p, where=f"{path}: pulse")) for p in frame["pulse"]]
        same = np.isin(existing, labels)
        if same.any() and not force:
            clash = next(e for e in existing if e in labels)
            raise SoacheckError(f"{path}: already has a '{clash}' curve; add --force to replace it")
        kept = [
            f"{p},{float(v)!r},{float(c)!r}"
            for p, v, c, s in zip(frame["pulse"], frame["voltage"], frame["current"], same, strict=True)
            if not s
        ]
    rows = [
        f"{label},{significant(v)},{significant(c)}"
        for label, (voltage_v, current_a) in zip(labels, curves.values(), strict=True)
        for v, c in zip(voltage_v, current_a, strict=True)
    ]
    write_output(path, "\n".join(["pulse,voltage,current", *kept, *rows]) + "\n")
    return len(rows)


def add_curve(path: Path, pulse: str, voltage_v: np.ndarray, current_a: np.ndarray, *, force: bool = False) -> int:
    """Add one pulse curve to ``soa.csv``, keeping every other row; returns the rows written.

    A curve of the same pulse width already in the file is replaced only with ``force``.
    """
    return add_curves(path, {pulse: (voltage_v, current_a)}, force=force)


def _digitized_values(values: np.ndarray, what: str, quantity: Quantity) -> None:
    """Refuse to write a digitized value that no curve can hold (NaN, zero or negative from a bad calibration)."""
    quantity.check_array(
        np.asarray(values, dtype=float),
        lambda k: f"{what} of point {k + 1} (check the axis calibration, --x and --y)",
    )


def write_zth(path: Path, time_s: np.ndarray, zth_k_per_w: np.ndarray, *, force: bool = False) -> None:
    """Write ``zth.csv`` (one curve per part); an existing file is replaced only with ``force``."""
    path = Path(path)
    if path.is_file() and not force:
        raise SoacheckError(f"{path}: exists; add --force to replace it")
    _digitized_values(time_s, "Zth curve: time", DURATION)
    _digitized_values(zth_k_per_w, "Zth curve: zth", THERMAL_RESISTANCE)
    rows = [f"{significant(t)},{significant(z)}" for t, z in zip(time_s, zth_k_per_w, strict=True)]
    write_output(path, "\n".join(["time,zth", *rows]) + "\n")
