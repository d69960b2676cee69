"""Reading the user's files: part folders (``part.toml``, ``soa.csv``) and CSV tables.

This is the one module that turns text into domain objects. Every problem is raised
as a :class:`~soacheck.errors.SoacheckError` whose message names the file, the line
or key, and the fix. Nothing here writes.
"""

from __future__ import annotations

import contextlib
import math
import os
import re
import shutil
import tempfile
import tomllib
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from soacheck.battery import MODES, Battery, Chemistry, Trajectory, chemistry, discharge
from soacheck.envelope import Envelope
from soacheck.errors import SoacheckError, did_you_mean
from soacheck.parts import KINDS, Part, Ratings, SoaCurve
from soacheck.units import format_duration, parse_duration

PART_FILE = "part.toml"
SOA_FILE = "soa.csv"
ZTH_FILE = "zth.csv"


# --------------------------------------------------------------------------- tables


@dataclass(frozen=True, eq=False)
class Table:
    """A CSV table with its columns checked and its numbers parsed.

    ``frame`` holds one canonical column per requested name (numbers as float64,
    text as str); ``line(i)`` gives the file line of row ``i`` for messages.
    """

    path: Path
    frame: pd.DataFrame

    def line(self, row: int) -> int:
        """File line (1-based, header is the first non-blank line) of data row ``row``."""
        return _data_lines(self.path)[row]

    def where(self, row: int) -> str:
        return f"{self.path} line {self.line(row)}"


def _data_lines(path: Path) -> list[int]:
    with open(path, encoding="utf-8-sig", errors="replace") as handle:
        lines = [n for n, text in enumerate(handle, start=1) if text.strip()]
    return lines[1:]


def _sniff(path: Path) -> tuple[str, list[str]]:
    """Return the column separator and the header names of a CSV file."""
    try:
        with open(path, encoding="utf-8-sig") as handle:
            header = next((text for text in handle if text.strip()), None)
    except FileNotFoundError:
        raise SoacheckError(f"{path}: no such file; check the path") from None
    except IsADirectoryError:
        raise SoacheckError(f"{path}: is a folder, not a CSV file") from None
    except UnicodeDecodeError:
        raise SoacheckError(f"{path}: is not a UTF-8 text file; save it as CSV (UTF-8)") from None
    if header is None:
        raise SoacheckError(f"{path}: the file is empty; it needs a header line naming the columns")
    # Spreadsheets in locales with decimal commas export with ';' between columns.
    sep = ";" if ";" in header else ("\t" if "\t" in header else ",")
    names = [name.strip().lower() for name in header.strip().split(sep)]
    return sep, names


