"""The shipped LALR tables (grammar/etn.tables.json, language/tables.py): built from this grammar,
and giving the parser lark builds from the grammar itself."""
from __future__ import annotations

import json
from pathlib import Path

from netgen.language import tables
from netgen.language.grammar import grammar_text, parser

ROOT = Path(__file__).resolve().parents[1]


def test_the_shipped_tables_were_built_from_this_grammar():
    stored = tables.read_stored()
    assert stored is not None, "grammar/etn.tables.json is missing: python -m netgen.language.tables"
    head = json.loads(stored)
    assert {k: head[k] for k in ("grammar_sha256", "lark")} == tables.stamp(grammar_text()), (
        "grammar/etn.tables.json is stale (the grammar or lark changed): run python -m netgen.language.tables")


def test_tables_of_another_grammar_are_not_used():
    text = grammar_text()
    assert tables.loads(tables.read_stored(), text + "\n// changed\n") is None
    assert tables.loads("not json", text) is None


def test_the_loaded_parser_reads_as_the_built_one():
    """The same trees from the tables as from lark's own construction (lark is the reference)."""
    built = tables.build(grammar_text())
    for path in sorted((ROOT / "examples").rglob("*.etn")):
        src = path.read_text()
        assert parser().lark.parse(src, start="start") == built.parse(src, start="start"), path.name
    assert parser().lark.parse("2 W/K * (1 + 3e-3/K * (T(a) - 300 K))", start="expr") == \
        built.parse("2 W/K * (1 + 3e-3/K * (T(a) - 300 K))", start="expr")
