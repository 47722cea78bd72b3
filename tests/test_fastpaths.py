"""The fast paths give the general path's results: linear solves against Newton, pinned starts
against bordered ones, grouped materials against module-by-module evaluation, the assembled
Jacobian against finite differences of f, and plain lines against lark's own trees."""
from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from lark import Token, Tree

import netgen
from conftest import jacobian_by_differences
from netgen.solve.steady import solve_dc
from netgen.solve import estimate
from netgen.solve.transient import integrate
from netgen.solve.assembly import System, assemble
from netgen.language.grammar import parser

EXAMPLES = Path(__file__).resolve().parents[1] / "examples"

LINEAR = """
plate sp 3 by 4 capacity 1 J/K conductance 0.7 W/K start 300 K
fixed sp.left 290 K
mass m 2 J/K start 310 K
link l m sp.r2c4 0.4 W/K
heat h sp.r1c2 ramp(0 W, 2 W, 1 s, 4 s)
ground g
source v a g pulse(0 V, 2 V, 0.5 s, 0.1 s, 0.1 s, 2 s, 5 s)
resistor r1 a b 10 ohm
capacitor c1 b g 1 mF start 0.5 V
capacitor c2 b d 2 mF start 0.2 V
resistor r2 d g 20 ohm
inductor l1 b e 50 mH start 10 mA
resistor r3 e g 5 ohm
switch s b g closed 2 s .. 3 s on 50 ohm
transient until 10 s step 0.1 s
"""

MATERIALS = """
material warm { seebeck 200 uV/K * (1 + 0.002 * (T - 300 K) / 1 K)
                resistivity 1e-5 ohm*m * (1 + 0.004 * (T - 300 K) / 1 K)
                conductivity 1.5 W/(m*K) }
material cool { seebeck 180 uV/K  resistivity 1.2e-5 ohm*m * (1 + 0.003 * (T - 300 K) / 1 K)
                conductivity 1.4 W/(m*K) * (1 - 0.001 * (T - 300 K) / 1 K) }
fixed amb 300 K
mass c1 1 J/K start 300 K
mass c2 1 J/K start 295 K
mass c3 1 J/K start 305 K
ground g
source drive p g 2 A
thermoelectric m1 pins p q sides c1 amb { couples 31 material warm leg 1 mm^2 1.2 mm }
thermoelectric m2 pins q r sides c2 amb { couples 17 material warm leg 1 mm^2 1.0 mm }
thermoelectric m3 pins r g sides amb c3 { couples 23 material cool leg 2 mm^2 1.5 mm }
resistor rh p g 5 ohm heats c1 tempco 0.004 1/K at c2 ref 300 K
thermoelectric m4 pins p g sides c3 c2 { seebeck 40 mV/K resistance 1.2 ohm conductance 0.4 W/K }
transient until 5 s step 0.1 s
"""


class _General(System):
    """The same System, taken through the general (Newton) path."""

    @property
    def linear(self) -> bool:
        return False


@pytest.mark.parametrize("h", [1e-3, 0.1, 2.0])
def test_linear_stage_equals_its_newton_solve(h):
    """Each TR-BDF2 stage of a linear network is one back-substitution; through Newton (the
    general path) the same stage gives the same state to 1e-9."""
    from netgen.solve import transient as tr

    sys = assemble(netgen.load(LINEAR))
    x0 = solve_dc(sys, 0.0, impose=True)
    rng = np.random.default_rng(7)
    weights = 1e-3 + 1e-4 * np.abs(x0)
    for t, state in ((0.3, sys.switch_state(0.3)), (2.5, sys.switch_state(2.5))):
        rhs = sys.C @ (x0 + rng.normal(0, 1, sys.n)) + rng.normal(0, 1e-3, sys.n)
        y_fast, ok1 = tr._stage(sys, tr._Factors(sys), h, state, rhs, t, x0, False, weights, {"newton": 0})
        general = assemble(netgen.load(LINEAR))
        general.__class__ = _General
        y_gen, ok2 = tr._stage(general, tr._Factors(general), h, state, rhs, t, x0, False, weights, {"newton": 0})
        assert ok1 and ok2
        assert np.max(np.abs(y_fast - y_gen) / (1.0 + np.abs(y_fast))) < 1e-9