def read_table(
    path: str | Path,
    *,
    numeric: Sequence[str],
    text: Sequence[str] = (),
    optional: Sequence[str] = (),
    positive: Sequence[str] = (),
) -> Table:
    """Read a CSV table whose columns are named in its header.

    Parameters
    ----------
    path
        The CSV file. Columns separated by ``,``; a header with ``;`` marks a spreadsheet
        export with decimal commas, which is read as such; tab-separated files are read too.
    numeric, text
        Columns that hold numbers and text. All are required unless named in ``optional``.
    optional
        Columns that may be missing; they are absent from the frame then.
    positive
        Numeric columns whose values must be above zero (they go on log axes).

    Raises
    ------
    SoacheckError
        Empty file, missing or unknown columns (with the nearest known name), rows with
        the wrong number of fields, cells that are not finite numbers, values not above
        zero where required.
    """
    path = Path(path)
    sep, names = _sniff(path)
    known = list(numeric) + list(text)
    for name in names:
        if name not in known:
            raise SoacheckError(
                f"{path}: unknown column '{name}'{did_you_mean(name, known)}; the columns are {', '.join(known)}"
            )
    if len(set(names)) != len(names):
        raise SoacheckError(f"{path}: a column name appears twice in the header; keep one")
    for name in known:
        if name not in names and name not in optional:
            needed = ", ".join(n for n in known if n not in optional)
            raise SoacheckError(f"{path}: missing column '{name}'; the header must name {needed}")
    try:
        raw = pd.read_csv(
            path,
            sep=sep,
            dtype=str,
            keep_default_na=False,
            skipinitialspace=True,
            encoding="utf-8-sig",
        )
    except pd.errors.ParserError as err:
        found = re.search(r"Expected (\d+) fields in line (\d+), saw (\d+)", str(err))
        detail = (
            f"line {found.group(2)} has {found.group(3)} fields where the header has {found.group(1)}"
            if found
            else "a row has more fields than the header"
        )
        hint = "; a spreadsheet export with decimal commas must separate columns with ';'" if sep == "," else ""
        raise SoacheckError(f"{path}: {detail}{hint}") from None
    raw.columns = [c.strip().lower() for c in raw.columns]
    if raw.empty:
        raise SoacheckError(f"{path}: the file has a header but no rows; add at least one row")

    frame = pd.DataFrame(index=raw.index)
    table = Table(path, frame)
    for name in known:
        if name not in raw.columns:
            continue
        cells = raw[name].astype(str).str.strip()
        if name in text:
            empty = np.flatnonzero((cells == "").to_numpy())
            if empty.size:
                raise SoacheckError(f"{table.where(int(empty[0]))}: column '{name}' is empty; fill it in")
            frame[name] = cells
            continue
        values = pd.to_numeric(cells.str.replace(",", ".", regex=False), errors="coerce").to_numpy(float)
        bad = np.flatnonzero(~np.isfinite(values))
        if bad.size:
            row = int(bad[0])
            cell = cells.iloc[row]
            what = "is empty" if cell == "" else f"'{cell}' is not a finite number"
            raise SoacheckError(f"{table.where(row)}: {name} {what}; write a plain number")
        if name in positive:
            low = np.flatnonzero(values <= 0)
            if low.size:
                row = int(low[0])
                raise SoacheckError(
                    f"{table.where(row)}: {name} is {values[row]:g}; it must be above zero (SOA axes are logarithmic)"
                )
        frame[name] = values
    return table


# --------------------------------------------------------------------------- part folders

_TOP_KEYS = ("id", "kind", "description", "source", "ratings", "derating", "thermal")
_REQUIRED_TOP = ("id", "kind", "description", "source", "ratings")
_RATING_KEYS = ("v_max", "i_max", "i_pulse_max", "p_max", "tj_max", "rth_jc")
_REQUIRED_RATINGS = ("v_max", "i_max", "p_max", "tj_max", "rth_jc")
_DERATING_KEYS = ("second_breakdown",)
_THERMAL_KEYS = ("foster_r", "foster_tau")


def check_keys(where: str, table: dict[str, Any], allowed: Sequence[str], required: Sequence[str]) -> None:
    for key in table:
        if key not in allowed:
            raise SoacheckError(
                f"{where}: unknown key '{key}'{did_you_mean(key, allowed)}; the keys are {', '.join(allowed)}"
            )
    for key in required:
        if key not in table:
            raise SoacheckError(f"{where}: missing key '{key}'; add it")


def toml_number(where: str, value: Any, *, positive: bool = True) -> float:
    if isinstance(value, bool) or not isinstance(value, int | float) or not math.isfinite(value):
        raise SoacheckError(f"{where} is {value!r}; write a finite number")
    if positive and value <= 0:
        raise SoacheckError(f"{where} is {value!r}; it must be above zero")
    return float(value)


