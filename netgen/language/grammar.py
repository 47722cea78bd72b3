"""Loads the lark grammar once (from the installed package or the source tree) and parses text."""
from __future__ import annotations

import contextlib
import functools
import gc
from pathlib import Path

from lark import Lark

from netgen.language import tables
from netgen.language.plain_lines import LineReader, check_depth


def grammar_text() -> str:
    try:
        from importlib.resources import files

        return (files("netgen.grammar") / "etn.lark").read_text(encoding="utf-8")
    except (ModuleNotFoundError, FileNotFoundError, OSError):
        here = Path(__file__).resolve().parents[2] / "grammar" / "etn.lark"
        return here.read_text(encoding="utf-8")


@contextlib.contextmanager
def paused_gc():
    """No cyclic garbage collection inside: reading a 30,000-line mesh creates a million objects
    that all live on, and the collector scanning them again and again took twice the reading."""
    was = gc.isenabled()
    gc.disable()
    try:
        yield
    finally:
        if was:
            gc.enable()


class Parser:
    """The LALR parser, with plain one-line statements of `start` text read by `lines.LineReader`."""

    def __init__(self, lark: Lark):
        self.lark = lark
        self.lines = LineReader(lark)

    def parse(self, text: str, start: str = "start"):
        if start == "start":
            return self.lines.parse(text)
        tree = self.lark.parse(text, start=start)
        check_depth(tree)  # as the line reader does for each statement
        return tree

    def __getattr__(self, name):
        return getattr(self.lark, name)


@functools.lru_cache(maxsize=1)
def parser() -> Parser:
    # No cache: lark's cache is a pickle, kept at a predictable name in the shared temporary
    # folder, so whoever wrote that file first ran code in every later netgen process. Building
    # the tables costs about 0.4 s of CPU per command (issue 17), so they are shipped beside the
    # grammar as JSON and used when they were built from this very grammar (language/tables.py).
    text = grammar_text()
    stored = tables.read_stored()
    lark = tables.loads(stored, text) if stored else None
    return Parser(lark or tables.build(text))
