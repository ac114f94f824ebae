"""Tables on the terminal that fit its width.

A table is a list of :class:`TermColumn`, each with a priority (1 is kept
longest). :func:`fit` keeps the columns, highest priority first, that fit the
width together with every column of a higher priority; the others are named in
a footnote so the reader knows what is left out and where to find it. Numbers
never wrap; a text column marked ``wrap`` (the hour's status) is broken into
lines after its items (``over limit:`` / ``queue length,`` / ``delay``). The
table is drawn by ``rich`` (a dependency already), on the width of the
terminal, or ``COLUMNS`` when set, or 80 characters when the output is a file
or a pipe (rich's own rule).
"""

from __future__ import annotations

import re
import textwrap
from collections.abc import Sequence
from dataclasses import dataclass
from typing import TextIO

from wzq.present.printable import printable, unwrapped

__all__ = [
    "DEFAULT_WIDTH",
    "GAP",
    "TermColumn",
    "console_width",
    "fit",
    "print_table",
    "wrap_items",
]

#: Characters between two columns.
GAP = 1
#: Width of a terminal when none can be found (rich's own default).
DEFAULT_WIDTH = 80


@dataclass(frozen=True)
class TermColumn:
    """One column: header (lines split at ``\\n``), cells as text, priority, alignment."""

    header: str
    cells: Sequence[str]
    priority: int = 1
    right: bool = True
    wrap: bool = False
    #: Narrowest width allowed for a wrapping column (``None``: its longest word).
    min_width: int | None = None

    @property
    def natural(self) -> int:
        """Width with nothing wrapped."""
        lines = self.header.split("\n")
        return max([len(x) for x in lines] + [len(c) for c in self.cells])

    @property
    def least(self) -> int:
        """Narrowest width: the longest word (a wrapping column) or the natural width."""
        if not self.wrap:
            return self.natural
        if self.min_width is not None:
            return min(self.min_width, self.natural)
        words = [w for text in (self.header, *self.cells) for w in text.split()]
        return max((len(w) for w in words), default=1)


def console_width(out: TextIO) -> int:
    """The width rich would use for ``out`` (terminal size, ``COLUMNS``, else 80)."""
    from rich.console import Console

    return Console(file=out).width


def fit(columns: Sequence[TermColumn], width: int) -> tuple[list[int], list[int]]:
    """Indices of the columns kept (in table order) and of those left out.

    Priorities are tried from 1 upward; a priority level is kept whole or not
    at all, so the table never shows a column while hiding a more important one.
    """
    kept: list[int] = []
    for level in sorted({c.priority for c in columns}):
        trial = kept + [i for i, c in enumerate(columns) if c.priority == level]
        need = sum(columns[i].least for i in trial) + GAP * (len(trial) - 1)
        if need > width and kept:
            break
        kept = sorted(trial)
    dropped = [i for i in range(len(columns)) if i not in kept]
    return kept, dropped


def wrap_items(text: str, width: int) -> str:
    """``text`` in lines of at most ``width``, broken only after ``:`` or ``,`` where it
    can be (``over limit:`` / ``queue length,`` / ``delay``), else between words."""
    lines: list[str] = []
    for item in re.split(r"(?<=[:,]) ", text):
        pieces = [item] if len(item) <= width else textwrap.wrap(item, width) or [item]
        for piece in pieces:
            if lines and len(lines[-1]) + 1 + len(piece) <= width:
                lines[-1] += " " + piece
            else:
                lines.append(piece)
    return "\n".join(lines)


def print_table(columns: Sequence[TermColumn], out: TextIO, *, what: str = "table") -> None:
    """Print the columns that fit the terminal, and a note naming those that did not.

    Text from files is made printable first (:func:`wzq.present.printable.printable`);
    rich then writes to the stream under wzq's guard, since its own styling
    codes must reach the terminal.
    """
    from dataclasses import replace

    from rich import box
    from rich.console import Console
    from rich.table import Table

    columns = [
        replace(
            c,
            header=printable(c.header, lines=True),
            cells=[printable(x, lines=True) for x in c.cells],
        )
        for c in columns
    ]
    console = Console(
        file=unwrapped(out), highlight=False, emoji=False, markup=False, soft_wrap=False
    )
    width = console.width
    kept, dropped = fit(columns, width)
    used = sum(columns[i].natural for i in kept if not columns[i].wrap) + GAP * (len(kept) - 1)
    wrapping = [i for i in kept if columns[i].wrap]
    share = max((width - used) // max(len(wrapping), 1), 1)
    table = Table(
        box=box.SIMPLE_HEAD,
        show_edge=False,
        pad_edge=False,
        padding=(0, 0),
        header_style="bold",
    )
    for i in kept:
        c = columns[i]
        table.add_column(
            c.header,
            justify="right" if c.right else "left",
            no_wrap=True,
            width=max(share, c.least) if c.wrap else c.natural,
        )
    n = len(columns[kept[0]].cells) if kept else 0
    for r in range(n):
        cells = [columns[i].cells[r] for i in kept]
        cells = [
            wrap_items(text, max(share, columns[i].least)) if columns[i].wrap else text
            for i, text in zip(kept, cells, strict=True)
        ]
        table.add_row(*cells)
    console.print(table)
    if dropped:
        names = ", ".join(columns[i].header.replace("\n", " ") for i in dropped)
        console.print(
            f"  (not shown at {width} characters: {names}; a wider terminal or COLUMNS=200 "
            f"shows the whole {what})",
            highlight=False,
        )