def toml_text(where: str, value: Any) -> str:
    if not isinstance(value, str) or not value.strip():
        raise SoacheckError(f"{where} must be a non-empty string in quotes")
    return value.strip()


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
    toml_path = folder / PART_FILE
    data = read_part_toml(toml_path)
    where = str(toml_path)
    check_keys(where, data, _TOP_KEYS, _REQUIRED_TOP)
    part_id = toml_text(f"{where}: id", data["id"])
    if part_id != folder.name:
        raise SoacheckError(
            f"{where}: id '{part_id}' differs from the folder name '{folder.name}'; rename one to match"
        )
    kind = toml_text(f"{where}: kind", data["kind"]).lower()
    if kind not in KINDS:
        raise SoacheckError(
            f"{where}: kind '{kind}' is unknown{did_you_mean(kind, KINDS)}; use one of {', '.join(KINDS)}"
        )
    ratings_table = data["ratings"]
    if not isinstance(ratings_table, dict):
        raise SoacheckError(f"{where}: 'ratings' must be a table: write [ratings] on its own line")
    check_keys(f"{where} [ratings]", ratings_table, _RATING_KEYS, _REQUIRED_RATINGS)
    r = {k: toml_number(f"{where}: ratings.{k}", v) for k, v in ratings_table.items()}
    if r["tj_max"] <= 25:
        raise SoacheckError(f"{where}: ratings.tj_max is {r['tj_max']:g} °C; it must be above 25 °C")
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
        thermal = data["thermal"]
        if not isinstance(thermal, dict):
            raise SoacheckError(f"{where}: 'thermal' must be a table: write [thermal] on its own line")
        check_keys(f"{where} [thermal]", thermal, _THERMAL_KEYS, _THERMAL_KEYS)
        foster_r = _number_list(f"{where}: thermal.foster_r", thermal["foster_r"])
        foster_tau = _number_list(f"{where}: thermal.foster_tau", thermal["foster_tau"])
        if foster_r.size != foster_tau.size:
            raise SoacheckError(
                f"{where}: thermal.foster_r has {foster_r.size} terms and foster_tau {foster_tau.size}; "
                "give one time constant per resistance"
            )

    curves = read_soa_curves(folder / SOA_FILE, kind=kind, ratings=ratings)
    zth_time = zth_value = np.zeros(0)
    if (folder / ZTH_FILE).exists():
        zth_time, zth_value = read_zth(folder / ZTH_FILE)
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
        folder=folder,
    )


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
    frame = table.frame
    pulse_s = np.array([parse_duration(p, where=table.where(i) + ": pulse") for i, p in enumerate(frame["pulse"])])
    voltage = frame["voltage"].to_numpy()
    current = frame["current"].to_numpy()
    may_rise_at_start = kind not in ("npn", "pnp")
    file_lines = np.array(_data_lines(path))
    curves = []
    for width in np.unique(pulse_s):
        rows = np.flatnonzero(pulse_s == width)
        v, i = voltage[rows], current[rows]
        label = frame["pulse"].iloc[rows[0]]
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
    t = table.frame["time"].to_numpy()
    z = table.frame["zth"].to_numpy()
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


# --------------------------------------------------------------------------- operating points


def read_points(path: str | Path) -> Table:
    """Read operating points: columns ``voltage,current`` and optional ``case_temp,pulse,duty``.

    Voltage and current must be above zero (they go on log axes); ``case_temp`` is in °C;
    ``pulse`` is ``dc`` or a width such as ``1ms``; ``duty`` is the duty cycle of a pulse
    train in (0, 1], or 0 for a single pulse. The frame gains a column ``pulse_s``
    (seconds, ``inf`` for DC) when ``pulse`` is present.
    """
    table = read_table(
        path,
        numeric=("voltage", "current", "case_temp", "duty"),
        text=("pulse",),
        optional=("case_temp", "pulse", "duty"),
        positive=("voltage", "current"),
    )
    frame = table.frame
    if "pulse" in frame:
        frame["pulse_s"] = [parse_duration(p, where=f"{table.where(i)}: pulse") for i, p in enumerate(frame["pulse"])]
    if "duty" in frame:
        bad = np.flatnonzero((frame["duty"] < 0) | (frame["duty"] > 1))
        if bad.size:
            row = int(bad[0])
            raise SoacheckError(
                f"{table.where(row)}: duty {frame['duty'].iloc[row]:g} is outside 0 to 1; write the duty cycle "
                "tp/T as a fraction (0.1 for 10 %), or 0 for a single pulse"
            )
    return table


# --------------------------------------------------------------------------- traces

TRACE_COLUMNS = ("time", "voltage", "current")


