"""netgen: coupled heat-and-electricity networks from .etn text: solve them, export SPICE netlists."""
from __future__ import annotations

from pathlib import Path

__version__ = "0.1.0"

from netgen.model.design import Design
from netgen.model.errors import NetgenError
from netgen.checks.results import Results
from netgen.analyses import run

Design.runner = staticmethod(run)


def load(path_or_text, overrides: dict[str, str] | None = None) -> Design:
    """Read a design from a path or from .etn text (anything containing a newline is text)."""
    from netgen.language import load as _load, load_text

    text = str(path_or_text)
    if isinstance(path_or_text, Path) or ("\n" not in text and (Path(text).suffix == ".etn" or Path(text).is_file())):
        return _load(path_or_text, overrides)
    return load_text(str(path_or_text), "<text>", overrides)


__all__ = ["load", "run", "Design", "Results", "NetgenError", "__version__"]
