"""The Python API's entry: `load` a design from a path or from text; `run` it (netgen.analyses)."""
from __future__ import annotations

import os
from collections.abc import Mapping
from pathlib import Path

from netgen.analyses import run as _run  # importing it also lets `Design.run()` work
from netgen.checks.results import Results
from netgen.language import load as _load_path, load_text
from netgen.language.source import decoded
from netgen.language.overrides import from_api
from netgen.model.design import Design
from netgen.model.errors import NetgenError

_LOAD_HINT = 'e.g. netgen.load("cooler.etn"), netgen.load(Path("cooler.etn")) or netgen.load(text)'


def load(path_or_text, overrides: Mapping[str, str | float] | None = None) -> Design:
    """Read a design from a path or from .etn text.

    `path_or_text` is a path (`str` or `os.PathLike`) or the text of a design. A `str` is text when
    it holds a line break, or when it is one line with spaces that is neither a `.etn` name nor an
    existing file or directory (every design has spaces; `"cooler"` is a path). `bytes` are
    decoded as UTF-8 first. `overrides` replace top-level `let` values by name: text as on a
    `let` line (`"1.5 A"`, `"2 * P"`) or a number in SI units of the parameter's dimension
    (`1.5` for a current is 1.5 A, `300` for a temperature is 300 K).

    Every error the arguments can cause is a `NetgenError`."""
    settings = from_api(overrides)
    if isinstance(path_or_text, (bytes, bytearray)):
        path_or_text = _decoded(bytes(path_or_text))
    if isinstance(path_or_text, os.PathLike):
        return _load_path(_checked_path(os.fsdecode(os.fspath(path_or_text))), settings)
    if not isinstance(path_or_text, str):
        raise NetgenError(f"netgen.load: expected a path or the text of a design, not {type(path_or_text).__name__}",
                          None, _LOAD_HINT)
    text = path_or_text
    if not text.strip():
        raise NetgenError("netgen.load: the path or text is empty", None, _LOAD_HINT)
    if "\n" not in text and "\r" not in text:
        if Path(text).suffix == ".etn" or _exists(text) or not any(c.isspace() for c in text):
            return _load_path(_checked_path(text), settings)
    return load_text(text, "<text>", settings)


def run(design: Design, progress=None) -> Results:
    """Solve a design's analyses, then its expectations and audits: `netgen.run(netgen.load(path))`."""
    if not isinstance(design, Design):
        raise NetgenError(f"netgen.run: expected a Design, not {type(design).__name__}", None,
                          'load it first: netgen.run(netgen.load("cooler.etn"))')
    return _run(design, progress)


def _exists(path: str) -> bool:
    try:
        return Path(path).exists()
    except (OSError, ValueError):  # a name too long for the file system, a NUL character: not a file
        return False


def _checked_path(path: str) -> str:
    if "\0" in path:  # the operating system would refuse it with a ValueError, not an OSError
        raise NetgenError(f"cannot read {path!r}: a path cannot hold a NUL character")
    return path


def _decoded(raw: bytes) -> str:
    return decoded(raw, "<bytes>", "the bytes given are not valid UTF-8",
                   "decode them yourself, or save the file as UTF-8")
