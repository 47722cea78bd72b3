"""Energy and entropy audits (first and second law, common practice): they pass on the solver's
own results and fail on waveforms doctored to break the law."""
from pathlib import Path

import numpy as np
import pytest

import netgen
from netgen.language import load_text
from netgen.checks.audits import energy_audit, entropy_audit, needed_signals

EXAMPLES = sorted((Path(__file__).resolve().parents[1] / "examples").glob("*.etn"))


@pytest.mark.parametrize("path", EXAMPLES, ids=[p.name for p in EXAMPLES])
def test_audits_pass_on_examples(path):
    # Each mass's own balance is judged too (against the heat through it): the detector's 0.45 J/K
    # die measures 0.146 % at the default solver tolerance (0.035 % at `tolerance 1e-5`).
    text = path.read_text() + "\naudit energy within 0.2 %\naudit entropy\n"
    res = load_text(text, str(path)).run()  # named after the file, so its includes resolve
    audits = [c for c in res.checks if c.text in ("audit energy within 0.2 %", "audit entropy")]
    assert len(audits) >= 2
    for c in audits:
        assert c.passed, (c.text, c.measured, c.detail)


COOLING = """
mass m 4 J/K start 350 K
fixed bath 300 K
heat h m step(0 W, 2 W, 20 s)
link l m bath 0.5 W/K
transient until 60 s step 0.5 s
"""


def _waveforms(text):
    d = netgen.load(text)
    names = needed_signals(d)
    res2 = netgen.load(text + "record " + " ".join(names) + "\n").run()
    right = {s: res2[s] for s in names}
    left = {s: res2[s].copy() for s in names}
    # The heat input's value just before its corner at 20 s is the value before the step.
    k = int(np.searchsorted(res2.time, 20.0))
    left["Q(h)"][k] = 0.0
    return d, res2.time, right, left


def test_energy_audit_balances_and_fails_when_doctored():
    """First law: supplied = stored + dissipated; a heat input reported 5 % too high breaks it."""
    d, t, right, left = _waveforms(COOLING)
    ok = energy_audit(d, t, right, left)
    assert ok.passed and ok.measured < 1e-4
    right["Q(h)"] = right["Q(h)"] * 1.05
    left["Q(h)"] = left["Q(h)"] * 1.05
    bad = energy_audit(d, t, right, left)
    assert not bad.passed and bad.measured > 0.005


def test_entropy_audit_fails_when_heat_flows_into_a_hotter_reservoir():
    """Second law: heat leaving a 350 K mass cannot enter a 400 K reservoir unaided."""
    text = COOLING.replace("heat h m step(0 W, 2 W, 20 s)", "heat h m 0 W")
    d, t, right, left = _waveforms(text)
    assert entropy_audit(d, t, right, left).passed
    right["T(bath)"] = np.full_like(t, 400.0)
    left["T(bath)"] = np.full_like(t, 400.0)
    bad = entropy_audit(d, t, right, left)
    assert not bad.passed
    assert "total production -" in bad.detail and bad.worst_time is not None


def test_audit_without_transient_is_an_input_error():
    with pytest.raises(netgen.NetgenError, match="needs a `transient`") as e:
        netgen.load("mass m 1 J/K\nfixed r 300 K\nlink l m r 1 W/K\nsteady\naudit energy\n")
    assert e.value.loc.line == 5
