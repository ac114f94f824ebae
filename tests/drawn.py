"""What a reportlab drawing of the report shows: its texts with their boxes, and its
lines, walked from the drawing itself (no rendering), for the tests of
:mod:`wzq.present.drawings`."""

from __future__ import annotations

from dataclasses import dataclass

from reportlab.graphics.shapes import Drawing, Group, Line, PolyLine, String
from reportlab.pdfbase.pdfmetrics import stringWidth


@dataclass(frozen=True)
class Text:
    """A text as drawn: its words and its box (points, the drawing's coordinates)."""

    text: str
    baseline: float
    x0: float
    x1: float
    y0: float
    y1: float


def _walk(shape, transform=(1.0, 0.0, 0.0, 1.0, 0.0, 0.0)):
    """Every shape with the transform that places it (nested groups multiplied out)."""
    if isinstance(shape, Group | Drawing):
        t = getattr(shape, "transform", None) or (1.0, 0.0, 0.0, 1.0, 0.0, 0.0)
        a, b, c, d, e, f = transform
        A, B, C, D, E, F = t
        inner = (a * A + c * B, b * A + d * B, a * C + c * D, b * C + d * D,
                 a * E + c * F + e, b * E + d * F + f)  # fmt: skip
        for child in shape.contents:
            yield from _walk(child, inner)
    else:
        yield shape, transform


def texts(drawing: Drawing) -> list[Text]:
    """Every text of the drawing with its box (rotated texts get their rotated box)."""
    out = []
    for s, (a, b, c, d, e, f) in _walk(drawing):
        if not isinstance(s, String):
            continue
        w = stringWidth(s.text, s.fontName, s.fontSize)
        left = s.x - {"start": 0.0, "middle": w / 2, "end": w}[s.textAnchor]
        corners = [(left, s.y - 0.2 * s.fontSize), (left + w, s.y + 0.75 * s.fontSize)]
        xs = [a * x + c * y + e for x, y in corners]
        ys = [b * x + d * y + f for x, y in corners]
        out.append(Text(s.text, b * s.x + d * s.y + f, min(xs), max(xs), min(ys), max(ys)))
    return out


def overlaps(drawing: Drawing) -> list[tuple[str, str]]:
    """Pairs of texts whose boxes overlap."""
    found = texts(drawing)
    return [
        (p.text, q.text)
        for i, p in enumerate(found)
        for q in found[i + 1 :]
        if p.x0 < q.x1 and q.x0 < p.x1 and p.y0 < q.y1 and q.y0 < p.y1
    ]


def horizontal_lines(drawing: Drawing) -> list[tuple[float, float, float]]:
    """Every straight horizontal line: its height and its two ends (points)."""
    out = []
    for s, (_, _, _, _, e, f) in _walk(drawing):
        if isinstance(s, Line) and s.y1 == s.y2:
            out.append((s.y1 + f, min(s.x1, s.x2) + e, max(s.x1, s.x2) + e))
        elif isinstance(s, PolyLine) and len(s.points) == 4 and s.points[1] == s.points[3]:
            out.append((s.points[1] + f, s.points[0] + e, s.points[2] + e))
    return out
