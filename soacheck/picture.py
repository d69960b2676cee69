"""A datasheet plot as a picture: grey levels, the frame, the grid and its decades, the dark ink of curves.

The picture is read as grey levels (0 black, 1 white). Pixels darker than mid-grey are
*dark*: curves, the frame and text; any ink is lighter than near-white, the light grid
included. The frame and the grid are long straight lines across the plot, found with
the progressive probabilistic Hough transform; the dark mask drops the frame and every
long dark line except where a stroke runs on beyond it (a curve crossing).

References
----------
J. Matas, C. Galambos, J. Kittler, "Robust detection of lines using the progressive
probabilistic Hough transform", Computer Vision and Image Understanding 78(1), 2000.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import ndimage
from skimage.color import rgb2gray, rgba2rgb
from skimage.morphology import skeletonize
from skimage.transform import probabilistic_hough_line

from soacheck.errors import SoacheckError

DARK_BELOW = 0.5  # grey level under which a pixel is ink of a curve, the frame or text (0 black, 1 white)
INK_BELOW = 0.96  # grey level under which a pixel is any ink, the light grid included


def grey_levels(image: np.ndarray) -> np.ndarray:
    """Grey levels 0 (black) to 1 (white), shape ``(rows, columns)``, of an RGB(A) or grey image."""
    data = np.asarray(image, dtype=float)
    if data.max() > 1.0:
        data = data / 255.0
    if data.ndim == 3 and data.shape[2] == 4:
        data = rgba2rgb(data)
    if data.ndim == 3:
        data = rgb2gray(data[..., :3])
    return data


# --------------------------------------------------------------------------- straight lines


@dataclass(frozen=True)
class Band:
    """A long straight line of the picture: the pixel rows (or columns) it covers.

    Attributes
    ----------
    first, last
        First and last row (horizontal line) or column (vertical line) it covers. [px]
    start, end
        Where along its length it starts and ends. [px]
    """

    first: int
    last: int
    start: int
    end: int

    @property
    def centre(self) -> float:
        """The line's middle across its width. [px]"""
        return 0.5 * (self.first + self.last)


def long_lines(mask: np.ndarray, *, horizontal: bool, min_length_px: float) -> list[Band]:
    """Straight horizontal (or vertical) lines of ``mask`` at least ``min_length_px`` long.

    Found with the progressive probabilistic Hough transform restricted to the one
    direction (skimage's ``probabilistic_hough_line``, seeded, so the result repeats);
    adjacent rows are merged into one band, so a line several pixels wide is one band.
    """
    theta = np.array([np.pi / 2]) if horizontal else np.array([0.0])
    segments = probabilistic_hough_line(
        mask, threshold=10, line_length=int(min_length_px), line_gap=3, theta=theta, rng=0
    )
    if not segments:
        return []
    across = np.array([s[0][1] if horizontal else s[0][0] for s in segments])
    along = np.array([sorted((s[0][0], s[1][0]) if horizontal else (s[0][1], s[1][1])) for s in segments])
    order = np.argsort(across, kind="stable")
    across, along = across[order], along[order]
    breaks = np.flatnonzero(np.diff(across) > 1) + 1
    bands = []
    for group in np.split(np.arange(across.size), breaks):
        bands.append(
            Band(int(across[group[0]]), int(across[group[-1]]), int(along[group, 0].min()), int(along[group, 1].max()))
        )
    return bands


@dataclass(frozen=True)
class Frame:
    """The plot's frame: the pixel position of each edge line's middle. [px]"""

    left: float
    right: float
    top: float
    bottom: float
    line_px: int  # the widest edge line's width [px]


def find_frame(grey: np.ndarray, *, required: bool = True) -> Frame:
    """The frame: the outermost long dark lines, horizontal and vertical, that span half the picture.

    With ``required`` False, a picture with no frame drawn gets the picture's own edges
    as its frame (tracing then stays inside the picture; the axes come from pixel ticks).

    Raises
    ------
    SoacheckError
        When no rectangle of long dark lines is found and ``required`` is True.
    """
    dark = grey < DARK_BELOW
    rows, columns = grey.shape
    horizontal = long_lines(dark, horizontal=True, min_length_px=0.5 * columns)
    vertical = long_lines(dark, horizontal=False, min_length_px=0.5 * rows)
    if len(horizontal) < 2 or len(vertical) < 2:
        if not required:
            return Frame(0.0, float(columns - 1), 0.0, float(rows - 1), 1)
        raise SoacheckError(
            "no plot frame found (two long dark lines across and two down the picture); give the axis "
            "calibration as pixel ticks with --x PX1=V1,PX2=V2 --y PY1=I1,PY2=I2 instead"
        )
    top, bottom = horizontal[0], horizontal[-1]
    left, right = vertical[0], vertical[-1]
    width = max(b.last - b.first + 1 for b in (top, bottom, left, right))
    return Frame(
        _line_middle(grey.T, left),
        _line_middle(grey.T, right),
        _line_middle(grey, top),
        _line_middle(grey, bottom),
        width,
    )


