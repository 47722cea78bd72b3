"""The grammar's LALR tables, built once and shipped beside it as JSON (`grammar/etn.tables.json`).

Building the tables costs about 0.4 s of CPU, which every command paid before it read a line.
The shipped file holds lark's own serialised parser (`Lark.memo_serialize`) as plain JSON, tagged
with the SHA-256 of the grammar text and the lark version it was built from: when either differs
(a changed grammar, another lark) the tables are built afresh, so a stale file costs time and
never a wrong parse. JSON is data only: nothing in the file runs as code (unlike lark's own cache,
a pickle in the shared temporary folder; issue 17). Regenerate after changing the grammar:

    python -m netgen.language.tables
"""
from __future__ import annotations

import hashlib
import json
from pathlib import Path

import lark
from lark import Lark
from lark.lark import Rule, TerminalDef

NAME = "etn.tables.json"
TUPLE, PAIRS = "~t", "~d"  # JSON has no tuples and only text keys: these two tags stand for them


def options() -> dict:
    return dict(parser="lalr", lexer="contextual", propagate_positions=True, maybe_placeholders=True,
                start=["start", "expr"], cache=False)


def stamp(grammar: str) -> dict:
    return {"grammar_sha256": hashlib.sha256(grammar.encode("utf-8")).hexdigest(), "lark": lark.__version__}


def _encode(o):
    if isinstance(o, tuple):
        return {TUPLE: [_encode(x) for x in o]}
    if isinstance(o, list):
        return [_encode(x) for x in o]
    if isinstance(o, dict):
        if all(isinstance(k, str) for k in o) and TUPLE not in o and PAIRS not in o:
            return {k: _encode(v) for k, v in o.items()}
        return {PAIRS: [[_encode(k), _encode(v)] for k, v in o.items()]}
    if o is None or isinstance(o, (str, int, float, bool)):
        return o
    raise TypeError(f"cannot store a {type(o).__name__} in the grammar tables")


def _decode(d: dict):
    if TUPLE in d:
        return tuple(d[TUPLE])
    if PAIRS in d:
        return {k: v for k, v in d[PAIRS]}
    return d


def dumps(parser: Lark, grammar: str) -> str:
    data, memo = parser.memo_serialize([TerminalDef, Rule])
    return json.dumps({**stamp(grammar), "tables": _encode({"data": data, "memo": memo})},
                      separators=(",", ":"), sort_keys=True)


def loads(text: str, grammar: str) -> Lark | None:
    """The parser from stored tables, or None when they were built from another grammar or lark."""
    try:
        stored = json.loads(text, object_hook=_decode)
    except ValueError:
        return None
    if not isinstance(stored, dict) or any(stored.get(k) != v for k, v in stamp(grammar).items()):
        return None
    return Lark.load(stored["tables"])


def build(grammar: str) -> Lark:
    return Lark(grammar, **options())


def read_stored() -> str | None:
    try:
        from importlib.resources import files

        return (files("netgen.grammar") / NAME).read_text(encoding="utf-8")
    except (ModuleNotFoundError, FileNotFoundError, OSError):
        try:
            return (Path(__file__).resolve().parents[2] / "grammar" / NAME).read_text(encoding="utf-8")
        except OSError:
            return None


def write(grammar: str, target: Path) -> None:
    target.write_text(dumps(build(grammar), grammar) + "\n", encoding="utf-8")


if __name__ == "__main__":
    here = Path(__file__).resolve().parents[2] / "grammar"
    out = here / NAME
    write((here / "etn.lark").read_text(encoding="utf-8"), out)
    print(f"wrote {out}")