def test_linear_network_gives_the_same_transient_through_newton(monkeypatch):
    # Both paths with the filtered error estimate (the linear one otherwise tries the unfiltered
    # one first, solve/estimate.py, and so takes other steps): what is compared here is the solves.
    monkeypatch.setattr(estimate, "unfiltered", lambda h, xd0, x, y1, xd: np.full_like(x, np.inf))
    sys = assemble(netgen.load(LINEAR))
    x0 = solve_dc(sys, 0.0, impose=True)
    fast = integrate(sys, x0, 10.0, 0.1)
    sys.__class__ = _General
    general = integrate(sys, x0, 10.0, 0.1)
    assert general.newton > 0 and fast.newton == 0
    assert (fast.steps, fast.rejected) == (general.steps, general.rejected)
    # Round-off in the error estimates moves the step times apart by parts in 1e12, so over the
    # whole run the end states agree to 1e-7, far inside the tolerances (the stages, to 1e-9).
    np.testing.assert_allclose(fast.x[-1], general.x[-1], rtol=1e-7, atol=1e-9)


@pytest.mark.parametrize("text", [LINEAR, MATERIALS], ids=["linear", "nonlinear"])
def test_pinned_start_values_agree_with_bordered_ones(text):
    sys = assemble(netgen.load(text))
    pinned = solve_dc(sys, 0.0, impose=True)
    bordered = solve_dc(sys, 0.0, impose=True, pin=False)
    np.testing.assert_allclose(pinned, bordered, rtol=1e-9, atol=1e-9)


def _material_modules(d, sys):
    """(module, a, b, k) of every module whose S, R, K are a material's expressions of T."""
    return [(e, sys.node_index[e.a], sys.node_index[e.b], sys.branch_index[e.name])
            for e in d.elements if getattr(e, "props", None) is not None]


def _f_by_module(d, sys, x):
    """f of the temperature-dependent modules, one module at a time (LANGUAGE.md's equations)."""
    out = np.zeros(sys.n + 1)
    xe = np.append(x, 0.0)
    for e, a, b, k in _material_modules(d, sys):
        Ta, Tb, I = xe[a], xe[b], xe[k]
        S, R, K = e.values_at(0.5 * (Ta + Tb))
        out[k] += -I * R - S * (Tb - Ta)
        out[a] += S * Ta * I - 0.5 * I * I * R + K * (Ta - Tb)
        out[b] -= S * Tb * I + 0.5 * I * I * R + K * (Ta - Tb)
    return out[: sys.n]


def test_grouped_materials_match_module_by_module_evaluation():
    d = netgen.load(MATERIALS)
    sys = assemble(d)
    # m1 and m2 share `warm`, m3 is `cool`: two blocks of material modules, compiled once each.
    material_blocks = [b for b in sys.blocks if "fS" in b.params]
    assert len(_material_modules(d, sys)) == 3 and [b.size for b in material_blocks] == [2, 1]
    rng = np.random.default_rng(1)
    x = solve_dc(sys, 0.0, impose=True) + rng.normal(0, 0.5, sys.n)
    xe = np.append(x, 0.0)
    only_materials = sum(np.bincount(b.f_rows, b.evaluate(xe, False)[0], minlength=sys.n + 1)[: sys.n]
                         for b in material_blocks)
    np.testing.assert_allclose(only_materials, _f_by_module(d, sys, x), rtol=1e-12, atol=1e-12)


def test_assembled_jacobian_matches_finite_differences():
    sys = assemble(netgen.load(MATERIALS))
    x = solve_dc(sys, 0.0, impose=True)
    state = sys.switch_state(0.0)
    J = sys.J(x, state).toarray()
    np.testing.assert_allclose(J, jacobian_by_differences(sys, x, state), rtol=1e-5, atol=1e-6)
    M = sys.matrix(1.0, 0.3, x, state).toarray()
    np.testing.assert_allclose(M, sys.C.toarray() + 0.3 * J, rtol=1e-12, atol=1e-12)