def iter_trace(path: str | Path, *, chunk_rows: int = 1_000_000):
    """Read a V–I trace in chunks: columns ``time,voltage,current`` in s, V and A.

    CSV (with the same separator rules as :func:`read_table`), or Parquet when pyarrow is
    installed. Yields ``(time_s, voltage_v, current_a, first_row)`` arrays chunk by chunk,
    so a trace larger than memory can be checked. Times must rise strictly, across chunk
    borders too; voltage and current must be finite and not negative.
    """
    path = Path(path)
    if path.suffix.lower() in (".parquet", ".pq"):
        chunks = _parquet_chunks(path, chunk_rows)
    else:
        chunks = _csv_chunks(path, chunk_rows)
    with contextlib.closing(chunks):
        yield from _checked_chunks(path, chunks)


def _checked_chunks(path: Path, chunks):
    last_t = None
    first_row = 0
    for frame in chunks:
        t, v, i = (frame[name].to_numpy(dtype=float) for name in TRACE_COLUMNS)
        for name, values in (("time", t), ("voltage", v), ("current", i)):
            bad = np.flatnonzero(~np.isfinite(values))
            if bad.size:
                raise SoacheckError(
                    f"{path} data row {first_row + int(bad[0]) + 1}: {name} is not a finite number; remove or fix "
                    "the sample"
                )
        for name, values in (("voltage", v), ("current", i)):
            bad = np.flatnonzero(values < 0)
            if bad.size:
                raise SoacheckError(
                    f"{path} data row {first_row + int(bad[0]) + 1}: {name} {values[bad[0]]:g} is negative; "
                    "soacheck checks forward operation (record the magnitude, or leave out reverse conduction)"
                )
        previous = np.r_[last_t if last_t is not None else -np.inf, t[:-1]]
        bad = np.flatnonzero(t <= previous)
        if bad.size:
            k = int(bad[0])
            what = "repeats" if t[k] == previous[k] else "goes backwards"
            raise SoacheckError(
                f"{path} data row {first_row + k + 1}: time {t[k]:g} s {what} after {previous[k]:g} s; "
                "time stamps must rise strictly"
            )
        yield t, v, i, first_row
        last_t = float(t[-1])
        first_row += t.size
    if first_row == 0:
        raise SoacheckError(f"{path}: the trace has a header but no samples")


def _csv_chunks(path: Path, chunk_rows: int):
    sep, names = _sniff(path)
    for name in names:
        if name not in TRACE_COLUMNS:
            raise SoacheckError(
                f"{path}: unknown column '{name}'{did_you_mean(name, TRACE_COLUMNS)}; a trace has the columns "
                "time,voltage,current"
            )
    for name in TRACE_COLUMNS:
        if name not in names:
            raise SoacheckError(f"{path}: missing column '{name}'; a trace has the columns time,voltage,current")
    decimal = "," if sep == ";" else "."
    offset = 0
    with pd.read_csv(path, sep=sep, decimal=decimal, chunksize=chunk_rows, encoding="utf-8-sig") as reader:
        for raw in reader:
            raw.columns = [c.strip().lower() for c in raw.columns]
            frame = raw.copy()
            for name in TRACE_COLUMNS:
                if pd.api.types.is_numeric_dtype(raw[name]):
                    continue
                frame[name] = pd.to_numeric(raw[name], errors="coerce")
                bad = np.flatnonzero(frame[name].isna().to_numpy() & raw[name].notna().to_numpy())
                if bad.size:
                    k = int(bad[0])
                    raise SoacheckError(
                        f"{path} data row {offset + k + 1}: {name} '{raw[name].iloc[k]}' is not a number; "
                        "write a plain number"
                    )
            offset += len(frame)
            yield frame


def _parquet_chunks(path: Path, chunk_rows: int):
    try:
        import pyarrow.parquet as pq
    except ImportError:
        raise SoacheckError(
            f"{path}: reading Parquet needs pyarrow; `pip install pyarrow`, or save the trace as CSV"
        ) from None
    try:
        handle = pq.ParquetFile(path)
    except (OSError, ValueError) as err:
        raise SoacheckError(f"{path}: not a readable Parquet file ({err})") from None
    names = [n.lower() for n in handle.schema_arrow.names]
    for name in TRACE_COLUMNS:
        if name not in names:
            raise SoacheckError(f"{path}: missing column '{name}'; a trace has the columns time,voltage,current")
    columns = [handle.schema_arrow.names[names.index(n)] for n in TRACE_COLUMNS]
    for batch in handle.iter_batches(batch_size=chunk_rows, columns=columns):
        frame = batch.to_pandas()
        frame.columns = list(TRACE_COLUMNS)
        yield frame


