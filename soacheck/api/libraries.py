"""Part libraries: the folders a ``library=`` argument names, and the parts they hold (``parts``, ``part_rows``).

Nothing here loads numpy, pandas or scipy when imported or when listing plainly written
parts (``soacheck parts`` starts as fast as the listing allows); :func:`parts` imports
pandas when called, for its DataFrame.
"""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING, Any

import soacheck.library as libraries

if TYPE_CHECKING:
    import pandas as pd

    from soacheck.api.options import Library, PathLike


def _folders(library: Library) -> list[Path]:
    """The folders searched for a part: ``library`` (one folder or several), ``SOACHECK_LIBRARY``, the bundled parts."""
    if library is None:
        extra: list[PathLike] = []
    elif isinstance(library, str | Path):
        extra = [library]
    else:
        extra = list(library)
    return libraries.library_folders(extra)


def part_rows(*, library: Library = None) -> list[dict[str, Any]]:
    """Every part in the libraries (the first of each id), sorted by id, as plain rows.

    The rows of :func:`parts` as Python values, without pandas: what ``soacheck parts``
    prints, and ``soacheck parts --json`` prints ``{"parts": part_rows(...)}``.

    Parameters
    ----------
    library
        Folders of user part folders, searched before ``SOACHECK_LIBRARY`` and the bundled parts.

    Returns
    -------
    list of dict
        One dict a part, keys in this order: ``id``, ``kind``, ``v_max`` [V], ``i_max`` [A],
        ``p_max`` [W], ``tj_max`` [°C], ``rth_jc`` [K/W] (floats), ``curves`` (list of pulse
        labels, shortest first, DC last), ``description``, ``folder`` (the part folder's path,
        as text).

    Raises
    ------
    SoacheckError
        A library that is not a folder, or a part whose ``part.toml`` header (id, kind,
        ratings, description) or ``soa.csv`` pulse labels cannot be read, with the message
        loading the part gives. The curves' points and the other tables are checked when a
        part is loaded (:func:`load_part`, ``check``, ``lint``), not here.

    Notes
    -----
    Reads each ``part.toml``'s header and the ``pulse`` column of ``soa.csv`` in Python; a
    ``soa.csv`` not plainly written (quoted cells, say) is read as loading reads it, with numpy.
    """
    return libraries.part_rows(_folders(library))


def parts(*, library: Library = None) -> pd.DataFrame:
    """Every part in the libraries (the first of each id), sorted by id, as a table.

    Parameters
    ----------
    library
        As for :func:`part_rows`.

    Returns
    -------
    pandas.DataFrame
        One row per part: ``id``, ``kind``, ``v_max`` [V], ``i_max`` [A], ``p_max`` [W],
        ``tj_max`` [°C], ``rth_jc`` [K/W], ``curves`` (list of pulse labels, DC last),
        ``description``, ``folder``; the rows of :func:`part_rows`. ``soacheck parts --json``
        prints ``{"parts": frame.to_dict(orient="records")}``.
    """
    import pandas as pd

    return pd.DataFrame(part_rows(library=library), columns=list(libraries.PART_COLUMNS))
