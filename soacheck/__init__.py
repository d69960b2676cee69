"""soacheck: prove that linear-mode operating points stay inside a transistor's safe operating area.

The package is organised by domain concept:

- :mod:`soacheck.units`    -- durations with SI suffixes, converted once at the edge
- :mod:`soacheck.parts`    -- the part and its curves (frozen dataclasses, no I/O)
- :mod:`soacheck.files`    -- reading part folders and CSV tables, with clear errors
- :mod:`soacheck.library`  -- finding parts by id in the bundled and user libraries
- :mod:`soacheck.soa`      -- segment mechanisms, temperature derating, the boundary, point checks
- :mod:`soacheck.plots`    -- log-log SOA plots
- :mod:`soacheck.cli`      -- the ``soacheck`` command, a thin layer over the above
"""

from soacheck.errors import SoacheckError

__all__ = ["SoacheckError"]
__version__ = "0.1.0"
