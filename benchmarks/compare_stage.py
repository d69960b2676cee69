"""Benchmark: rank 50 candidate parts in a two-device stage on a heatsink against an envelope.

Each candidate takes the stage's place: the envelope is checked device by device in
electro-thermal steady state, the fewest devices that pass are searched, and the highest
heatsink resistance that still passes. Prints the wall time, the time per part and the
CPU time per part (target: the whole comparison under 5 s).

Run: ``python benchmarks/compare_stage.py [--parts N] [--profile]``.
"""

from __future__ import annotations

import argparse
import cProfile
import pstats
import time

from compare_library import scaled_library

from soacheck.compare import compare
from soacheck.envelope import Envelope
from soacheck.stage import Cooling, Stage


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--parts", type=int, default=50)
    parser.add_argument("--profile", action="store_true", help="print the 20 costliest functions")
    args = parser.parse_args()
    parts = scaled_library(args.parts)
    # an invented bench: two devices, 0.1 Ω ballasts, 20 mV V_BE band, one heatsink of 0.4 K/W
    stage = Stage(parts[0], 2, ballast_ohm=0.1, series_ohm=0.02, vbe_spread_v=0.02, cooling=Cooling(0.3, 0.4, 600.0))
    envelope = Envelope(5.0, 42.0, 10.0, 150.0)
    profile = cProfile.Profile() if args.profile else None
    wall, cpu = time.perf_counter(), time.process_time()
    if profile:
        profile.enable()
    ranked = compare(parts, envelope, stage=stage)
    if profile:
        profile.disable()
    wall, cpu = time.perf_counter() - wall, time.process_time() - cpu
    passing = sum(c.passes for c in ranked)
    print(f"parts: {len(parts)}, passing: {passing}, best: {ranked[0].part} (margin {ranked[0].margin:.4f})")
    print(f"compare with a stage: {wall:.2f} s wall (target under 5 s), {cpu:.2f} s CPU")
    print(f"per part: {wall / len(parts) * 1e3:.0f} ms wall, {cpu / len(parts) * 1e3:.0f} ms CPU")
    if profile:
        pstats.Stats(profile).sort_stats("cumulative").print_stats(20)


if __name__ == "__main__":
    main()
