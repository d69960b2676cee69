"""Durations with SI suffixes, as written in files and on the command line.

Inside soacheck every duration is a float in seconds; ``dc`` is ``math.inf``.
Conversion happens once, here, at the edge.
"""

from __future__ import annotations

import math
import re

from soacheck.errors import SoacheckError

DC = math.inf
"""A continuous (DC) condition: an infinitely long pulse. [s]"""

_SUFFIX_S = {"s": 1.0, "ms": 1e-3, "us": 1e-6, "µs": 1e-6, "μs": 1e-6, "ns": 1e-9}
_DURATION = re.compile(r"^\s*([0-9]*\.?[0-9]+(?:[eE][-+]?[0-9]+)?)\s*([a-zA-Zµμ]*)\s*$")


def parse_duration(text: str, *, where: str = "pulse") -> float:
    """Parse ``dc`` or a duration such as ``10us``, ``1 ms``, ``0.5s`` into seconds.

    Parameters
    ----------
    text
        The written duration. ``dc`` (any case) means continuous.
    where
        Names the place the text came from, for the error message.

    Returns
    -------
    float
        The duration in seconds, ``math.inf`` for ``dc``. [s]

    Raises
    ------
    SoacheckError
        For a missing or unknown suffix, or a duration that is not positive.
    """
    raw = str(text).strip()
    if raw.lower() == "dc":
        return DC
    match = _DURATION.match(raw)
    if not match:
        raise SoacheckError(
            f"{where}: '{raw}' is not a duration; write 'dc' or a number with a unit such as '10us', '1ms', '0.5s'"
        )
    number, suffix = match.groups()
    if not suffix:
        raise SoacheckError(f"{where}: '{raw}' has no unit; write it as '{number}s', '{number}ms' or '{number}us'")
    if suffix not in _SUFFIX_S:
        raise SoacheckError(
            f"{where}: unknown time unit '{suffix}' in '{raw}'; use one of "
            + ", ".join(k for k in _SUFFIX_S if k not in ("µs", "μs"))
        )
    seconds = float(number) * _SUFFIX_S[suffix]
    if not seconds > 0:
        raise SoacheckError(f"{where}: '{raw}' must be longer than zero")
    return seconds


def format_duration(t_s: float) -> str:
    """Write a duration in seconds the way a datasheet would: ``dc``, ``100us``, ``1ms``, ``2.5s``."""
    if math.isinf(t_s):
        return "dc"
    for suffix, scale in (("s", 1.0), ("ms", 1e-3), ("us", 1e-6), ("ns", 1e-9)):
        if t_s >= scale * 0.9999999:
            value = t_s / scale
            return f"{value:.6g}{suffix}"
    return f"{t_s:.3g}s"
