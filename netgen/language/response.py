"""The `response SIGNAL to INPUT [from F1 to F2] [points N]` statement: read, and checked once
the whole file is read (the input may be declared further down)."""
from __future__ import annotations

import difflib

from netgen.model import units as U
from netgen.model.design import Response, Signal
from netgen.model.errors import NetgenError

INPUT_KINDS = ("CurrentSource", "VoltageSource", "Heat", "Fixed")
MAX_POINTS = 10000


def read(r, t) -> None:
    sig, name_tok, f1_t, f2_t, n_t = t.children
    kind = str(sig.children[0])
    names = tuple(str(c) for c in sig.children[1:] if c is not None)
    if kind not in ("T", "V", "I", "Q", "P", "U"):
        raise r.err(sig, f"unknown signal `{kind}(...)`", "signals are T(node) V(node) I(elem) Q(elem) P(elem) U(controller) S(total) E(total)")
    r.pending_signals.append((kind, names, sig))
    f1 = f2 = points = None
    if f1_t is not None:
        f1 = r.const(f1_t, U.FREQUENCY, "a frequency", positive=True)
        f2 = r.const(f2_t, U.FREQUENCY, "a frequency", positive=True)
        if f2 <= f1:
            raise r.err(f2_t, f"the band {f1:g} Hz .. {f2:g} Hz is empty or reversed", "write the lower frequency first")
    if n_t is not None:
        n = r.const(n_t, U.NONE, "a number of points")
        if n != int(n) or not 2 <= n <= MAX_POINTS:
            raise r.err(n_t, f"the number of points must be a whole number from 2 to {MAX_POINTS:,}, not {n:g}")
        points = int(n)
    r.design.analyses.append(Response(Signal(kind, names, r.loc(sig)), str(name_tok), r.loc(t), r.loc(name_tok),
                                      f1, f2, points))


def check(d) -> list[NetgenError]:
    """Each response's input is a source, a heat input or a reservoir of the design."""
    errors = []
    elements = {e.name: e for e in d.elements}
    for a in d.analyses:
        if not isinstance(a, Response):
            continue
        e = elements.get(a.input)
        if e is None:
            close = difflib.get_close_matches(a.input, [n for n, x in elements.items()
                                                        if type(x).__name__ in INPUT_KINDS], n=1)
            errors.append(NetgenError(f"unknown input `{a.input}`", a.input_loc,
                                      f"did you mean `{close[0]}`?" if close else
                                      "a response is taken from a `source`, a `heat` input or a `fixed` node"))
        elif type(e).__name__ not in INPUT_KINDS:
            errors.append(NetgenError(f"`{a.input}` is {type(e).noun[:-1]}, not an input", a.input_loc,
                                      "a response is taken from a `source`, a `heat` input or a `fixed` node"))
    return errors
