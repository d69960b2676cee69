"""soacheck: prove that linear-mode operating points stay inside a transistor's safe operating area.

The package is organised by domain concept:

- :mod:`soacheck.units`    -- durations with SI suffixes, converted once at the edge
- :mod:`soacheck.parts`    -- the part and its curves (frozen dataclasses, no I/O)
- :mod:`soacheck.files`    -- CSV tables, TOML, traces and atomic writes, with clear errors
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
- :mod:`soacheck.stage`    -- parallel devices and their heatsink
- :mod:`soacheck.sharing`, :mod:`soacheck.stage_run`, :mod:`soacheck.steady_state` -- sharing, runs, steady states
- :mod:`soacheck.search`   -- monotone searches
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
