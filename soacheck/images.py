"""Pictures of datasheet plots read as RGB arrays."""

from __future__ import annotations

from pathlib import Path

import numpy as np

from soacheck.errors import SoacheckError


def read_image(path: str | Path) -> np.ndarray:
    """A PNG or JPEG (or another format Pillow reads) as RGB, shape ``(rows, columns, 3)``, 0-1."""
    from PIL import Image, UnidentifiedImageError

    try:
        with Image.open(path) as picture:
            rgb = picture.convert("RGB")
    except FileNotFoundError:
        raise SoacheckError(f"{path}: no such image; check the path") from None
    except (OSError, UnidentifiedImageError, ValueError) as err:
        raise SoacheckError(f"{path}: not an image Pillow can read ({err}); save the plot as PNG or JPEG") from None
    return np.asarray(rgb, dtype=float) / 255.0