# --------------------------------------------------------------------------- batteries and stages


def read_ocv(path: str | Path) -> Chemistry:
    """Read a cell's OCV curve: columns ``soc,voltage``; soc as a fraction from 0 to 1, V per cell.

    The voltage must rise with state of charge. The default cut-off is the lowest voltage
    in the table.
    """
    table = read_table(path, numeric=("soc", "voltage"), positive=("voltage",))
    soc = table.frame["soc"].to_numpy()
    volts = table.frame["voltage"].to_numpy()
    order = np.argsort(soc, kind="stable")
    bad = np.flatnonzero((soc < 0) | (soc > 1))
    if bad.size:
        k = int(bad[0])
        raise SoacheckError(
            f"{table.where(k)}: soc {soc[k]:g} is outside 0 to 1; write the state of charge as a fraction "
            "(0.5 for 50 %)"
        )
    soc, volts = soc[order], volts[order]
    if soc.size < 2:
        raise SoacheckError(f"{path}: an OCV curve needs at least two rows")
    flat = np.flatnonzero(np.diff(soc) <= 0)
    if flat.size:
        raise SoacheckError(f"{path}: soc {soc[flat[0]]:g} appears twice; keep one row per state of charge")
    falls = np.flatnonzero(np.diff(volts) <= 0)
    if falls.size:
        k = int(order[falls[0] + 1])
        raise SoacheckError(
            f"{table.where(k)}: voltage {volts[falls[0] + 1]:g} V does not rise above {volts[falls[0]]:g} V as "
            "the state of charge rises; an OCV curve rises with charge"
        )
    return Chemistry(Path(path).name, soc, volts, float(volts[0]), f"the user's OCV table {path}")


# --------------------------------------------------------------------------- envelopes

_ENVELOPE_KEYS = ("voltage", "current", "power", "pulse", "duty", "ambient", "case_temp")


def envelope_from_table(data: dict[str, Any], *, where: str) -> Envelope:
    """Build an envelope from its TOML table (an envelope file, or one inline in a plan)."""
    check_keys(where, data, _ENVELOPE_KEYS, ("voltage", "current", "power"))
    span = data["voltage"]
    if not isinstance(span, list) or len(span) != 2:
        raise SoacheckError(f"{where}: voltage must be a range [low, high] in V, such as [5, 40]")
    v_lo = toml_number(f"{where}: voltage[0]", span[0])
    v_hi = toml_number(f"{where}: voltage[1]", span[1])
    pulse_s = parse_duration(str(data.get("pulse", "dc")), where=f"{where}: pulse")
    if "duty" in data:
        duty = toml_number(f"{where}: duty", data["duty"], positive=False)
        if not (0 < duty <= 1):
            raise SoacheckError(
                f"{where}: duty is {duty:g}; give tp/T in (0, 1], such as 0.1 (leave it out for a single pulse)"
            )
        if math.isinf(pulse_s):
            raise SoacheckError(f'{where}: duty needs a pulse width, such as pulse = "10ms"')
    else:
        duty = 1.0 if math.isinf(pulse_s) else 0.0
    if "ambient" in data and "case_temp" in data:
        raise SoacheckError(f"{where}: give either ambient or case_temp, not both")
    case_temp = toml_number(f"{where}: case_temp", data["case_temp"], positive=False) if "case_temp" in data else None
    ambient = (
        None if case_temp is not None else toml_number(f"{where}: ambient", data.get("ambient", 25.0), positive=False)
    )
    return Envelope(
        v_lo,
        v_hi,
        toml_number(f"{where}: current", data["current"]),
        toml_number(f"{where}: power", data["power"]),
        pulse_s,
        duty,
        ambient,
        case_temp,
    )


