"""Write the invented demo parts in ``curves/``.

The demo parts are made up, copied from no datasheet, and built to be physically
consistent so that the tests and the demo exercise real behaviour:

- p_max = (tj_max − 25 °C)/rth_jc, and the Foster terms sum to rth_jc;
- each pulse curve's thermal segment is P = (tj_max − 25 °C)/Zth(tp), single pulse;
- second breakdown (bipolar) or instability (FET, IGBT) is a power law I = I₀(V/V₀)^m
  below the constant-power line above its knee, raised by a factor for pulses;
- each curve is the lower envelope of straight lines on log-log axes, so it is concave
  and every pulse curve encloses the longer ones;
- a transfer characteristic (``transfer.csv``) follows the square law
  I_D = K(T)(V_GS − V_th(T))² with K ∝ (T/300 K)^−1.5 and V_th falling linearly with T
  (Sedra & Smith for the law, Sze for the mobility exponent; from memory), drawn at 25 °C
  and 150 °C past the point where the curves cross;
- a current gain table falls at high current, as high-level injection makes it (Webster
  1954; from memory), and a Darlington's is the product of two such gains.

Run ``python tools/make_demo_curves.py`` from the repository root to rewrite them.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from soacheck.csvtables import significant

ROOT = Path(__file__).resolve().parents[1] / "curves"
PULSES_S = {"100us": 1e-4, "1ms": 1e-3, "10ms": 1e-2}


@dataclass
class Demo:
    id: str
    kind: str
    package: str
    text: str
    v_max: float
    i_max: float
    i_pulse_max: float
    tj_max: float
    rth_jc: float
    foster_r: list[float]
    foster_tau: list[float]
    steep_knee_v: float  # DC knee between constant power and the steep line [V]
    steep_slope: float  # log-log slope of the steep line (< -1)
    steep_pulse_gain: dict[str, float]  # how far each pulse width lifts the steep line
    v_start: float = 1.0
    r_on: float | None = None  # on-resistance line for a FET [ohm]
    derating: list[list[float]] | None = None
    extra: dict = field(default_factory=dict)
    square_law: tuple[float, float, float] | None = None  # K at 300 K [A/V²], V_th at 25 °C [V], dV_th/dT [V/K]
    gain: list[tuple[float, float]] | None = None  # (collector current [A], h_FE)
    darlington: bool = False

    @property
    def p_max(self) -> float:
        return (self.tj_max - 25.0) / self.rth_jc


def zth(t: float, r: list[float], tau: list[float]) -> float:
    return float(np.sum(np.array(r) * (1 - np.exp(-t / np.array(tau)))))


def envelope(lines: list[tuple[float, float]], v_lo: float, v_hi: float) -> tuple[np.ndarray, np.ndarray]:
    """Lower envelope of lines ln I = a + m ln V, given as (a, m), between v_lo and v_hi."""
    x_lo, x_hi = math.log(v_lo), math.log(v_hi)
    xs = [x_lo, x_hi]
    for i, (a1, m1) in enumerate(lines):
        for a2, m2 in lines[i + 1 :]:
            if m1 != m2:
                x = (a2 - a1) / (m1 - m2)
                if x_lo < x < x_hi:
                    xs.append(x)
    x = np.unique(xs)
    y = np.min([a + m * x for a, m in lines], axis=0)
    slope = np.diff(y) / np.diff(x)
    keep = np.r_[True, np.abs(np.diff(slope)) > 1e-9, True]
    return np.exp(x[keep]), np.exp(y[keep])


def curve(demo: Demo, label: str) -> tuple[np.ndarray, np.ndarray]:
    if label == "dc":
        power, cap, gain = demo.p_max, demo.i_max, 1.0
    else:
        power = (demo.tj_max - 25.0) / zth(PULSES_S[label], demo.foster_r, demo.foster_tau)
        cap, gain = demo.i_pulse_max, demo.steep_pulse_gain[label]
    i_knee = demo.p_max / demo.steep_knee_v
    lines = [
        (math.log(cap), 0.0),
        (math.log(power), -1.0),
        (math.log(gain * i_knee) - demo.steep_slope * math.log(demo.steep_knee_v), demo.steep_slope),
    ]
    if demo.r_on is not None:
        lines.append((-math.log(demo.r_on), 1.0))
    return envelope(lines, demo.v_start, demo.v_max)


def write(demo: Demo) -> None:
    folder = ROOT / demo.id
    folder.mkdir(parents=True, exist_ok=True)
    rows = ["pulse,voltage,current"]
    for label in [*PULSES_S, "dc"]:
        v, i = curve(demo, label)
        rows += [f"{label},{significant(a)},{significant(b)}" for a, b in zip(v, i, strict=True)]
    (folder / "soa.csv").write_text("\n".join(rows) + "\n", encoding="utf-8")
    derating = ""
    if demo.derating:
        table = ", ".join(f"[{c:g}, {f:g}]" for c, f in demo.derating)
        derating = f"\n[derating]\n# invented: {demo.extra.get('derating_note', 'breakdown derates more slowly than the thermal limit')}\nsecond_breakdown = [{table}]\n"
    toml = f'''# Invented demo part for soacheck. Not a real device; do not design with it.
id = "{demo.id}"
kind = "{demo.kind}"
description = "INVENTED demo part: {demo.text} ({demo.package} class)"
source = "invented for the soacheck demo by tools/make_demo_curves.py; consistent by construction; copied from no datasheet"

[ratings]
v_max = {demo.v_max:g}        # V
i_max = {demo.i_max:g}         # A, continuous
i_pulse_max = {demo.i_pulse_max:g}   # A
p_max = {significant(demo.p_max, 6)}       # W at 25 degC case = (tj_max - 25)/rth_jc
tj_max = {demo.tj_max:g}       # degC
rth_jc = {demo.rth_jc:g}       # K/W
{derating}
[thermal]
foster_r = [{", ".join(f"{r:g}" for r in demo.foster_r)}]      # K/W, sums to rth_jc
foster_tau = [{", ".join(f"{t:g}" for t in demo.foster_tau)}]  # s
'''
    if demo.gain:
        toml += (
            "\n[gain]   # invented: DC current gain at 25 degC, falling at high current\n"
            f"current = [{', '.join(f'{i:g}' for i, _ in demo.gain)}]   # A\n"
            f"hfe = [{', '.join(f'{h:g}' for _, h in demo.gain)}]\n"
        )
    if demo.darlington:
        toml = toml.replace(f'kind = "{demo.kind}"\n', f'kind = "{demo.kind}"\ndarlington = true\n')
    (folder / "part.toml").write_text(toml, encoding="utf-8")
    if demo.square_law:
        (folder / "transfer.csv").write_text(transfer_rows(*demo.square_law), encoding="utf-8")


def transfer_rows(k300: float, vth25: float, dvth_dt: float, temps=(25.0, 150.0), points: int = 16) -> str:
    """transfer.csv of a square-law device at ``temps``, from 0.1 A to twice the current where the curves cross."""
    k = [k300 * ((t + 273.15) / 300.0) ** -1.5 for t in temps]
    vth = [vth25 + dvth_dt * (t - 25.0) for t in temps]
    s1, s2 = math.sqrt(k[0]), math.sqrt(k[1])
    v_cross = (s1 * vth[0] - s2 * vth[1]) / (s1 - s2)
    i_top = 2 * k[0] * (v_cross - vth[0]) ** 2
    rows = ["temp,vgs,current"]
    for t, kt, vt in zip(temps, k, vth, strict=True):
        currents = np.geomspace(0.1, i_top, points)
        rows += [f"{t:g},{significant(vt + math.sqrt(i / kt), 5)},{significant(i, 5)}" for i in currents]
    return "\n".join(rows) + "\n"


DEMOS = [
    Demo(
        id="demo-nmos-to247-linear-240w",
        kind="nmos",
        package="TO-247",
        text="switching MOSFET whose DC SOA comes from Rth alone; transfer curves show its linear-mode instability",
        v_max=100,
        i_max=80,
        i_pulse_max=300,
        tj_max=175,
        rth_jc=0.625,
        foster_r=[0.015, 0.06, 0.2, 0.35],
        foster_tau=[5e-5, 5e-4, 5e-3, 0.05],
        steep_knee_v=100,  # no steep segment drawn: the datasheet computed its DC SOA from Rth
        steep_slope=-2.0,
        steep_pulse_gain={"10ms": 50.0, "1ms": 50.0, "100us": 50.0},
        v_start=0.3,
        r_on=0.01,
        square_law=(5.0, 4.0, -0.006),
    ),
    Demo(
        id="demo-npn-darlington-to3-150w",
        kind="npn",
        package="TO-3 metal can",
        text="Darlington for linear supplies, gain falling above 5 A, second breakdown above 40 V",
        v_max=100,
        i_max=15,
        i_pulse_max=25,
        tj_max=200,
        rth_jc=1.1667,
        foster_r=[0.04, 0.12, 0.4067, 0.6],
        foster_tau=[1e-4, 1e-3, 1e-2, 0.12],
        steep_knee_v=40,
        steep_slope=-1.8,
        steep_pulse_gain={"10ms": 1.6, "1ms": 3.0, "100us": 5.0},
        gain=[(0.5, 1500.0), (2.0, 2500.0), (5.0, 2000.0), (10.0, 800.0), (15.0, 300.0)],
        darlington=True,
    ),
    Demo(
        id="demo-npn-to3-250w",
        kind="npn",
        package="TO-3 metal can",
        text="large bipolar for linear loads, mild second breakdown above 60 V",
        v_max=140,
        i_max=16,
        i_pulse_max=30,
        tj_max=200,
        rth_jc=0.7,
        foster_r=[0.02, 0.06, 0.22, 0.40],
        foster_tau=[1e-4, 1e-3, 1e-2, 0.15],
        steep_knee_v=60,
        steep_slope=-1.6,
        steep_pulse_gain={"10ms": 1.8, "1ms": 3.5, "100us": 6.0},
        derating=[[25, 1.0], [75, 0.9], [125, 0.78], [175, 0.65]],
    ),
    Demo(
        id="demo-npn-to247-125w",
        kind="npn",
        package="TO-247",
        text="plastic bipolar whose steep second breakdown dominates above 30 V",
        v_max=100,
        i_max=15,
        i_pulse_max=25,
        tj_max=150,
        rth_jc=1.0,
        foster_r=[0.03, 0.09, 0.33, 0.55],
        foster_tau=[1e-4, 1e-3, 1e-2, 0.08],
        steep_knee_v=30,
        steep_slope=-2.5,
        steep_pulse_gain={"10ms": 1.6, "1ms": 3.0, "100us": 5.0},
    ),
    Demo(
        id="demo-npn-to220-62w",
        kind="npn",
        package="TO-220",
        text="small plastic bipolar, gentle second breakdown above 45 V",
        v_max=80,
        i_max=8,
        i_pulse_max=15,
        tj_max=150,
        rth_jc=2.0,
        foster_r=[0.08, 0.22, 0.70, 1.00],
        foster_tau=[1e-4, 1e-3, 1e-2, 0.05],
        steep_knee_v=45,
        steep_slope=-1.4,
        steep_pulse_gain={"10ms": 1.5, "1ms": 2.5, "100us": 4.0},
        derating=[[25, 1.0], [100, 0.8], [150, 0.6]],
    ),
    Demo(
        id="demo-nmos-to247-300w",
        kind="nmos",
        package="TO-247",
        text="planar MOSFET with a linear-mode instability bend above 25 V",
        v_max=150,
        i_max=60,
        i_pulse_max=200,
        tj_max=175,
        rth_jc=0.5,
        foster_r=[0.01, 0.04, 0.15, 0.30],
        foster_tau=[5e-5, 5e-4, 5e-3, 0.05],
        steep_knee_v=25,
        steep_slope=-2.0,
        steep_pulse_gain={"10ms": 2.0, "1ms": 4.0, "100us": 8.0},
        v_start=0.3,
        r_on=0.03,
    ),
    Demo(
        id="demo-igbt-to247-200w",
        kind="igbt",
        package="TO-247",
        text="IGBT for linear use, instability bend above 300 V",
        v_max=600,
        i_max=40,
        i_pulse_max=120,
        tj_max=175,
        rth_jc=0.75,
        foster_r=[0.02, 0.08, 0.25, 0.40],
        foster_tau=[1e-4, 1e-3, 1e-2, 0.1],
        steep_knee_v=300,
        steep_slope=-1.8,
        steep_pulse_gain={"10ms": 1.8, "1ms": 3.0, "100us": 5.0},
    ),
]


if __name__ == "__main__":
    for demo in DEMOS:
        write(demo)
        print(f"wrote {ROOT / demo.id}")
