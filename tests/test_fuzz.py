"""A fuzzer over the examples: mutated descriptions give a result or a clean located error, never
a traceback or a hang, and each is read or refused within a few seconds. Mutations include line
breaks that only some readers see (U+2028, a lone CR, ...) and expressions nested far too deep
(issue 17). Seed-pinned; `NETGEN_FUZZ_EXAMPLES=5000 python -m pytest tests/test_fuzz.py` runs a
longer search locally."""
import math
import os
import time
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import netgen.analyses  # noqa: F401 - hands Design.run() its runner when this file runs alone
from netgen.model.errors import NetgenError
from netgen.language import load_text

ROOT = Path(__file__).resolve().parents[1]
EXAMPLES = sorted((ROOT / "examples").glob("*.etn"))
TEXTS = {p.name: p.read_text() for p in EXAMPLES}
UNITS = ["K", "degC", "W", "J/K", "W/K", "K/W", "V", "A", "ohm", "mohm", "H", "F", "uF", "s", "ms", "Hz",
         "V/K", "1/K", "%", "mm^2", "W/(m*K)", "kW", "Gohm", "mK", "xyz", "J/Kg"]
NUMBERS = ["0", "-1", "1e300", "1e-300", "3.5", "-0", "1e999", "100000", "2"]
RUN_LIMIT = 20  # transient steps the fuzzer lets a mutated design take: it checks robustness, not physics
READ_LIMIT = 5.0  # seconds of CPU in which any mutated text is read or refused
# Every character str.splitlines() breaks at besides "\n" (the grammar breaks only there).
ODD_BREAKS = ["\r", "\x0b", "\x0c", "\x1c", "\x1d", "\x1e", "\x85", "\u2028", "\u2029"]
DEPTHS = [3, 99, 150, 1000]


def nested(word: str, how: int, k: int) -> str:
    """`word` wrapped `k` levels deep: minus signs, calls, a long sum, a chain of powers."""
    if how == 0:
        return "-" * k + word
    if how == 1:
        return "abs(" * k + word + ")" * k
    if how == 2:
        return " + ".join([word] * k)
    return "^".join([word] * k)


def mutate(text: str, ops: list[tuple[int, int, int]]) -> str:
    lines = text.splitlines()
    for op, i, j in ops:
        if not lines:
            break
        li = i % len(lines)
        words = lines[li].split(" ")
        wi = j % max(1, len(words))
        if op == 0:  # delete a word
            del words[wi]
        elif op == 1:  # duplicate a word
            words.insert(wi, words[wi] if words else "")
        elif op == 2 and len(words) > 1:  # swap neighbouring words
            k = (wi + 1) % len(words)
            words[wi], words[k] = words[k], words[wi]
        elif op == 3:  # delete the line
            del lines[li]
            continue
        elif op == 4:  # duplicate the line
            lines.insert(li, lines[li])
            continue
        elif op == 5:  # swap two lines
            k = j % len(lines)
            lines[li], lines[k] = lines[k], lines[li]
            continue
        elif op == 6:  # change a unit
            words[wi] = UNITS[(i + j) % len(UNITS)]
        elif op == 7:  # change a number
            words[wi] = NUMBERS[(i * 7 + j) % len(NUMBERS)]
        elif op == 8:  # drop one character
            w = words[wi]
            if w:
                words[wi] = w[: j % len(w)] + w[j % len(w) + 1:]
        elif op == 9:  # put in an odd line break (in a comment, a title or the code, as it falls)
            line = lines[li]
            at = j % (len(line) + 1)
            lines[li] = line[:at] + ODD_BREAKS[(i + j) % len(ODD_BREAKS)] + line[at:]
            continue
        elif op == 10:  # nest a word far too deep (or not quite)
            if words[wi]:
                words[wi] = nested(words[wi], j % 4, DEPTHS[i % len(DEPTHS)])
        lines[li] = " ".join(words)
    return "\n".join(lines) + "\n"


def run_small(design) -> None:
    """Solve, with the transient shortened so each case stays cheap."""
    tr = design.transient
    if tr is not None:
        step = tr.step or tr.until / 200
        tr.until = min(tr.until, RUN_LIMIT * step)
        tr.step = min(step, tr.until)
    design.run()


@pytest.mark.slow
@settings(max_examples=int(os.environ.get("NETGEN_FUZZ_EXAMPLES", "250")), deadline=None, derandomize=True,
          suppress_health_check=[HealthCheck.too_slow])
@given(name=st.sampled_from(sorted(TEXTS)),
       ops=st.lists(st.tuples(st.integers(0, 10), st.integers(0, 500), st.integers(0, 50)), min_size=1, max_size=4))
def test_mutated_examples_never_crash(name, ops):
    text = mutate(TEXTS[name], ops)
    t0 = time.process_time()
    try:
        design = load_text(text, str(ROOT / "examples" / name))
    except NetgenError as e:
        assert time.process_time() - t0 < READ_LIMIT, f"took {time.process_time() - t0:.1f} s to refuse"
        rendered = e.render()
        assert "error:" in rendered
        if e.loc is not None:
            assert e.loc.line >= 1 and e.loc.col >= 1
        return
    assert time.process_time() - t0 < READ_LIMIT, f"took {time.process_time() - t0:.1f} s to read"
    try:
        run_small(design)
    except NetgenError as e:
        assert "error:" in e.render()


@pytest.mark.slow
@settings(max_examples=int(os.environ.get("NETGEN_FUZZ_EXAMPLES", "40")), deadline=None, derandomize=True,
          suppress_health_check=[HealthCheck.too_slow])
@given(name=st.sampled_from(sorted(TEXTS)),
       where=st.lists(st.tuples(st.integers(0, 500), st.sampled_from(ODD_BREAKS)), min_size=1, max_size=6))
def test_line_breaks_in_comments_change_nothing(name, where):
    """A comment may hold any character, line breaks of other conventions too: the design read
    is the same, and later lines keep their numbers (`# note<U+2028>record T(hot)` once recorded
    T(hot))."""
    lines = TEXTS[name].split("\n")
    for i, ch in where:
        k = i % len(lines)
        lines[k] += f"  # note{ch}record T(nowhere) {ch}}} {{"
    path = str(ROOT / "examples" / name)
    a, b = load_text(TEXTS[name], path), load_text("\n".join(lines), path)
    assert list(a.nodes) == list(b.nodes)
    assert [(e.name, e.loc.line, e.loc.col) for e in a.elements] == [(e.name, e.loc.line, e.loc.col) for e in b.elements]
    assert [r.text for r in a.records] == [r.text for r in b.records]
    code = [(x.text.split("#")[0].strip(), x.loc.line) for x in a.expectations]
    assert code == [(x.text.split("#")[0].strip(), x.loc.line) for x in b.expectations]


def test_mutation_changes_text():
    assert mutate("a b c\n", [(0, 0, 0)]) == "b c\n"
    assert mutate("a b c\nd\n", [(3, 1, 0)]) == "a b c\n"
    # "change a number" puts in a word of NUMBERS, and each of those is a number (inf and -0 too)
    assert mutate("a b c\n", [(7, 0, 1)]) == "a -1 c\n"
    assert all(not math.isnan(float(n)) for n in NUMBERS)
    assert mutate("a b c\n", [(9, 0, 1)]) == "a\x0b b c\n"
    assert mutate("a b c\n", [(10, 0, 1)]) == "a abs(abs(abs(b))) c\n"
