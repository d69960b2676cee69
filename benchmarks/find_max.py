"""Benchmark: ``discharge --find-max`` at the default resolution, through the example stage.

The example stage (two invented bipolars on one heatsink) discharges an invented 10-cell
NMC pack of 10 Ah at constant current, power and resistance; each search finds the most
demanding safe setpoint to 0.1 %, under no policy and under the ``bench`` policy (two
searches: at the policy and at the ratings). Prints each search's time and that of one
plain discharge at the same setpoint, taking turns (best of three rounds), the runs the
search made, and the target: each search under 35 times one discharge (about 1 s at
2000 samples on a quiet machine; 12 runs a search without a policy, 24 with one).

Run: ``python benchmarks/find_max.py [--samples N] [--runs N]``.
"""

from __future__ import annotations

import argparse
from pathlib import Path

from _timing import best_of_interleaved

import soacheck

STAGE = Path(__file__).resolve().parent.parent / "examples" / "stage.toml"
CASES = (("cc", 4.0, None), ("cp", 120.0, None), ("cr", 10.0, None), ("cc", 4.0, "bench"))


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--samples", type=int, default=2000)
    parser.add_argument("--runs", type=int, default=3)
    args = parser.parse_args()
    for mode, setpoint, policy in CASES:

        def run(find_max, progress=None, mode=mode, setpoint=setpoint, policy=policy):
            return soacheck.discharge(
                STAGE,
                battery="nmc",
                cells=10,
                capacity=10,
                mode=mode,
                setpoint=setpoint,
                internal_resistance=0.15,
                samples=args.samples,
                find_max=find_max,
                policy=policy,
                progress=progress,
            )

        runs: list[int] = []
        found = run(True, progress=lambda done, _total, seen=runs: seen.append(done)).max_safe_setpoint
        one, search = best_of_interleaved(args.runs, lambda: run(False), lambda: run(True))
        print(
            f"find-max {mode} from {setpoint:g}, policy {policy or 'none'}: {search:.2f} s, "
            f"{search / one:.1f}x one discharge ({one * 1e3:.0f} ms; target under 35x), "
            f"{len(runs)} runs, max safe setpoint {found:.6g}"
        )


if __name__ == "__main__":
    main()
