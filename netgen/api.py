"""The Python API's entry: `load` a design from a path or from text; `run` it (netgen.analyses)."""
from __future__ import annotations

from pathlib import Path

from netgen.analyses import run  # noqa: F401 - part of the API; importing it lets `Design.run()` work
from netgen.language import load as _load_path, load_text
from netgen.model.design import Design


def load(path_or_text, overrides: dict[str, str] | None = None) -> Design:
    """Read a design from a path or from .etn text (anything containing a newline is text)."""
    text = str(path_or_text)
    if isinstance(path_or_text, Path) or ("\n" not in text and (Path(text).suffix == ".etn" or Path(text).is_file())):
        return _load_path(path_or_text, overrides)
    return load_text(str(path_or_text), "<text>", overrides)
