"""`--reduce N`: the linear thermal network replaced by a PACT model (Kerns & Yang, IEEE Trans. CAD
16(7), 1997), checked against netgen's full solution and run in the outside simulator (ngspice)."""
from __future__ import annotations

import numpy as np
import pytest

import netgen
from netgen.cli import main
from netgen.solve.assembly import assemble
from netgen.solve.steady import solve_dc
from netgen.spice.crosscheck import crosscheck
from netgen.spice.reduce import check, prepare


def plate(n: int, until: float = 300.0) -> str:
    return (f'design "plate {n} x {n}"\n'
            f"plate sp {n} by {n} capacity 0.5 J/K conductance 2 W/K start 25 degC\n"
            "fixed sp.left 25 degC\n"
            f"heat q sp.r{n // 2}c{n // 2} 2 W\n"
            f"transient until {until:g} s step 1 s\n"
            f"record T(sp.r{n // 2}c{n // 2}) T(sp.r1c{n}) T(sp.r{n}c{n // 2})\n")


@pytest.fixture(scope="module")
def big():
    d = netgen.load(plate(100).encode())
    return d, prepare(d, 40)


def test_reduced_model_is_symmetric_positive_semidefinite(big):
    """PACT's reduced G and C are congruences of the full ones: symmetric PSD (checked by their
    eigenvalues), so the model is stable and passive."""
    _, (_, r, _) = big
    assert r.states <= 40 and len(r.ports) == 4
    g_min, c_min = check(r)
    assert g_min >= -1e-9 and c_min >= -1e-9
    assert np.all(np.diag(r.G)[len(r.ports):] > 0)  # every kept mode decays


def test_reduced_steady_state_is_exact(big):
    """The ports see the exact Schur complement of the conductances, so the reduced steady state
    equals the full one (netgen's sparse solve of the whole plate) to 1e-9 relative."""
    d, (_, r, _) = big
    sys_ = assemble(d)
    full = dict(zip(sys_.names, solve_dc(sys_, 0.0).tolist()))
    m = len(r.ports)
    G = r.G[:m, :m]
    fixed = r.ports.index("sp.left")
    heat = r.ports.index("sp.r50c50")
    b = np.zeros(m)
    b[heat] = 2.0
    free = [i for i in range(m) if i != fixed]
    t_fix = full["T(sp.left)"]
    v = np.linalg.solve(G[np.ix_(free, free)], b[free] - G[np.ix_(free, [fixed])][:, 0] * t_fix)
    for i, k in enumerate(free):
        ours = full[f"T({r.ports[k]})"]
        assert abs(v[i] - ours) <= 1e-9 * abs(ours), r.ports[k]


@pytest.mark.slow
def test_reduced_plate_runs_in_the_simulator_within_a_tenth_of_a_kelvin(big, ngspice):
    """The 100 x 100 plate reduced to 40 states, run by ngspice, against netgen's full solution:
    every recorded temperature within 0.1 K over the whole transient."""
    d, _ = big
    rep = crosscheck(d, ngspice, reduce=40)
    assert rep.passed, rep.table()
    temps = [row for row in rep.transient if row.signal.startswith("T(")]
    assert len(temps) == 4 and max(row.dev for row in temps) < 0.1


def test_export_reduce_header_and_errors(tmp_path, capsys, ngspice):
    f = tmp_path / "plate.etn"
    f.write_text(plate(12, until=20.0))
    out = tmp_path / "plate.cir"
    assert main(["export", str(f), "--reduce", "10", "-o", str(out)]) == 0
    text = out.read_text()
    header = text.replace("\n*   ", " ")
    assert "* Reduced: the linear thermal network" in header and "PACT" in header and "PRIMA" in header
    assert "Worst deviation found against the full model" in header
    assert "t_sp__r2c2" not in text.split("* Signals")[1]  # inner cells are gone
    lib = tmp_path / "plate.lib"
    assert main(["export", str(f), "--reduce", "10", "--subckt", "plate", "--pins", "sp.r12c12", "-o", str(lib)]) == 0
    assert ".subckt plate t_sp__r12c12" in lib.read_text()
    assert main(["export", str(f), "--reduce", "2"]) == 2
    assert "thermal nodes that must stay nodes" in capsys.readouterr().err