def _line_middle(grey: np.ndarray, band: Band) -> float:
    """A horizontal band's middle between pixel rows: its darkness profile's centroid, one row either side."""
    rows = np.arange(max(band.first - 1, 0), min(band.last + 2, grey.shape[0]))
    profile = np.clip(1.0 - grey[rows, band.start : band.end + 1], 0.0, 1.0).mean(axis=1)
    return float((profile * rows).sum() / profile.sum())


def grid_lines(grey: np.ndarray, frame: Frame, *, horizontal: bool) -> np.ndarray:
    """Middles of the grid lines across the frame (light or dark), frame lines included. [px]"""
    ink = grey < INK_BELOW
    span = (frame.right - frame.left) if horizontal else (frame.bottom - frame.top)
    bands = long_lines(ink, horizontal=horizontal, min_length_px=0.85 * span)
    return np.array([b.centre for b in bands])


def decades_seen(positions_px: np.ndarray, span_px: float) -> float | None:
    """Decades across a frame of ``span_px`` from the grid line positions of a log axis, or None.

    On a log grid with minor lines at 2..9 the widest gap, from 1 to 2, is log10(2) of a
    decade and opens every decade; the decade's length is the spacing of those openings
    (or the widest gap / log10 2 when only one shows). With major lines alone every gap
    is a decade. Returns None with fewer than three lines.
    """
    p = np.unique(np.round(positions_px, 1))
    if p.size < 3:
        return None
    gaps = np.diff(p)
    if gaps.max() / gaps.min() < 1.3:
        decade_px = float(np.median(gaps))
    else:
        opens = p[:-1][gaps > 0.8 * gaps.max()]
        decade_px = float(np.median(np.diff(opens))) if opens.size >= 2 else float(gaps.max() / np.log10(2))
    return span_px / decade_px


def dark_mask(grey: np.ndarray, frame: Frame) -> np.ndarray:
    """Dark pixels inside the frame, with the frame and long dark grid lines taken out.

    A long line's pixels are kept where the dark stroke carries on beyond the line on
    either side (a curve crossing it), and where there is more ink across the line than
    along the thinnest quarter of its length (a curve drawn on it, wider than it), by
    0.6 px of black or more.
    """
    dark = grey < DARK_BELOW
    inside = np.zeros_like(dark)
    pad = frame.line_px // 2 + 1
    top, bottom = int(frame.top) + pad, int(np.ceil(frame.bottom)) - pad + 1
    inside[top:bottom, int(frame.left) + pad : int(np.ceil(frame.right)) - pad + 1] = True
    dark &= inside
    for horizontal in (True, False):
        span = (frame.right - frame.left) if horizontal else (frame.bottom - frame.top)
        bands = long_lines(dark, horizontal=horizontal, min_length_px=0.8 * span)
        view = dark if horizontal else dark.T  # a view: rows of `view` run along the line
        ink = np.clip(1.0 - (grey if horizontal else grey.T), 0.0, 1.0)
        for band in bands:
            keep = view[max(band.first - 1, 0)] | view[min(band.last + 1, view.shape[0] - 1)]
            across = ink[max(band.first - 2, 0) : band.last + 3].sum(axis=0)  # [px of black]
            keep |= across > np.percentile(across[band.start : band.end + 1], 25) + 0.6
            view[band.first : band.last + 1, ~keep] = False
    return dark


def stroke_width_px(mask: np.ndarray, row: int, column: int, radius: int = 12) -> float:
    """Width of the dark stroke near a pixel: twice the median distance to its edge along its skeleton. [px]"""
    r0, c0 = max(row - radius, 0), max(column - radius, 0)
    window = mask[r0 : row + radius + 1, c0 : column + radius + 1]
    skeleton = skeletonize(window)
    if not skeleton.any():
        return 1.0
    depth = ndimage.distance_transform_edt(window)
    return float(max(1.0, 2.0 * np.median(depth[skeleton]) - 0.5))
