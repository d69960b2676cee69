"""The one exception family of soacheck.

Every problem a user can fix (a malformed file, an unknown part, an impossible
option) is raised as :class:`SoacheckError` with a message that names the file,
the row or key and what to do. The CLI turns it into one line and exit code 2.
"""

from __future__ import annotations

import difflib
from collections.abc import Iterable, Sequence


class SoacheckError(ValueError):
    """A problem with the user's input that the user can fix."""


def did_you_mean(word: str, choices: Iterable[str], *, cutoff: float = 0.6) -> str:
    """Return `` (did you mean 'x'?)`` for the closest choice, or an empty string."""
    close = difflib.get_close_matches(word, list(choices), n=3, cutoff=cutoff)
    if not close:
        return ""
    return " (did you mean " + " or ".join(f"'{c}'" for c in close) + "?)"


def nearest(word: str, choices: Iterable[str], n: int = 3) -> list[str]:
    """The ``n`` choices most like ``word``, most alike first, however far they are."""
    return sorted(choices, key=lambda c: -difflib.SequenceMatcher(None, word, c).ratio())[:n]


def choose(text: str, choices: Sequence[str], where: str) -> str:
    """The choice named by ``text``, in any letter case (``CC`` is ``cc``); one clear error otherwise.

    Raises
    ------
    SoacheckError
        ``WHERE: 'x' is not one of a, b, c (did you mean 'a'?)``.
    """
    value = str(text).strip().lower()
    if value not in choices:
        raise SoacheckError(f"{where}: '{text}' is not one of {', '.join(choices)}{did_you_mean(value, choices)}")
    return value
