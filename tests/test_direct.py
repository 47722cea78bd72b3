"""Plain `mass` and `link` lines read straight into the Design (language/direct.py) give the
very Design, and the very errors, that reading them through lark's trees gives. The tree reader
is the reference: each case is read twice, once with the direct reader switched off."""
from __future__ import annotations

from pathlib import Path

import pytest

import netgen
from netgen.language import direct
from netgen.model.errors import NetgenError

EXAMPLES = Path(__file__).resolve().parents[1] / "examples"

CASES = {
    "plain mesh": "fixed sink 25 degC\nmass a 0.5 J/K start 25 degC\nmass b 0.5 J/K\nlink l1 a b 2 W/K\n"
                  "link l2 b sink 0.5 K/W\nlink l3 a sink 4 W/K  # a comment\nheat q a 2 W\n",
    "kelvin start": "fixed s 300 K\nmass a 1 kJ/K start 310 K\nlink l a s 1 W/K\n",
    "parameter value": "let g = 2 W/K\nfixed s 300 K\nmass a 1 J/K\nlink l a s g\n",
    "law of T": "fixed s 300 K\nmass a 1 J/K\nlink l a s 2 W/K * (1 + 0.001 / 1 K * (T - 300 K))\n",
    "wrong unit": "fixed s 300 K\nmass a 1 J/K\nlink l a s 2 J/K\n",
    "zero": "fixed s 300 K\nmass a 0 J/K\nlink l a s 0 W/K\n",
    "negative start": "fixed s 300 K\nmass a 1 J/K start -300 degC\nlink l a s 1 W/K\n",
    "no unit": "fixed s 300 K\nmass a 1\nlink l a s 1\n",
    "bad unit": "fixed s 300 K\nmass a 1 J/Q\nlink l a s 1 W/Q\n",
    "twice": "fixed s 300 K\nmass a 1 J/K\nmass a 2 J/K\nlink l a s 1 W/K\nlink l a s 2 W/K\n",
    "electrical node": "ground g\nresistor r a g 1 ohm\nsource v a g 1 V\nmass a 1 J/K\nlink l a g 1 W/K\n",
    "node then mass": "fixed s 300 K\nlink l a s 1 W/K\nmass a 1 J/K start 20 degC\n",
    "mass start in kelvin of a temperature unit": "fixed s 300 K\nmass a 1 J/K start 1 W\nlink l a s 1 W/K\n",
    "one node at both ends": "fixed s 300 K\nmass a 1 J/K\nlink l a a 1 W/K\nlink m a s 1 W/K\n",
    "new node at both ends": "fixed s 300 K\nlink l b b 1 W/K\nmass a 1 J/K\nlink m a s 1 W/K\n",
    "value texts kept by kind": "fixed s 300 K\nmass a 2 J/K\nmass b 2 W/K\nlink l a b 2 J/K\nlink m a s 2 W/K\n"
                                "mass c 2 J/K start 2 J/K\nlink n c s 2 K/W\nmass d 1 J/K start 300 K\n"
                                "link o d s 300 K\n",
    "indented and tabbed": "fixed s 300 K\n  mass a 1 J/K\nlink\tl a s 1 W/K\n\tlink m a s 2 W/K # note\n",
}


def _read(text: str, monkeypatch, use_direct: bool):
    with monkeypatch.context() as m:
        if not use_direct:
            m.setattr(direct, "read", lambda *a: False)
        try:
            d = netgen.load(text)
        except NetgenError as e:
            return "error", str(e) if not hasattr(e, "errors") else [str(x) for x in e.errors]
    return "design", (d.nodes, d.elements, d.celsius)


@pytest.mark.parametrize("name", list(CASES))
def test_direct_reading_gives_the_tree_readers_design_and_errors(name, monkeypatch):
    text = CASES[name]
    assert _read(text, monkeypatch, True) == _read(text, monkeypatch, False)


@pytest.mark.parametrize("path", sorted(EXAMPLES.rglob("*.etn")), ids=lambda p: p.name)
def test_direct_reading_of_the_examples(path, monkeypatch):
    assert _read(str(path), monkeypatch, True) == _read(str(path), monkeypatch, False)


def test_the_direct_reader_is_used_on_plain_lines(monkeypatch):
    """The test can fail: plain lines do go through it (and return True)."""
    taken = []
    real = direct.read
    monkeypatch.setattr(direct, "read", lambda *a: taken.append(real(*a)) or taken[-1])
    netgen.load(CASES["plain mesh"])
    assert taken.count(True) == 5


def test_plain_lines_read_twice_are_matched_again():
    """A plain line's match is dropped once handed out (so a mesh's matches do not outlive their
    reading); a second pass over the statements matches the lines again instead of losing them."""
    from netgen.language.grammar import parser

    stmts = parser().parse(CASES["plain mesh"]).children
    first = [(i, line, m.group(0)) for i, line, m in stmts.raw() if m is not None]
    second = [(i, line, m.group(0)) for i, line, m in stmts.raw() if m is not None]
    assert len(first) == 7 and first == second  # every line of it is plain
