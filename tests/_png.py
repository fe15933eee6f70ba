"""Telling a plot with its data drawn from empty axes, for the report tests.

The report draws its data in colour (bars, curves, shaded windows, legend
swatches) on axes whose ink, grid lines and labels are all greys. The share
of clearly coloured pixels of a rendered PNG is therefore close to zero for
axes with nothing on them and well above it once data is drawn. The file
size is no such measure: a blank axes with its labels and grid compresses to
more than a few kilobytes too.
"""

from __future__ import annotations

import base64
import io

import numpy as np
from matplotlib import image as mpimg

DRAWN_MIN = 0.007
"""Least share of coloured pixels [-] of a plot with its data drawn."""

COLOURED_SPREAD = 0.2
"""Least spread between a pixel's largest and smallest channel [-] (0 grey, 1 pure hue)."""


def png_of_data_uri(src: str) -> bytes:
    """The PNG bytes of a ``data:image/png;base64,...`` URI."""
    head, _, body = src.partition(",")
    assert head == "data:image/png;base64", head[:40]
    return base64.b64decode(body)


def coloured_share(png: bytes) -> float:
    """Share of the image's pixels that are clearly coloured, not grey [-].

    Parameters
    ----------
    png : bytes
        A PNG file.

    Returns
    -------
    float
        Pixels whose largest and smallest RGB channels differ by more than
        :data:`COLOURED_SPREAD`, over all pixels.
    """
    rgb = mpimg.imread(io.BytesIO(png), format="png")[..., :3]
    assert rgb.ndim == 3 and min(rgb.shape[:2]) > 50, rgb.shape
    spread = rgb.max(axis=-1) - rgb.min(axis=-1)
    return float(np.mean(spread > COLOURED_SPREAD))
