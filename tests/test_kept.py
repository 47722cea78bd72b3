"""A long transient keeps only the unknowns its reports read (netgen/solve/kept.py).

The check is against the run that keeps every unknown (what every run did before, and still
does below `kept.BUDGET`): with the budget forced to 0 the economical path must give exactly the
same numbers, bit for bit, since it stores the same floats and only fewer of them. The
closed-form physics of these elements is tested elsewhere (test_physics.py, test_switch*.py).
"""
from __future__ import annotations

import numpy as np
import pytest

import netgen
from netgen.checks.merit import figures, module_signals
from netgen.solve import kept
from netgen.solve.assembly import assemble
from netgen.solve.signals import SignalEval
from netgen.solve.steady import solve_dc
from netgen.solve.transient import integrate

# A chain of masses under a thermostat, a cooler module, a humidity caution over every node:
# records, expectations (max, mean, at, time of, window), a switch acting on a condition.
DESIGN = """
fixed bath 5 degC
mass m1 20 J/K start 4 degC
mass m2 5 J/K start 4 degC
mass m3 5 J/K start 4 degC
mass m4 5 J/K start 4 degC
mass sink 40 J/K start 5 degC
link w1 m1 bath 0.5 W/K
link w2 m1 m2 2 W/K
link w3 m2 m3 2 W/K
link w4 m3 m4 2 W/K
link fins sink bath 3 W/K
ground g
source supply v g 10 V
switch stat v h closes when T(m1) < 3 degC  opens when T(m1) > 5 degC
resistor heater h g 20 ohm heats m1
source drive p g 0.8 A
thermoelectric tec pins p g sides m4 sink {
    seebeck 50 mV/K  resistance 2 ohm
    conductance 0.5 W/K
}
humidity 60 % at 20 degC
transient until 600 s
record T(m1) I(stat) Q(w2)
expect max T(m1) < 8 degC
expect mean Q(w2) > -10 W
expect T(m2) at 300 s < 10 degC
expect time of min T(m4) > 0 s
expect window T(m1) < 4 degC lasts > 1 s
"""


def _snapshot(res):
    return repr((res.steady, res.time.tolist(), {k: np.asarray(v).tolist() for k, v in res.waveforms.items()},
                 [(c.text, c.measured, c.limit, c.passed, c.detail) for c in res.checks], res.cautions,
                 res.figures, res.windows, res.events, res.stats))


@pytest.fixture
def cuts(monkeypatch):
    """Counts the times a run's states were cut down to their needed columns, and how many columns."""
    seen = []
    cut = kept.States._cut

    def spy(self):
        cut(self)
        seen.append((len(self.cols), self.n))
    monkeypatch.setattr(kept.States, "_cut", spy)
    return seen


@pytest.mark.parametrize("more", ["", "record S(total) E(total)\n"])
def test_economical_path_gives_the_same_results(monkeypatch, cuts, more):
    full = netgen.load(DESIGN + more).run()
    assert not cuts  # a small design keeps everything
    assert full.events and full.windows and full.cautions and full.figures  # every consumer is exercised
    monkeypatch.setattr(kept, "BUDGET", 0)
    lean = netgen.load(DESIGN + more).run()
    assert len(cuts) == 1
    if not more:  # m3 is read by nothing but the dew-point caution, which reads its extremes
        assert cuts[0][0] < cuts[0][1] - 1
    assert _snapshot(lean) == _snapshot(full)


def test_an_audit_keeps_everything(monkeypatch, cuts):
    text = DESIGN + "audit energy\n"
    full = netgen.load(text).run()
    monkeypatch.setattr(kept, "BUDGET", 0)
    lean = netgen.load(text).run()
    assert not cuts  # the audit weighs every mass's heat at every point
    assert _snapshot(lean) == _snapshot(full)


def test_keep_all_keeps_everything(monkeypatch, cuts):
    monkeypatch.setattr(kept, "BUDGET", 0)
    full = netgen.run(netgen.load(DESIGN), keep_all=True)
    assert not cuts
    assert _snapshot(full) == _snapshot(netgen.load(DESIGN).run())


def test_a_signal_of_an_unkept_unknown_says_how_to_keep_it(monkeypatch):
    monkeypatch.setattr(kept, "BUDGET", 0)
    d = netgen.load(DESIGN)
    sys = assemble(d)
    sig = SignalEval(d, sys)
    x0 = solve_dc(sys, 0.0, impose=True)
    cols = np.array(sorted(kept.traced(sig, ["T(m1)"], x0)))
    wf = integrate(sys, x0, 10.0, keep=cols)
    assert isinstance(wf.x, kept.Kept)
    np.testing.assert_array_equal(sig("T(m1)", wf.x, wf.xdot, wf.time), integrate(sys, x0, 10.0).x[:, cols[0]])
    with pytest.raises(netgen.NetgenError) as err:
        sig("T(m3)", wf.x, wf.xdot, wf.time)
    assert "`T(m3)`" in err.value.message and "record" in err.value.hint and "keep_all=True" in err.value.hint
    # The extremes of every unknown are kept all the same (the dew-point caution reads them).
    full = integrate(sys, x0, 10.0).x
    i = sys.node_index["m3"]
    assert kept.extremes(wf.x, sys, "T(m3)").tolist() == [full[:, i].min(), full[:, i].max()]


def test_module_signals_are_what_figures_read():
    d = netgen.load(DESIGN)
    read = []
    figures(d, lambda text: read.append(text) or 300.0 + len(read))
    assert sorted(set(read)) == sorted(module_signals(d))


def test_nothing_is_cut_when_every_unknown_is_read(monkeypatch, cuts):
    monkeypatch.setattr(kept, "BUDGET", 0)
    text = ("fixed a 300 K\nmass m 2 J/K start 310 K\nmass n 2 J/K start 310 K\nlink l m a 0.5 W/K\n"
            "link k n m 1 W/K\ntransient until 4 s\n")
    netgen.load(text + "record T(m) T(n) T(a) Q(a)\n").run()
    assert not cuts
    netgen.load(text + "record T(m)\n").run()
    assert cuts == [(1, 4)]
