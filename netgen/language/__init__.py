"""Reading .etn text: grammar, syntax tree to Design, diagnostics."""
from netgen.language.elaborate import load, load_text  # noqa: F401