def read_envelope(path: str | Path) -> Envelope:
    """Read an envelope file (TOML): voltage = [low, high], current, power, pulse, duty, ambient or case_temp."""
    return envelope_from_table(read_toml(path, "envelope"), where=str(path))


# --------------------------------------------------------------------------- discharges as files

_DISCHARGE_KEYS = ("battery", "cells", "capacity", "mode", "setpoint", "cutoff", "internal_resistance", "samples")


def battery_from(name: str, cells: int, capacity_ah: float, r_int_ohm: float, *, base: Path = Path()) -> Battery:
    """A pack from a chemistry preset name or the path of an OCV CSV (relative to ``base``)."""
    source = base / name
    chem = read_ocv(source) if source.suffix.lower() == ".csv" or source.is_file() else chemistry(name)
    return Battery(chem, cells, capacity_ah, r_int_ohm)


def discharge_from_table(data: dict[str, Any], *, where: str, base: Path) -> Trajectory:
    """A discharge described in TOML (a discharge file, or a job in a plan) as a trajectory."""
    check_keys(where, data, _DISCHARGE_KEYS, ("battery", "cells", "capacity", "mode", "setpoint"))
    cells = data["cells"]
    if isinstance(cells, bool) or not isinstance(cells, int) or cells < 1:
        raise SoacheckError(f"{where}: cells is {cells!r}; write a whole number of cells in series")
    pack = battery_from(
        toml_text(f"{where}: battery", data["battery"]),
        cells,
        toml_number(f"{where}: capacity", data["capacity"]),
        toml_number(f"{where}: internal_resistance", data.get("internal_resistance", 0.0), positive=False),
        base=base,
    )
    mode = toml_text(f"{where}: mode", data["mode"]).lower()
    if mode not in MODES:
        raise SoacheckError(f"{where}: mode '{mode}' is not one of cc, cp, cr{did_you_mean(mode, MODES)}")
    cutoff = toml_number(f"{where}: cutoff", data["cutoff"]) if "cutoff" in data else None
    samples = data.get("samples", 2000)
    if isinstance(samples, bool) or not isinstance(samples, int) or samples < 10:
        raise SoacheckError(f"{where}: samples is {samples!r}; write a whole number of at least 10")
    return discharge(pack, mode, toml_number(f"{where}: setpoint", data["setpoint"]), cutoff_v=cutoff, samples=samples)


def read_toml(path: str | Path, what: str) -> dict[str, Any]:
    """Parse a TOML file, turning a missing file or a syntax error into a clear message."""
    path = Path(path)
    try:
        with open(path, "rb") as handle:
            return tomllib.load(handle)
    except FileNotFoundError:
        raise SoacheckError(f"{path}: no such {what} file; check the path") from None
    except tomllib.TOMLDecodeError as err:
        raise SoacheckError(f"{path}: invalid TOML: {err}; fix the syntax") from None


def read_trace(path: str | Path) -> Trajectory:
    """A whole trace in memory, as the load's trajectory (for comparisons and plans)."""
    chunks = list(iter_trace(path))
    t, v, i = (np.concatenate([c[k] for c in chunks]) for k in range(3))
    return Trajectory(t, v, i, f"trace {Path(path).name}", (f"recorded trace {path}",))


# --------------------------------------------------------------------------- writing, never losing what was there


