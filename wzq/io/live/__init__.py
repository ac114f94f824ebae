"""The Recalculate button's backend (xlwings): the open workbook mirrored, read and
written by the same reader and writer, its output sheets, charts and pictures
copied back."""

__all__: list[str] = []
