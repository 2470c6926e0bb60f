"""Drawing into RGB frames with numpy: the few shapes the environments' pictures need.

A frame is an (H, W, 3) uint8 array; positions are in pixels, (column, row) from the top
left corner, fractional. A pixel is painted when its centre lies inside the shape; shapes
reaching past the frame are cut at its border.
"""

from __future__ import annotations

import math

import numpy as np

WHITE = (255, 255, 255)
BLACK = (0, 0, 0)
GREY = (170, 170, 170)
RED = (214, 39, 40)
BLUE = (31, 119, 180)
ORANGE = (255, 127, 14)
GREEN = (44, 160, 44)
BROWN = (140, 86, 75)


def blank(height: int, width: int) -> np.ndarray:
    """A white frame of ``height`` x ``width`` pixels."""
    return np.full((height, width, 3), 255, dtype=np.uint8)


def _window(frame: np.ndarray, left: float, top: float, right: float, bottom: float):
    """Pixel ranges (rows, cols) of the frame covering the box, with their centres."""
    height, width = frame.shape[:2]
    c0, c1 = max(0, math.floor(left)), min(width, math.ceil(right) + 1)
    r0, r1 = max(0, math.floor(top)), min(height, math.ceil(bottom) + 1)
    rows = np.arange(r0, r1, dtype=np.float64)[:, None] + 0.5
    cols = np.arange(c0, c1, dtype=np.float64)[None, :] + 0.5
    return slice(r0, r1), slice(c0, c1), rows, cols


def segment(
    frame: np.ndarray,
    start: tuple[float, float],
    end: tuple[float, float],
    width: float,
    colour: tuple[int, int, int],
) -> None:
    """Paint the pixels within ``width / 2`` of the segment from ``start`` to ``end``."""
    half = width / 2.0
    (x0, y0), (x1, y1) = start, end
    rs, cs, rows, cols = _window(
        frame, min(x0, x1) - half, min(y0, y1) - half, max(x0, x1) + half, max(y0, y1) + half
    )
    dx, dy = x1 - x0, y1 - y0
    length2 = dx * dx + dy * dy
    t = 0.0 if length2 == 0.0 else ((cols - x0) * dx + (rows - y0) * dy) / length2
    t = np.clip(t, 0.0, 1.0)
    near = (cols - (x0 + t * dx)) ** 2 + (rows - (y0 + t * dy)) ** 2 <= half * half
    frame[rs, cs][near] = colour


def disc(
    frame: np.ndarray, centre: tuple[float, float], radius: float, colour: tuple[int, int, int]
) -> None:
    """Paint the pixels within ``radius`` of ``centre``."""
    segment(frame, centre, centre, 2.0 * radius, colour)


def box(
    frame: np.ndarray,
    left: float,
    top: float,
    right: float,
    bottom: float,
    colour: tuple[int, int, int],
) -> None:
    """Paint the pixels inside the rectangle from (left, top) to (right, bottom)."""
    rs, cs, rows, cols = _window(frame, left, top, right, bottom)
    inside = (cols >= left) & (cols <= right) & (rows >= top) & (rows <= bottom)
    frame[rs, cs][inside] = colour
