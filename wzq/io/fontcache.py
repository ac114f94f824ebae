"""TrueType fonts for the PDF report, parsed once and then loaded from a cache file.

reportlab reads a TrueType file in pure Python (its tables, character map and
glyph widths) each time a process registers it: some 30-60 ms a face, 0.1-0.25 s
for the report's four DejaVu Sans faces, paid by every ``wzq report``. The parsed
fonts are kept, pickled, in the user's own cache folder (:func:`cache_dir`, as
matplotlib keeps its font list there), under a name made from reportlab's and
Python's versions and each font file's path, size and modification time; any
change of those makes a new file. A later process loads them in a few
milliseconds. The cache is only a shortcut: a file that cannot be read, written
or trusted to hold these fonts is ignored and the fonts are parsed as before.
"""

from __future__ import annotations

import contextlib
import gc
import hashlib
import json
import os
import pickle
import sys
import tempfile
from collections.abc import Sequence
from pathlib import Path
from typing import Any
from weakref import WeakKeyDictionary

import reportlab
from reportlab.pdfbase.ttfonts import TTFont

__all__ = ["cache_dir", "load_ttfonts"]


def cache_dir() -> Path:
    """The folder for wzq's caches: ``WZQ_CACHE_DIR`` if set, else the platform's user
    cache folder (``%LOCALAPPDATA%``, ``~/Library/Caches``, ``$XDG_CACHE_HOME`` or
    ``~/.cache``) with ``wzq`` under it."""
    own = os.environ.get("WZQ_CACHE_DIR")
    if own:
        return Path(own)
    if sys.platform == "win32" and os.environ.get("LOCALAPPDATA"):
        return Path(os.environ["LOCALAPPDATA"]) / "wzq" / "cache"
    if sys.platform == "darwin":
        return Path.home() / "Library" / "Caches" / "wzq"
    return Path(os.environ.get("XDG_CACHE_HOME") or Path.home() / ".cache") / "wzq"


class _Scale:
    """reportlab's font-unit to PDF-unit scale (a lambda there, which cannot be pickled);
    the same arithmetic: ``x`` when the font has 1000 units per em, else ``x * 1000 / u``."""

    def __init__(self, units_per_em: int) -> None:
        self.units_per_em = units_per_em
        self.factor = 1000 / units_per_em

    def __call__(self, x: float) -> float:
        return x if self.units_per_em == 1000 else x * self.factor


class _Pickler(pickle.Pickler):
    """Pickles a fresh :class:`TTFont`: its per-document state (empty) as a new one."""

    def reducer_override(self, obj: Any) -> Any:
        if isinstance(obj, WeakKeyDictionary):
            if len(obj):
                raise pickle.PicklingError("a font already used in a document")
            return WeakKeyDictionary, ()
        return NotImplemented


def _key(faces: Sequence[tuple[str, Path]]) -> str:
    files = []
    for name, path in faces:
        st = path.stat()
        files.append([name, str(path.resolve()), st.st_size, st.st_mtime_ns])
    text = json.dumps([reportlab.Version, sys.version, files])
    return hashlib.sha256(text.encode("utf-8")).hexdigest()[:24]


def _parsed(faces: Sequence[tuple[str, Path]]) -> list[TTFont]:
    return [TTFont(name, str(path)) for name, path in faces]


def _load(file: Path, faces: Sequence[tuple[str, Path]]) -> list[TTFont] | None:
    collecting = gc.isenabled()
    gc.disable()  # some 100,000 small objects, none of them cyclic garbage: a third faster
    try:
        fonts = pickle.loads(file.read_bytes())
    except Exception:  # a damaged or foreign file: parse again
        return None
    finally:
        if collecting:
            gc.enable()
    if (
        not isinstance(fonts, list)
        or len(fonts) != len(faces)
        or not all(isinstance(f, TTFont) for f in fonts)
        or [f.fontName for f in fonts] != [name for name, _ in faces]
    ):
        return None
    return fonts


def _store(file: Path, fonts: list[TTFont]) -> None:
    for font in fonts:
        if not isinstance(font.face._pdfScale, _Scale):
            font.face._pdfScale = _Scale(font.face.unitsPerEm)
    tmp: Path | None = None
    try:
        file.parent.mkdir(parents=True, exist_ok=True)
        with tempfile.NamedTemporaryFile(dir=file.parent, delete=False, suffix=".tmp") as f:
            tmp = Path(f.name)
            _Pickler(f, protocol=pickle.HIGHEST_PROTOCOL).dump(fonts)
        os.replace(tmp, file)  # whole or not at all, even with processes side by side
    except (OSError, pickle.PicklingError, AttributeError, TypeError):
        if tmp is not None:
            with contextlib.suppress(OSError):
                tmp.unlink()


def load_ttfonts(faces: Sequence[tuple[str, str | Path]]) -> list[TTFont]:
    """reportlab fonts for ``faces`` (name, TrueType file), from the cache when it holds
    them, else parsed and then kept there; unregistered (register them with
    :func:`reportlab.pdfbase.pdfmetrics.registerFont`)."""
    faces = [(name, Path(path)) for name, path in faces]
    try:
        file = cache_dir() / f"fonts-{_key(faces)}.pickle"
    except OSError:
        return _parsed(faces)
    fonts = _load(file, faces) if file.is_file() else None
    if fonts is None:
        fonts = _parsed(faces)
        _store(file, fonts)
    return fonts
