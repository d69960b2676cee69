"""Benchmark: rank a library of 50 parts against a 10,000-point envelope.

Builds 50 parts by scaling the bundled (invented) demo parts in memory, then times
`soacheck.compare.compare` (margin, limit, fewest devices and highest case temperature
of each candidate, one device at the envelope's case temperature). Target: under a
second for the comparison. Prints the time, the time per part and the time per part and
point (best of three runs).

Run: ``python benchmarks/compare_library.py [--parts N] [--points N]``.
"""

from __future__ import annotations

import argparse
from dataclasses import replace

from _timing import best_of

from soacheck.compare import compare
from soacheck.envelope import Envelope
from soacheck.library import bundled_library, list_parts
from soacheck.partfiles import read_part


def scaled_library(count: int) -> list:
    """`count` parts: the demo parts with currents and ratings scaled by 0.5-2x (invented)."""
    base = [read_part(entry.folder) for entry in list_parts([bundled_library()])]
    parts = []
    for k in range(count):
        part = base[k % len(base)]
        scale = 0.5 + 1.5 * (k / max(count - 1, 1))
        curves = tuple(replace(c, current_a=c.current_a * scale) for c in part.curves)
        ratings = replace(
            part.ratings,
            i_max_a=part.ratings.i_max_a * scale,
            p_max_w=part.ratings.p_max_w * scale,
            rth_jc_k_per_w=part.ratings.rth_jc_k_per_w / scale,
            i_pulse_max_a=None if part.ratings.i_pulse_max_a is None else part.ratings.i_pulse_max_a * scale,
        )
        parts.append(
            replace(
                part,
                id=f"{part.id}-x{scale:.2f}-{k}",
                curves=curves,
                ratings=ratings,
                foster_r_k_per_w=part.foster_r_k_per_w / scale,
            )
        )
    return parts


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--parts", type=int, default=50)
    parser.add_argument("--points", type=int, default=10_000)
    args = parser.parse_args()
    parts = scaled_library(args.parts)
    envelope = Envelope(5.0, 60.0, 20.0, 150.0, ambient_c=None, case_temp_c=60.0)
    ranked = compare(parts, envelope, points=args.points)  # warm-up, and the answer
    t_compare = best_of(3, lambda: compare(parts, envelope, points=args.points))
    passing = sum(c.passes for c in ranked)
    print(f"parts: {len(parts)}, envelope points: {args.points}, passing: {passing}, best: {ranked[0].part}")
    print(f"compare: {t_compare * 1e3:.1f} ms (target under 1000 ms)")
    per_part = t_compare / len(parts)
    print(f"per part: {per_part * 1e3:.2f} ms; per part and point: {per_part / args.points * 1e9:.0f} ns")


if __name__ == "__main__":
    main()
