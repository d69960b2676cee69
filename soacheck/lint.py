"""Checking a part folder for the mistakes that datasheet digitizing makes.

Every finding names its file, its line (0 where it concerns the whole file) and a fix.
Errors are mistakes that make answers wrong; warnings are worth a second look. The rules
and their tolerances:

- the constant-power segment of the DC curve against ``p_max``, within 10 % (digitizing
  error of ±2 % per coordinate gives ±4 % in power; common practice, no source);
- ``p_max`` against (tj_max − 25 °C)/rth_jc, within 5 % (the definition of Rth_jc, JEDEC
  JESD51-1);
- the current limit against ``i_max`` (DC) and ``i_pulse_max`` (pulses): the curve must not
  allow more than the rating (5 % digitizing allowance);
- the last point against ``v_max``: a curve ending below 95 % of it is extended (warning);
- each pulse curve enclosing the longer ones (a shorter pulse is never allowed less);
- slopes that fit no mechanism, and bends the wrong way: an SOA curve is concave on
  log-log axes, so a slope that rises from one segment to the next by more than the
  digitizing noise (0.15) marks a misread point (common practice, no source);
- points out of order, repeated voltages, currents that rise;
- a Zth curve against rth_jc and the pulse curves; Foster terms against rth_jc;
- derating tables that rise with temperature;
- transfer curves that never cross within their digitized currents: the zero-temperature-
  coefficient point then lies beyond them, and the instability check is held at the last
  digitized current (Spirito et al., MIEL 2002, for why the ZTC point matters).
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from pathlib import Path
from typing import Literal

import numpy as np

from soacheck.boundary import allowed_current, model_consistency
from soacheck.csvtables import read_table
from soacheck.errors import SoacheckError
from soacheck.mechanisms import CURRENT_BAND, classify_slopes, mechanism_lines, segment_slopes
from soacheck.mosfet import ztc_point
from soacheck.partfiles import PART_FILE, SOA_FILE, TRANSFER_FILE, ZTH_FILE, read_part, read_part_toml
from soacheck.parts import Part

Severity = Literal["error", "warning"]


@dataclass(frozen=True)
class Finding:
    severity: Severity
    file: str
    row: int
    message: str

    def as_dict(self) -> dict[str, object]:
        return {"severity": self.severity, "file": self.file, "row": self.row, "message": self.message}


def lint_part(folder: str | Path) -> list[Finding]:
    """All findings for a part folder, errors first."""
    folder = Path(folder)
    found: list[Finding] = []
    found += _raw_curve_findings(folder)
    if any(f.severity == "error" and f.file == SOA_FILE for f in found):
        return _sorted(found)  # the curves cannot be read as curves; fix these first
    try:
        part = read_part(folder)
    except SoacheckError as err:
        text = str(err)
        named = [name for name in (ZTH_FILE, TRANSFER_FILE, SOA_FILE) if name in text]
        file = named[0] if named else PART_FILE
        return _sorted([*found, Finding("error", file, _line_of(text), text)])
    found += _rating_findings(part)
    found += _curve_findings(part)
    found += _thermal_findings(part, folder)
    found += _transfer_findings(part)
    return _sorted(found)


def _sorted(found: list[Finding]) -> list[Finding]:
    return sorted(found, key=lambda f: (f.severity != "error", f.file, f.row))


def _line_of(text: str) -> int:
    match = re.search(r"line (\d+)", text)
    return int(match.group(1)) if match else 0


def _raw_curve_findings(folder: Path) -> list[Finding]:
    """Order, repeats and rises, all of them, before the strict reader stops at the first."""
    path = folder / SOA_FILE
    try:
        table = read_table(path, numeric=("voltage", "current"), text=("pulse",), positive=("voltage", "current"))
        kind = str(read_part_toml(folder / PART_FILE).get("kind", "npn")).lower()
    except SoacheckError as err:
        return [Finding("error", SOA_FILE if SOA_FILE in str(err) else PART_FILE, _line_of(str(err)), str(err))]
    frame = table.frame
    found = []
    for label in dict.fromkeys(frame["pulse"]):
        rows = np.flatnonzero((frame["pulse"] == label).to_numpy())
        v = frame["voltage"].to_numpy()[rows]
        i = frame["current"].to_numpy()[rows]
        for k in np.flatnonzero(np.diff(v) < 0):
            found.append(
                Finding(
                    "error",
                    SOA_FILE,
                    table.line(int(rows[k + 1])),
                    f"curve '{label}': voltage {v[k + 1]:g} V follows {v[k]:g} V; list points from low "
                    "to high voltage (a point on the wrong curve?)",
                )
            )
        for k in np.flatnonzero(np.diff(v) == 0):
            found.append(
                Finding(
                    "error",
                    SOA_FILE,
                    table.line(int(rows[k + 1])),
                    f"curve '{label}': voltage {v[k]:g} V twice (a step); keep one point, the voltage "
                    "limit at v_max is implied",
                )
            )
        ok = np.diff(v) > 0
        slope = np.full(v.size - 1, np.nan)
        slope[ok] = np.diff(np.log(i))[ok] / np.diff(np.log(v))[ok]
        rising = slope > CURRENT_BAND
        if kind not in ("npn", "pnp") and rising.size:
            lead = int(np.argmin(rising)) if not rising.all() else rising.size
            rising[:lead] = False
        for k in np.flatnonzero(rising):
            found.append(
                Finding(
                    "error",
                    SOA_FILE,
                    table.line(int(rows[k + 1])),
                    f"curve '{label}': current rises from {i[k]:g} A to {i[k + 1]:g} A with voltage; an "
                    "SOA boundary falls (a misread decade?)",
                )
            )
    return found


def _rating_findings(part: Part) -> list[Finding]:
    r = part.ratings
    found = []
    p_rth = (r.tj_max_c - 25.0) / r.rth_jc_k_per_w
    if abs(r.p_max_w / p_rth - 1) > 0.05:
        found.append(
            Finding(
                "error",
                PART_FILE,
                0,
                f"p_max {r.p_max_w:g} W differs from (tj_max - 25)/rth_jc = {p_rth:.4g} W by more than "
                "5 %; check p_max, tj_max and rth_jc against the datasheet",
            )
        )
    if part.breakdown_fraction.size and np.any(np.diff(part.breakdown_fraction) > 0):
        k = int(np.argmax(np.diff(part.breakdown_fraction) > 0)) + 1
        found.append(
            Finding(
                "error",
                PART_FILE,
                0,
                f"[derating] second_breakdown rises with temperature at row {k} "
                f"({part.breakdown_case_c[k]:g} °C); a limit never grows as the case warms",
            )
        )
    return found


def _curve_findings(part: Part) -> list[Finding]:
    r = part.ratings
    found = []
    for curve in part.curves:
        slopes = segment_slopes(curve.voltage_v, curve.current_a)
        names = classify_slopes(slopes, bipolar=part.is_bipolar)
        label = curve.label
        for k in np.flatnonzero(names == "unclassified"):
            found.append(
                Finding(
                    "warning",
                    SOA_FILE,
                    int(curve.lines[k + 1]),
                    f"curve '{label}': the segment ending here has slope {slopes[k]:.2f}, which fits no "
                    "mechanism (0 current, -1 thermal, steeper second breakdown); pick the corner where "
                    "the straight lines meet",
                )
            )
        for k in np.flatnonzero(np.diff(slopes) > CURRENT_BAND):
            found.append(
                Finding(
                    "error",
                    SOA_FILE,
                    int(curve.lines[k + 1]),
                    f"curve '{label}': the curve bends upward here (slope {slopes[k]:.2f} then "
                    f"{slopes[k + 1]:.2f}); an SOA curve is concave on log-log axes, so this point is "
                    "probably misread",
                )
            )
        rated = r.i_max_a if curve.is_dc else r.i_pulse_max_a
        if rated is not None and curve.current_a.max() > rated * 1.05:
            k = int(np.argmax(curve.current_a))
            name = "i_max" if curve.is_dc else "i_pulse_max"
            found.append(
                Finding(
                    "error",
                    SOA_FILE,
                    int(curve.lines[k]),
                    f"curve '{label}': {curve.current_a[k]:g} A is above {name} = {rated:g} A; check the "
                    "current axis or the rating",
                )
            )
        if curve.is_dc and rated is not None and curve.current_a.max() < rated * 0.9:
            found.append(
                Finding(
                    "warning",
                    SOA_FILE,
                    int(curve.lines[0]),
                    f"curve 'dc' never reaches i_max = {rated:g} A (its highest point is "
                    f"{curve.current_a.max():g} A); check the first points",
                )
            )
        if curve.voltage_v[-1] < 0.95 * r.v_max_v:
            found.append(
                Finding(
                    "warning",
                    SOA_FILE,
                    int(curve.lines[-1]),
                    f"curve '{label}' ends at {curve.voltage_v[-1]:g} V, below v_max = {r.v_max_v:g} V; "
                    "its last segment is extended to v_max: digitize the curve to its end",
                )
            )
        if curve.is_dc:
            thermal = [line for line in mechanism_lines(part, curve) if line.mechanism == "power"]
            if thermal:
                watts = np.exp(np.concatenate([line.log_v + line.log_i for line in thermal]))
                worst = watts[np.argmax(np.abs(watts / r.p_max_w - 1))]
                if abs(worst / r.p_max_w - 1) > 0.10:
                    found.append(
                        Finding(
                            "error",
                            SOA_FILE,
                            int(thermal[0].lines[0]),
                            f"curve 'dc': its constant-power segment is {worst:.4g} W where p_max is "
                            f"{r.p_max_w:g} W (more than 10 % apart); a misread decade or point?",
                        )
                    )
    # each pulse curve encloses the longer ones
    for short, long in zip(part.curves[:-1], part.curves[1:], strict=True):
        lo = max(short.voltage_v[0], long.voltage_v[0])
        v = np.geomspace(lo, r.v_max_v, 200)
        a = allowed_current(v, part, pulse_s=short.pulse_s, use_model=False).current_a
        b = allowed_current(v, part, pulse_s=long.pulse_s, use_model=False).current_a
        below = np.flatnonzero(a < b * 0.98)
        if below.size:
            found.append(
                Finding(
                    "error",
                    SOA_FILE,
                    int(short.lines[0]),
                    f"curve '{short.label}' allows less than the longer '{long.label}' curve near "
                    f"{v[below[0]]:.3g} V; a shorter pulse is never allowed less (curves swapped?)",
                )
            )
    return found


def _thermal_findings(part: Part, folder: Path) -> list[Finding]:
    found = []
    rth = part.ratings.rth_jc_k_per_w
    if part.zth_time_s.size:
        last = part.zth_k_per_w[-1]
        if last > rth * 1.05:
            found.append(
                Finding(
                    "error",
                    ZTH_FILE,
                    part.zth_time_s.size + 1,
                    f"zth reaches {last:g} K/W, above rth_jc = {rth:g} K/W; the single-pulse Zth tends "
                    "to rth_jc (a misread decade?)",
                )
            )
    for message in model_consistency(part):
        file = PART_FILE if part.foster_r_k_per_w.size else ZTH_FILE
        found.append(Finding("warning", file, 0, message))
    return found


def _transfer_findings(part: Part) -> list[Finding]:
    """Whether the transfer curves cross (a ZTC point) within the currents every curve reaches."""
    if part.transfer is None:
        return []
    ztc = ztc_point(part.transfer)
    low, high = part.transfer.current_range_a
    first_line = int(part.transfer.lines[0][0]) if part.transfer.lines else 0
    if ztc.side == "above":
        return [
            Finding(
                "warning",
                TRANSFER_FILE,
                first_line,
                f"the curves do not cross below {high:g} A: the zero-temperature-coefficient point lies beyond the "
                "digitized range, so no current above it is known to be stable and the instability check holds "
                "the current there; digitize the curves to where they cross",
            )
        ]
    if ztc.side == "below":
        return [
            Finding(
                "warning",
                TRANSFER_FILE,
                first_line,
                f"the hotter curve carries less current than the cooler one at every digitized current down to "
                f"{low:g} A: the zero-temperature-coefficient point lies below the digitized range and no "
                "instability can be found in it; digitize the curves down to lower currents",
            )
        ]
    return []
