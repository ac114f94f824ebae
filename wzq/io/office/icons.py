"""The icons of the Recalculate plan command, drawn by code when the extension is built.

One picture at every size: on wzq's dark blue, three bars rising like a queue
that builds hour by hour (in the amber of a work-zone sign) under a white
circular arrow (recalculate). Drawn large with Pillow and scaled down, so the
small toolbar sizes stay smooth; the PNG bytes depend only on the size and the
Pillow version.
"""

from __future__ import annotations

import io
import math

from PIL import Image, ImageDraw

__all__ = [
    "AMBER",
    "BACKGROUND",
    "GRID",
    "SIZES",
    "SUPERSAMPLE",
    "WHITE",
    "draw",
    "icon_files",
    "png",
]

#: Sizes in pixels: toolbar (small, large) and the Extension Manager.
SIZES = {"recalculate_16.png": 16, "recalculate_26.png": 26, "wzq_42.png": 42}

BACKGROUND = (31, 58, 77, 255)  # wzq's header blue (#1F3A4D)
AMBER = (242, 153, 0, 255)
WHITE = (255, 255, 255, 255)
#: Drawing grid: the picture is drawn on 64 x 64 units, then scaled.
GRID = 64
SUPERSAMPLE = 8


def draw(size: int) -> Image.Image:
    """The icon as an RGBA image of ``size`` x ``size`` pixels."""
    big = GRID * SUPERSAMPLE
    k = SUPERSAMPLE
    im = Image.new("RGBA", (big, big), (0, 0, 0, 0))
    d = ImageDraw.Draw(im)
    d.rounded_rectangle((2 * k, 2 * k, 62 * k, 62 * k), radius=12 * k, fill=BACKGROUND)
    # the queue: three bars rising from left to right
    for i, top in enumerate((46, 39, 31)):
        x0 = 9 + i * 16
        d.rectangle((x0 * k, top * k, (x0 + 12) * k, 55 * k), fill=AMBER)
    # the recalculate arrow: an open circle turning clockwise, with its arrow head
    cx, cy, r, end = 40.0, 21.0, 13.0, 125.0
    d.arc(
        ((cx - r) * k, (cy - r) * k, (cx + r) * k, (cy + r) * k),
        start=215,
        end=end - 8,
        fill=WHITE,
        width=5 * k,
    )
    a = math.radians(end)
    tip_dir = (-math.sin(a), math.cos(a))  # the way the arc runs at its end
    out = (math.cos(a), math.sin(a))
    ex, ey = cx + r * out[0], cy + r * out[1]
    head = [
        (ex + 7 * tip_dir[0], ey + 7 * tip_dir[1]),
        (ex - 2 * tip_dir[0] + 6 * out[0], ey - 2 * tip_dir[1] + 6 * out[1]),
        (ex - 2 * tip_dir[0] - 6 * out[0], ey - 2 * tip_dir[1] - 6 * out[1]),
    ]
    d.polygon([(x * k, y * k) for x, y in head], fill=WHITE)
    return im.resize((size, size), Image.Resampling.LANCZOS)


def png(size: int) -> bytes:
    """The icon as PNG bytes (no time stamp or other varying metadata)."""
    buffer = io.BytesIO()
    draw(size).save(buffer, format="PNG", optimize=False)
    return buffer.getvalue()


def icon_files() -> dict[str, bytes]:
    """Every icon of the extension: file name -> PNG bytes."""
    return {name: png(size) for name, size in SIZES.items()}