# ---- plain lines read without lark give lark's trees --------------------------------------
def _dump(t):
    if isinstance(t, Tree):
        m = t.meta
        pos = None if m.empty else (m.line, m.column, m.end_line, m.end_column, m.start_pos, m.end_pos)
        return (str(t.data), pos, [_dump(c) for c in t.children])
    if isinstance(t, Token):
        return (t.type, str(t), t.line, t.column, t.end_line, t.end_column, t.start_pos, t.end_pos)
    return t


CORPUS = """
mass  x 1 J/K   start  25 degC # comment
\tlink l a b g_link
link start a b 2W/K\r
mass m 1.5e-3 kJ/K start T0
ground g
resistor r a b 1 ohm
resistor r2 a b 1 ohm heats x
capacitor c a b 1 uF start 0 V
capacitor c2 a b 4.7uF
inductor l1 a b 2 mH start 1 mA
heat h sp.r1c1 -1 W
heat h2 sp.r1c1 2 W
fixed f 1e-3 K
fixed room 25 degC
link k a b 2 W/K * 3
link k2 a b 0.5 K/W
mass y 2 J/K {
    start 300 K
}
part p(a) {
    mass z 1 J/K
}
link k3 a b (2 W/K)
link kk a b 2 W/Kx
mass q 2 Wx
"""


@pytest.mark.parametrize("name", ["corpus"] + sorted(p.name for p in EXAMPLES.glob("*.etn")))
def test_plain_lines_give_larks_trees(name):
    text = CORPUS if name == "corpus" else (EXAMPLES / name).read_text()
    p = parser()
    try:
        want = p.lark.parse(text, start="start")
    except Exception as e:  # the corpus ends in bad lines: both readers must fail alike
        with pytest.raises(type(e)) as info:
            p.parse(text)
        assert (info.value.line, info.value.column) == (e.line, e.column)
        text = text[: text.index("link kk")]
        want = p.lark.parse(text, start="start")
    got = p.parse(text)
    assert [_dump(c) for c in got.children] == [_dump(c) for c in want.children]


@pytest.mark.parametrize("text", [
    "mass a 1 J/K\nmass b 1 J/K start\nlink l a b 1 W/K\n",
    "mass a 1 J/K\nlink l a b 1 W/K\nthermoelectric t pins p n sides a b {\n seebeck 1 V/K\n",
    "mass a 1 J/K\nlink l a b 1 W/K\n}\nmass c 1 J/K\n",
    "mass a 1 J/K\nlink l a b 1 W/K frob\n",
    "mass a 1 J/K\ndesign \"x # {\"\nlink l a b 1 W/K\nmass b 1 J/Q\n",
], ids=["incomplete", "open-brace", "stray-brace", "trailing-word", "brace-in-string"])
def test_syntax_errors_are_where_lark_puts_them(text):
    p = parser()
    try:
        p.lark.parse(text, start="start")
        expected = None
    except Exception as e:
        expected = (type(e), e.line, e.column)
    try:
        p.parse(text)
        got = None
    except Exception as e:
        got = (type(e), e.line, e.column)
    assert got == expected


def test_linear_network_costs_two_back_substitutions_a_step():
    """Issue 15, item 1: a linear network's TR-BDF2 step is two back-substitutions (trapezoidal
    stage, BDF2 stage), the unfiltered error estimate taking none (Hosea & Shampine 1996's
    estimate; solve/estimate.py). A step that falls back on the filtered estimate, and each
    restart at a source corner or switch time, cost one more. The run's statistics say so, and
    name the linear solver."""
    from netgen.solve.factor import DESCRIPTION

    plate = ("plate sp 20 by 20 capacity 0.5 J/K conductance 2 W/K start 25 degC\n"
             "fixed sp.left 25 degC\nheat q sp.r10c10 2 W\ntransient until 200 s step 1 s\n")
    st = netgen.run(netgen.load(plate)).stats
    tried = st["steps"] + st["rejected"]
    assert st["linear_solver"] == DESCRIPTION
    assert 2 * tried <= st["solves"] <= 2 * tried + 4, st  # before: three a step
    # Corners, switches and rejected steps: still well under three a step.
    st = netgen.run(netgen.load(LINEAR)).stats
    assert st["solves"] < 2.25 * (st["steps"] + st["rejected"]), st