def write_folder(
    folder: Path, files: dict[str, str | bytes], *, force: bool = False, marker: str | None = None
) -> None:
    """Write a folder atomically: all its files appear at once, or none.

    The files (relative paths, text or bytes) are written into a hidden folder beside the
    target and renamed into place. An existing folder is replaced only with ``force``, or
    when it holds ``marker`` (a file this program left there, so the folder is its own).
    """
    folder = Path(folder)
    ours = marker is not None and (folder / marker).is_file()
    if folder.exists() and not (force or ours):
        raise SoacheckError(f"{folder}: exists and is not ours to replace; choose another name or add --force")
    folder.parent.mkdir(parents=True, exist_ok=True)
    staging = Path(tempfile.mkdtemp(prefix=f".{folder.name}.", dir=folder.parent))
    try:
        for name, content in {
            **files,
            **({marker: "written by soacheck; it may replace this folder\n"} if marker else {}),
        }.items():
            target = staging / name
            target.parent.mkdir(parents=True, exist_ok=True)
            if isinstance(content, bytes):
                target.write_bytes(content)
            else:
                target.write_text(content, encoding="utf-8")
        if folder.exists():
            old = Path(tempfile.mkdtemp(prefix=f".{folder.name}.old.", dir=folder.parent))
            os.replace(folder, old / folder.name)
            os.replace(staging, folder)
            shutil.rmtree(old)
        else:
            os.replace(staging, folder)
    finally:
        if staging.exists():
            shutil.rmtree(staging)


def write_part_folder(folder: Path, files: dict[str, str], *, force: bool = False) -> None:
    """Write a part folder atomically; an existing one is replaced only with ``force``."""
    if Path(folder).exists() and not force:
        raise SoacheckError(f"{folder}: exists; choose another id or add --force to replace it")
    write_folder(folder, files, force=force)


def _replace_text(path: Path, text: str) -> None:
    """Write a file through a temporary file and an atomic rename."""
    handle, temporary = tempfile.mkstemp(prefix=f".{path.name}.", dir=path.parent)
    try:
        with os.fdopen(handle, "w", encoding="utf-8") as out:
            out.write(text)
        os.replace(temporary, path)
    finally:
        if os.path.exists(temporary):
            os.remove(temporary)


def add_curve(path: Path, pulse: str, voltage_v: np.ndarray, current_a: np.ndarray, *, force: bool = False) -> int:
    """Add one pulse curve to ``soa.csv``, keeping every other row; returns the rows written.

    A curve of the same pulse width already in the file is replaced only with ``force``.
    """
    path = Path(path)
    label = format_duration(parse_duration(pulse, where="--pulse"))
    kept: list[str] = []
    if path.exists():
        table = read_table(path, numeric=("voltage", "current"), text=("pulse",))
        frame = table.frame
        same = np.array([format_duration(parse_duration(p, where=f"{path}: pulse")) == label for p in frame["pulse"]])
        if same.any() and not force:
            raise SoacheckError(f"{path}: already has a '{label}' curve; add --force to replace it")
        kept = [
            f"{p},{float(v)!r},{float(c)!r}"
            for p, v, c, s in zip(frame["pulse"], frame["voltage"], frame["current"], same, strict=True)
            if not s
        ]
    rows = [f"{label},{significant(v)},{significant(c)}" for v, c in zip(voltage_v, current_a, strict=True)]
    _replace_text(path, "\n".join(["pulse,voltage,current", *kept, *rows]) + "\n")
    return len(rows)


def write_zth(path: Path, time_s: np.ndarray, zth_k_per_w: np.ndarray, *, force: bool = False) -> None:
    """Write ``zth.csv`` (one curve per part); an existing file is replaced only with ``force``."""
    path = Path(path)
    if path.exists() and not force:
        raise SoacheckError(f"{path}: exists; add --force to replace it")
    rows = [f"{significant(t)},{significant(z)}" for t, z in zip(time_s, zth_k_per_w, strict=True)]
    _replace_text(path, "\n".join(["time,zth", *rows]) + "\n")


def significant(value: float, digits: int = 4) -> str:
    """A digitized value written to ``digits`` significant digits (more would be false precision)."""
    return f"{float(f'{value:.{digits}g}'):g}"


def read_image(path: str | Path) -> np.ndarray:
    """A PNG (or another format matplotlib reads) as an array ``(rows, columns, channels)``, 0-1."""
    import matplotlib.image

    try:
        return np.asarray(matplotlib.image.imread(str(path)), dtype=float)
    except FileNotFoundError:
        raise SoacheckError(f"{path}: no such image; check the path") from None
    except (OSError, ValueError, SyntaxError) as err:
        raise SoacheckError(f"{path}: not an image matplotlib can read ({err}); save the plot as PNG") from None
