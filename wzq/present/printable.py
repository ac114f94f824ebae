"""Text from files made safe to print on a terminal.

File names, sheet names and cell text come from whoever made the file. Printed
raw, control characters in them act on the user's terminal: an escape
sequence (``ESC [ ... ``, ``ESC ] 0; ... BEL``) can retitle the window, clear
the screen or move the cursor over earlier lines, a carriage return can
overwrite a line, and bidirectional-override characters can make text read
differently from what it is (the "Trojan Source" trick, CVE-2021-42574).

:func:`printable` writes every such character as a visible escape (``\\x1b``,
``\\u202e``); :class:`SafeStream` does the same for everything printed through
it, keeping line breaks and tabs, and the ``wzq`` command prints through it.
"""

from __future__ import annotations

import contextlib
import re
import sys
from collections.abc import Iterator
from typing import Any, TextIO

__all__ = [
    "SafeStream",
    "printable",
    "safe_streams",
    "unwrapped",
]

#: C0 and C1 control characters, DEL, the line and paragraph separators and the
#: bidirectional formatting characters (Unicode Standard Annex #9, section 2).
_OTHER = r"\x7f-\x9f\u061c\u200e\u200f\u2028\u2029\u202a-\u202e\u2066-\u2069"
_UNSAFE_RE = re.compile(r"[\x00-\x1f" + _OTHER + "]")
_UNSAFE_IN_LINES_RE = re.compile(r"[\x00-\x08\x0b-\x1f" + _OTHER + "]")  # keeps \t and \n


def _escape(m: re.Match) -> str:
    code = ord(m.group(0))
    return f"\\x{code:02x}" if code < 0x100 else f"\\u{code:04x}"


def printable(text: Any, *, lines: bool = False) -> str:
    """``text`` with every control character written as a visible escape.

    With ``lines`` true, line breaks (``\\n``) and tabs are kept, for text of
    several lines; otherwise they are escaped too, so that one value stays on
    one line.
    """
    text = str(text)
    return (_UNSAFE_IN_LINES_RE if lines else _UNSAFE_RE).sub(_escape, text)


class SafeStream:
    """A text stream that prints everything through :func:`printable` (lines kept)."""

    def __init__(self, stream: TextIO) -> None:
        self.raw = stream

    def write(self, text: str) -> int:
        self.raw.write(printable(text, lines=True))
        return len(text)

    def writelines(self, lines: Any) -> None:
        for line in lines:
            self.write(line)

    def __getattr__(self, name: str) -> Any:  # flush, isatty, fileno, encoding, ...
        return getattr(self.raw, name)


def unwrapped(stream: Any) -> Any:
    """The stream under a :class:`SafeStream` (for a progress bar that writes its own codes)."""
    return stream.raw if isinstance(stream, SafeStream) else stream


@contextlib.contextmanager
def safe_streams() -> Iterator[None]:
    """Print through :class:`SafeStream` on standard output and standard error meanwhile."""
    out, err = sys.stdout, sys.stderr
    sys.stdout, sys.stderr = SafeStream(out), SafeStream(err)  # type: ignore[assignment]
    try:
        yield
    finally:
        sys.stdout, sys.stderr = out, err
