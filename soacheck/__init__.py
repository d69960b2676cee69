"""soacheck: prove that linear-mode operating points stay inside a transistor's safe operating area.

The package is organised by domain concept:

- :mod:`soacheck.units`    -- durations with SI suffixes, converted once at the edge
- :mod:`soacheck.parts`    -- the part and its curves (frozen dataclasses, no I/O)
- :mod:`soacheck.csvtables`, :mod:`soacheck.tomlfiles`, :mod:`soacheck.tracefiles`, :mod:`soacheck.images`
  -- the user's CSV tables, TOML files, traces in chunks and pictures, read with clear errors
- :mod:`soacheck.outputs`  -- output paths checked before computing; atomic writes
- :mod:`soacheck.partfiles`, :mod:`soacheck.jobfiles` -- part folders; points, envelopes, discharges
- :mod:`soacheck.library`  -- finding parts by id; stage files
- :mod:`soacheck.derating` -- each mechanism's derating with case temperature
- :mod:`soacheck.mechanisms` -- segment slopes and mechanism lines
- :mod:`soacheck.boundary` -- the derated boundary: pulse lines, allowed current, polylines
- :mod:`soacheck.points`   -- operating points checked against the boundary, the margin
- :mod:`soacheck.region`   -- the safe region as a shapely polygon
- :mod:`soacheck.thermal`  -- Foster and Cauer networks, Zth, pulse trains, heatsink chains
- :mod:`soacheck.thermal_model` -- a part's thermal model (given or fitted)
- :mod:`soacheck.thermal_response` -- Tj along P(t)
- :mod:`soacheck.excursions`, :mod:`soacheck.trace` -- waveforms checked sample by sample, in chunks
- :mod:`soacheck.trace_boundaries`, :mod:`soacheck.trace_result` -- what a trace is judged against, what it found
- :mod:`soacheck.stage`    -- parallel devices and their heatsink
- :mod:`soacheck.sharing`, :mod:`soacheck.stage_run`, :mod:`soacheck.steady_state` -- sharing, runs, steady states
- :mod:`soacheck.search`   -- monotone searches
- :mod:`soacheck.battery`  -- batteries, discharges and sweeps as trajectories
- :mod:`soacheck.envelope` -- test envelopes and the largest safe envelope
- :mod:`soacheck.compare`  -- ranking candidate parts for a job
- :mod:`soacheck.authoring`, :mod:`soacheck.lint` -- making parts from datasheets, checking them
- :mod:`soacheck.plan`, :mod:`soacheck.runner`, :mod:`soacheck.report` -- plans, runs, reports
- :mod:`soacheck.plots`    -- log-log SOA plots and time plots
- :mod:`soacheck.api`      -- the public functions, each beside the result object it returns, one
  room per topic (libraries, points, traces, stages, envelopes, comparisons, plans, authoring)
- :mod:`soacheck.cli`      -- the ``soacheck`` command, a thin layer over the API

The public surface is what ``__all__`` lists below (see ``docs/python.md``); every other
name, module and attribute is internal and may change without notice.
"""

import sys
import types
from typing import TYPE_CHECKING, Any

__version__ = "0.1.0"

# Each public name and the module it lives in. They load on first use (PEP 562), so that
# ``import soacheck`` and the command stay quick until a job needs numpy, scipy or pandas.
_PUBLIC = {
    "LintResult": "soacheck.api.authoring",
    "lint": "soacheck.api.authoring",
    "Result": "soacheck.api.base",
    "Verdict": "soacheck.api.base",
    "CompareResult": "soacheck.api.comparisons",
    "compare": "soacheck.api.comparisons",
    "EnvelopeResult": "soacheck.api.envelopes",
    "SafeEnvelopeResult": "soacheck.api.envelopes",
    "envelope": "soacheck.api.envelopes",
    "part_rows": "soacheck.api.libraries",
    "parts": "soacheck.api.libraries",
    "PlanResult": "soacheck.api.plans",
    "run_plan": "soacheck.api.plans",
    "CheckResult": "soacheck.api.points",
    "allowed_current": "soacheck.api.points",
    "check": "soacheck.api.points",
    "load_part": "soacheck.api.points",
    "SharingResult": "soacheck.api.stages",
    "StageRunResult": "soacheck.api.stages",
    "discharge": "soacheck.api.stages",
    "load_stage": "soacheck.api.stages",
    "sharing": "soacheck.api.stages",
    "sweep": "soacheck.api.stages",
    "TraceCheckResult": "soacheck.api.traces",
    "trace": "soacheck.api.traces",
    "Mode": "soacheck.battery",
    "SweepKind": "soacheck.battery",
    "BreakdownDerating": "soacheck.derating",
    "Envelope": "soacheck.envelope",
    "SoacheckError": "soacheck.errors",
    "Part": "soacheck.parts",
    "Cooling": "soacheck.stage",
    "Stage": "soacheck.stage",
}

__all__ = [
    "__version__",
    "BreakdownDerating",
    "CheckResult",
    "CompareResult",
    "Cooling",
    "Envelope",
    "EnvelopeResult",
    "LintResult",
    "Mode",
    "Part",
    "PlanResult",
    "Result",
    "SafeEnvelopeResult",
    "SharingResult",
    "SoacheckError",
    "Stage",
    "StageRunResult",
    "SweepKind",
    "TraceCheckResult",
    "Verdict",
    "allowed_current",
    "check",
    "compare",
    "discharge",
    "envelope",
    "lint",
    "load_part",
    "load_stage",
    "part_rows",
    "parts",
    "run_plan",
    "sharing",
    "sweep",
    "trace",
]


class _Package(types.ModuleType):
    """The package module: a submodule never hides the public function of the same name.

    Importing ``soacheck.trace`` (the module) would otherwise bind the package attribute
    ``trace`` to that module; the function :func:`soacheck.trace` keeps the name. The
    modules stay importable as ever (``from soacheck.trace import TraceChecker``).
    """

    def __setattr__(self, name: str, value: Any) -> None:
        if name in _PUBLIC and isinstance(value, types.ModuleType):
            return
        super().__setattr__(name, value)


sys.modules[__name__].__class__ = _Package


def __getattr__(name: str) -> Any:
    """Load a public name from its module on first use."""
    if name in _PUBLIC:
        import importlib

        value = getattr(importlib.import_module(_PUBLIC[name]), name)
        globals()[name] = value
        return value
    raise AttributeError(f"module 'soacheck' has no attribute '{name}'")


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(_PUBLIC))


if TYPE_CHECKING:  # what type checkers and editors see
    from soacheck.api.authoring import LintResult, lint
    from soacheck.api.base import Result, Verdict
    from soacheck.api.comparisons import CompareResult, compare
    from soacheck.api.envelopes import EnvelopeResult, SafeEnvelopeResult, envelope
    from soacheck.api.libraries import part_rows, parts
    from soacheck.api.plans import PlanResult, run_plan
    from soacheck.api.points import CheckResult, allowed_current, check, load_part
    from soacheck.api.stages import SharingResult, StageRunResult, discharge, load_stage, sharing, sweep
    from soacheck.api.traces import TraceCheckResult, trace
    from soacheck.battery import Mode, SweepKind
    from soacheck.derating import BreakdownDerating
    from soacheck.envelope import Envelope
    from soacheck.errors import SoacheckError
    from soacheck.parts import Part
    from soacheck.stage import Cooling, Stage
