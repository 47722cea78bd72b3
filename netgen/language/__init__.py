"""Reading .etn text: grammar, syntax tree to Design, diagnostics."""
from .elaborate import load, load_text  # noqa: F401
