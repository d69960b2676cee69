"""soacheck: prove that linear-mode operating points stay inside a transistor's safe operating area.

The package is organised by domain concept:

- :mod:`soacheck.units`    -- durations with SI suffixes, converted once at the edge
- :mod:`soacheck.parts`    -- the part and its curves (frozen dataclasses, no I/O)
- :mod:`soacheck.files`    -- CSV tables, TOML, traces and atomic writes, with clear errors
- :mod:`soacheck.partfiles`, :mod:`soacheck.jobfiles` -- part folders; points, envelopes, discharges
- :mod:`soacheck.library`  -- finding parts by id; stage files
- :mod:`soacheck.derating` -- each mechanism's derating with case temperature
- :mod:`soacheck.soa`      -- segment mechanisms, the derated boundary, point checks
- :mod:`soacheck.thermal`  -- Foster and Cauer networks, pulse trains, Tj along P(t)
- :mod:`soacheck.trace`    -- waveforms checked sample by sample, in chunks
- :mod:`soacheck.stage`    -- parallel devices, current sharing, runaway, steady states
- :mod:`soacheck.battery`  -- batteries, discharges and sweeps as trajectories
- :mod:`soacheck.envelope` -- test envelopes and the largest safe envelope
- :mod:`soacheck.compare`  -- ranking candidate parts for a job
- :mod:`soacheck.authoring`, :mod:`soacheck.lint` -- making parts from datasheets, checking them
- :mod:`soacheck.plan`, :mod:`soacheck.runner`, :mod:`soacheck.report` -- plans, runs, reports
- :mod:`soacheck.plots`    -- log-log SOA plots and time plots
- :mod:`soacheck.cli`      -- the ``soacheck`` command, a thin layer over the above
"""

from soacheck.errors import SoacheckError

__all__ = ["SoacheckError"]
__version__ = "0.1.0"
