"""Loads the lark grammar once (from the installed package or the source tree) and parses text."""
from __future__ import annotations

import functools
from pathlib import Path

from lark import Lark


def grammar_text() -> str:
    try:
        from importlib.resources import files

        return (files("netgen.grammar") / "etn.lark").read_text(encoding="utf-8")
    except (ModuleNotFoundError, FileNotFoundError, OSError):
        here = Path(__file__).resolve().parents[2] / "grammar" / "etn.lark"
        return here.read_text(encoding="utf-8")


@functools.lru_cache(maxsize=1)
def parser() -> Lark:
    return Lark(
        grammar_text(),
        parser="lalr",
        lexer="contextual",
        propagate_positions=True,
        maybe_placeholders=True,
        start=["start", "expr"],
        cache=False,
    )
