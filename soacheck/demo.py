"""The bundled demo: a plan of every kind of job, on invented parts, run into a report.

The plan and its files live in ``soacheck/demo_plan/`` (package data): a community
workshop's bench that discharges donated e-bike packs through two pass transistors on one
heatsink, its planned operating points, the envelope it must cover, two discharges, a
current ramp, a recorded pulse test, and the choice among the demo parts. All invented.
"""

from __future__ import annotations

from pathlib import Path

DEMO_FOLDER = "soacheck-demo"
"""Where ``soacheck demo`` writes its report, in the current folder."""


def demo_plan_path() -> Path:
    """The bundled demo plan file."""
    return Path(__file__).resolve().parent / "demo_plan" / "plan.toml"
