"""The files that describe tests: operating points, OCV tables, envelopes and discharges."""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from pathlib import Path
from typing import Any

import numpy as np

from soacheck.battery import MODES, Battery, Chemistry, Trajectory, chemistry, discharge
from soacheck.csvtables import Table, read_table
from soacheck.envelope import Envelope
from soacheck.errors import SoacheckError, did_you_mean
from soacheck.quantities import CURRENT, IDLE_CURRENT, SETPOINT, TEMPERATURE, VOLTAGE
from soacheck.tomlfiles import read_toml
from soacheck.units import parse_duration


def parse_each_once(
    values: Any,
    parse: Callable[[Any, str], float],
    where_row: Callable[[int], str],
    *,
    coded: tuple[np.ndarray, Sequence[Any]] | None = None,
) -> np.ndarray:
    """``parse(value, where)`` of every value, each distinct value parsed once, shape ``(n,)``.

    Values are told apart by hashing (no sort of a million texts), or ``coded`` gives them
    already told apart: the index of each value ``(n,)`` into the distinct values. A bad
    value is reported at the first row that holds one: ``where_row(k)`` names row ``k``
    (asked only then: counting a file's lines reads it again).
    """
    if coded is None:
        import pandas as pd

        which, written = pd.factorize(values, use_na_sentinel=False)
    else:
        which, written = coded
    parsed = np.empty(len(written))
    failed: list[int] = []
    for u, value in enumerate(written):
        try:
            parsed[u] = parse(value, "")
        except SoacheckError as err:
            failed.append(u)
            problem = err
    if failed:  # again, for the message naming the first row that holds a bad value
        row = min(int(np.argmax(which == u)) for u in failed)
        parse(written[which[row]], where_row(row))
        raise problem
    return parsed[which]


def read_points(path: str | Path) -> Table:
    """Read operating points: columns ``voltage,current`` and optional ``case_temp,pulse,duty,idle_current``.

    Voltage and current must be above zero (they go on log axes); ``case_temp`` is in °C;
    ``pulse`` is ``dc`` or a width such as ``1ms``; ``duty`` is the duty cycle of a pulse
    train in (0, 1], or 0 for a single pulse; ``idle_current`` is the current standing
    between pulses at the same voltage, in A, 0 or more. The columns (and the frame) gain
    ``pulse_s`` (seconds, ``inf`` for DC) when ``pulse`` is present.
    """
    table = read_table(
        path,
        numeric=("voltage", "current", "case_temp", "duty", "idle_current"),
        text=("pulse",),
        optional=("case_temp", "pulse", "duty", "idle_current"),
        positive=("voltage", "current"),
    )
    columns = table.columns  # pulse_s is added before the frame is made from them
    VOLTAGE.check_array(columns["voltage"], lambda k: f"{table.where(k)}: voltage")
    CURRENT.check_array(columns["current"], lambda k: f"{table.where(k)}: current")
    if "case_temp" in columns:
        TEMPERATURE.check_array(columns["case_temp"], lambda k: f"{table.where(k)}: case_temp")
    if "pulse" in columns:
        columns["pulse_s"] = parse_each_once(
            columns["pulse"],
            lambda text, where: parse_duration(str(text), where=where),
            lambda k: f"{table.where(k)}: pulse",
            coded=table.coded.get("pulse"),
        )
    if "duty" in columns:
        duty = columns["duty"]
        bad = np.flatnonzero((duty < 0) | (duty > 1))
        if bad.size:
            row = int(bad[0])
            raise SoacheckError(
                f"{table.where(row)}: duty {duty[row]:g} is outside 0 to 1; write the duty cycle "
                "tp/T as a fraction (0.1 for 10 %), or 0 for a single pulse"
            )
    if "idle_current" in columns:
        IDLE_CURRENT.check_array(columns["idle_current"], lambda k: f"{table.where(k)}: idle_current")
    return table


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


def envelope_from_table(data: dict[str, Any], *, where: str) -> Envelope:
    """Build an envelope from its TOML table (an envelope file, or one inline in a plan), checked by its schema."""
    from soacheck.tomlschemas import EnvelopeTable, validate  # pydantic: only when an envelope is read

    table = validate(EnvelopeTable, data, where)
    v_lo, v_hi = table.voltage  # 0 V: Envelope says what to give
    pulse_s = parse_duration(table.pulse, where=f"{where}: pulse")
    if table.duty is not None:
        duty = table.duty
        if math.isinf(pulse_s):
            raise SoacheckError(f'{where}: duty needs a pulse width, such as pulse = "10ms"')
    else:
        duty = 1.0 if math.isinf(pulse_s) else 0.0
    if table.ambient is not None and table.case_temp is not None:
        raise SoacheckError(f"{where}: give either ambient or case_temp, not both")
    case_temp = table.case_temp
    ambient = None if case_temp is not None else (25.0 if table.ambient is None else table.ambient)
    current, power = table.current, table.power
    try:
        return Envelope(v_lo, v_hi, current, power, pulse_s, duty, ambient, case_temp, table.idle_current)
    except SoacheckError as err:
        raise SoacheckError(f"{where}: {str(err).removeprefix('envelope: ')}") from None


def read_envelope(path: str | Path) -> Envelope:
    """Read an envelope file (TOML): voltage = [low, high], current, power, pulse, duty, ambient or case_temp,
    idle_current."""
    return envelope_from_table(read_toml(path, "envelope"), where=str(path))


def battery_from(name: str, cells: int, capacity_ah: float, r_int_ohm: float, *, base: Path = Path()) -> Battery:
    """A pack from a chemistry preset name or the path of an OCV CSV (relative to ``base``)."""
    source = base / name
    chem = read_ocv(source) if source.suffix.lower() == ".csv" or source.is_file() else chemistry(name)
    return Battery(chem, cells, capacity_ah, r_int_ohm)


def discharge_from_table(data: dict[str, Any], *, where: str, base: Path) -> Trajectory:
    """A discharge described in TOML (a discharge file, or a job in a plan) as a trajectory, checked by its schema."""
    from soacheck.tomlschemas import DischargeTable, validate  # pydantic: only when a discharge is read

    table = validate(DischargeTable, data, where)
    mode = table.mode.strip().lower()
    if mode not in MODES:
        raise SoacheckError(f"{where}: mode '{mode}' is not one of cc, cp, cr{did_you_mean(mode, MODES)}")
    SETPOINT[mode].check(table.setpoint, f"{where}: setpoint")
    pack = battery_from(table.battery.strip(), table.cells, table.capacity, table.internal_resistance, base=base)
    return discharge(pack, mode, table.setpoint, cutoff_v=table.cutoff, samples=table.samples)
