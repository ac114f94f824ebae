"""Pictures placed on the Charts sheet: the LWR space-time picture on request.

The picture is a PNG drawn by :mod:`wzq.spacetime` from a kinematic-wave
(Godunov) simulation of the approach; it is a check of the queue method, not a
live chart, so it is redrawn on every run.
"""

from __future__ import annotations

import io

from openpyxl import Workbook
from openpyxl.drawing.image import Image

from wzq.analysis import Result
from wzq.workbook import layout

#: Where the picture goes on the Charts sheet: below the three native charts.
ANCHOR = "A64"
DPI = 110


def add_space_time(book: Workbook, result: Result) -> list[str]:
    """Put the space-time picture on the Charts sheet; return the simulation's warnings."""
    from wzq.lwr import simulate
    from wzq.spacetime import space_time_png

    sim = simulate(result)
    png = space_time_png(sim, dpi=DPI)
    ws = book[layout.CHARTS]
    image = Image(io.BytesIO(png))
    ws.add_image(image, ANCHOR)
    return list(sim.warnings)
