"""Pictures placed on the Charts sheet: the LWR space-time picture on request.

The picture is a PNG drawn by :mod:`wzq.present.spacetime` from a kinematic-wave
(Godunov) simulation of the approach; it is a check of the queue method, not a
live chart, so it is redrawn on every run. It goes below the charts, on a
printed page of its own: the sheet's print area is extended to take it in.
"""

from __future__ import annotations

import io
import math

from openpyxl import Workbook
from openpyxl.drawing.image import Image
from openpyxl.utils import get_column_letter
from openpyxl.utils.cell import range_boundaries
from openpyxl.worksheet.pagebreak import Break

from wzq.engine.lwr.simulation import simulate
from wzq.engine.results import Result
from wzq.io.workbook import layout

__all__ = [
    "DPI",
    "ROW_PX",
    "WIDTH_PX",
    "place_space_time",
    "space_time_picture",
]

DPI = 110
#: Width (pixels) the picture is shown at: the printed columns A to O at the default
#: column width (64 pixels each), and the height of a default row.
WIDTH_PX = 15 * 64
ROW_PX = 20


def space_time_picture(result: Result) -> tuple[bytes, list[str]]:
    """The space-time picture of ``result`` (PNG) and the warnings its LWR simulation raised."""
    # imported here, not above: matplotlib is slow to import, and only a run that asks
    # for the picture should pay for it
    from wzq.present.spacetime import space_time_png

    sim = simulate(result)
    return space_time_png(sim, dpi=DPI), list(sim.warnings)


def place_space_time(book: Workbook, png: bytes) -> None:
    """Put the space-time picture on the Charts sheet, on a printed page of its own
    below the charts, and extend the sheet's print area to take it in."""
    ws = book[layout.CHARTS]
    image = Image(io.BytesIO(png))
    scale = WIDTH_PX / image.width
    image.width, image.height = WIDTH_PX, round(image.height * scale)
    area = ws.print_area[0] if isinstance(ws.print_area, list) else ws.print_area
    min_col, min_row, max_col, max_row = range_boundaries(area.split("!")[-1].replace("$", ""))
    ws.row_breaks.append(Break(id=max_row))
    first = max_row + 2
    ws.add_image(image, f"A{first}")
    last = first + math.ceil(image.height / ROW_PX) + 1
    ws.print_area = f"{get_column_letter(min_col)}{min_row}:{get_column_letter(max_col)}{last}"
