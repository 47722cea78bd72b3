"""The `plate` statement: closed forms of heat conduction, the hand-written equivalent, names, errors."""
from __future__ import annotations

import numpy as np
import pytest

import netgen
from netgen.model import units as U
from netgen.elements import Link

MATERIAL = ("cell 5 mm  thickness 2 mm  density 2700 kg/m^3  specific heat 900 J/(kg*K)  "
            "conductivity 200 W/(m*K)")


def steady(text: str, *extra: str) -> dict:
    """Steady values of every node temperature and of the `extra` signals."""
    d = netgen.load(text)
    signals = " ".join([f"T({n})" for n in d.nodes] + list(extra))
    return netgen.load(f"{text}record {signals}\n").run().steady


# ---- Fourier's law through a plane wall: a linear profile and q = k·A·ΔT/L (Incropera & DeWitt,
# Fundamentals of Heat and Mass Transfer, ch. 3, the plane wall).
@pytest.mark.parametrize("rows", [1, 3], ids=["strip", "plate"])
def test_strip_between_two_reservoirs_is_linear(rows):
    n, t_left, t_right = 8, 350.0, 300.0
    s = steady(f"plate sp {rows} by {n} {MATERIAL}\nfixed sp.left {t_left} K\nfixed sp.right {t_right} K\nsteady\n",
               "Q(sp.left)", "Q(sp.right)")
    for i in range(1, rows + 1):
        for j in range(1, n + 1):
            x = (j - 0.5) / n  # cell centre, as a fraction of the length from the left edge
            assert s[f"T(sp.r{i}c{j})"] == pytest.approx(t_left + (t_right - t_left) * x, abs=1e-9)
    k, area, length = 200.0, 2e-3 * 5e-3 * rows, n * 5e-3
    q = k * area * (t_left - t_right) / length
    assert s["Q(sp.left)"] == pytest.approx(q, rel=1e-9)
    assert s["Q(sp.right)"] == pytest.approx(-q, rel=1e-9)


# ---- Uniform heating with one edge held and the other insulated: the finite-volume balance of
# each cell (Patankar, Numerical Heat Transfer and Fluid Flow, 1980, ch. 4) gives, along a row
# of N cells with conductance g between neighbours and 2g from the first cell to the edge,
#   T_1 = T_0 + N·P/(2g),   T_j = T_{j-1} + (N − j + 1)·P/g:
# everything generated to the right of a face crosses it.
def test_uniformly_heated_plate_with_one_edge_held_matches_the_discrete_closed_form():
    rows, n, p, g, t0 = 2, 6, 0.2, 0.5, 300.0
    lines = [f"plate sp {rows} by {n} capacity 1 J/K conductance {g} W/K by 0.7 W/K", f"fixed sp.left {t0} K"]
    lines += [f"heat h{i}_{j} sp.r{i}c{j} {p} W" for i in range(1, rows + 1) for j in range(1, n + 1)]
    s = steady("\n".join(lines + ["steady"]) + "\n", "Q(sp.left)")
    expected = [t0 + n * p / (2 * g)]
    for j in range(2, n + 1):
        expected.append(expected[-1] + (n - j + 1) * p / g)
    for i in range(1, rows + 1):
        got = [s[f"T(sp.r{i}c{j})"] for j in range(1, n + 1)]
        assert got == pytest.approx(expected, abs=1e-9)
    assert s["Q(sp.left)"] == pytest.approx(-rows * n * p, rel=1e-9)  # the reservoir takes it all


# ---- First law: a closed plate stores exactly the heat put in, Σ C·ΔT = ∫P dt; TR-BDF2 keeps
# this linear invariant to round-off, since every link takes from one cell what it gives another.
def test_closed_plate_keeps_the_heat_put_in():
    text = ("plate sp 4 by 5 capacity 2 J/K conductance 0.5 W/K start 300 K\n"
            "heat h sp.r2c3 step(3 W, 0 W, 5 s)\n"
            "transient until 50 s step 0.5 s\naudit energy within 0.01 %\n")
    res = netgen.load(text).run()
    stored = sum(2.0 * (res.waveforms[f"T(sp.r{i}c{j})"][-1] - 300.0) for i in range(1, 5) for j in range(1, 6))
    assert stored == pytest.approx(3.0 * 5.0, rel=1e-9)
    assert res.passed


def hand_written(rows: int, cols: int, cap: float, g1: float, g2: float) -> str:
    """The plate's expansion written out as plain masses and links, with the plate's names."""
    out = [f"mass sp.r{i}c{j} {cap} J/K start 300 K" for i in range(1, rows + 1) for j in range(1, cols + 1)]
    out += [f"link sp.r{i}c{j}_r{i}c{j + 1} sp.r{i}c{j} sp.r{i}c{j + 1} {g1} W/K"
            for i in range(1, rows + 1) for j in range(1, cols)]
    out += [f"link sp.r{i}c{j}_r{i + 1}c{j} sp.r{i}c{j} sp.r{i + 1}c{j} {g2} W/K"
            for i in range(1, rows) for j in range(1, cols + 1)]
    out += [f"link sp.r{i}c1_left sp.r{i}c1 sp.left {2 * g1} W/K" for i in range(1, rows + 1)]
    out += [f"link sp.r1c{j}_top sp.r1c{j} sp.top {2 * g2} W/K" for j in range(1, cols + 1)]
    return "\n".join(out)


def test_plate_equals_its_hand_written_expansion():
    rest = ("fixed sp.left 290 K\nlink sink sp.top air 1.5 W/K\nfixed air 310 K\n"
            "heat h sp.r2c3 pulse(0 W, 4 W, 1 s, 0.5 s, 0.5 s, 3 s, 10 s)\n"
            "steady\ntransient until 30 s step 0.5 s\n"
            "record T(sp.r2c3) T(sp.r3c4) T(sp.top) Q(sp.r2c1_left) Q(sp.r1c2_r1c3) Q(sp.r2c2_r3c2) Q(sp.left)\n")
    plate = netgen.load("plate sp 3 by 4 capacity 1.5 J/K conductance 0.8 W/K by 0.6 W/K start 300 K\n" + rest)
    by_hand = netgen.load(hand_written(3, 4, 1.5, 0.8, 0.6) + "\n" + rest)
    assert sorted(plate.nodes) == sorted(by_hand.nodes)
    assert sorted(e.name for e in plate.elements) == sorted(e.name for e in by_hand.elements)
    a, b = plate.run(), by_hand.run()
    for s in a.steady:
        assert a.steady[s] == pytest.approx(b.steady[s], rel=1e-12, abs=1e-12)
    assert np.array_equal(a.time, b.time)
    for s in a.waveforms:
        np.testing.assert_allclose(a.waveforms[s], b.waveforms[s], rtol=1e-12, atol=1e-12)


@pytest.mark.parametrize("rows,cols", [(1, 1), (1, 7), (4, 1), (5, 6)], ids=lambda v: str(v))
def test_counts_of_cells_links_and_edges(rows, cols):
    d = netgen.load(f"plate sp {rows} by {cols} capacity 1 J/K conductance 1 W/K\n"
                    "fixed sp.left 300 K\nfixed sp.bottom 310 K\n")
    cells = [n for n in d.nodes.values() if n.name.startswith("sp.r")]
    assert len(cells) == rows * cols and all(n.capacity == 1.0 for n in cells)
    links = [e for e in d.elements if isinstance(e, Link)]
    inner = rows * (cols - 1) + (rows - 1) * cols
    assert len(links) == inner + rows + cols  # plus one per cell on the left and on the bottom edge
    assert {"sp.left", "sp.bottom"} <= set(d.nodes) and "sp.right" not in d.nodes  # unused edges do not exist
    assert sum(1 for e in links if e.b == "sp.left") == rows
    assert sum(1 for e in links if e.b == "sp.bottom") == cols


def test_material_gives_cell_capacity_and_conductances():
    """C = ρ·c·w·h·t per cell; across the w-wide cells in a row k·t·h/w, down a column k·t·w/h."""
    d = netgen.load("plate sp 2 by 2 cell 4 mm by 2 mm thickness 1 mm density 8.9 g/cm^3 "
                    "specific heat 385 J/(kg*K) conductivity 400 W/(m*K)\nfixed sp.right 300 K\n"
                    .replace("8.9 g/cm^3", "8900 kg/m^3"))
    w, h, t, rho, c, k = 4e-3, 2e-3, 1e-3, 8900.0, 385.0, 400.0
    assert d.nodes["sp.r1c1"].capacity == pytest.approx(rho * c * w * h * t)
    g = {e.name: e.conductance for e in d.elements if isinstance(e, Link)}
    assert g["sp.r1c1_r1c2"] == pytest.approx(k * t * h / w)
    assert g["sp.r1c1_r2c1"] == pytest.approx(k * t * w / h)
    assert g["sp.r2c2_right"] == pytest.approx(2 * k * t * h / w)


def test_cells_and_edges_take_modules_heat_and_signals():
    text = """
plate sp 3 by 3 capacity 1 J/K conductance 2 W/K start 25 degC
fixed sp.bottom 25 degC
mass chip 0.5 J/K start 25 degC
ground g
source drive p g 1 A
thermoelectric tec pins p g sides chip sp.r2c2 { seebeck 40 mV/K  resistance 1 ohm  conductance 0.3 W/K }
heat clamp sp.top 0.5 W
transient until 20 s step 1 s
record T(chip) T(sp.r2c2) T(sp.top) Q(sp.r3c2_bottom) Q(sp.r2c2_r2c3) Q(tec.b)
"""
    res = netgen.load(text).run()
    assert set(res.waveforms) >= {"T(chip)", "T(sp.r2c2)", "T(sp.top)", "Q(sp.r3c2_bottom)", "Q(sp.r2c2_r2c3)"}
    assert res.waveforms["T(chip)"][-1] < 298.15 < res.waveforms["T(sp.r2c2)"][-1]  # the module cools the chip


def test_plate_inside_a_part_takes_the_instance_prefix():
    text = """
part spreader(edge) {
    plate p 2 by 3 capacity 1 J/K conductance 1 W/K
    link tie p.left edge 10 W/K
}
fixed sink 300 K
use spreader u(sink)
heat h u.p.r1c3 1 W
steady
record Q(sink) T(u.p.r1c3)
"""
    d = netgen.load(text)
    assert "u.p.r2c3" in d.nodes and "u.p.left" in d.nodes
    assert d.element("u.p.r1c1_left") is not None
    s = d.run().steady
    assert s["Q(sink)"] == pytest.approx(-1.0, rel=1e-9)


def test_gram_is_a_unit_and_g_stays_a_name():
    assert U.parse_unit("kg/m^3")[:2] == (pytest.approx(1.0), U.DENSITY)
    assert U.parse_unit("g")[0] == pytest.approx(1e-3)
    d = netgen.load("ground g\nresistor r a g 1 ohm\nsource s a g 1 V\nsteady\n")
    assert "g" in d.grounds


GOOD = "capacity 1 J/K conductance 1 W/K"


@pytest.mark.parametrize("text,line,col,fragment", [
    (f"plate sp 2.5 by 3 {GOOD}\n", 1, 10, "the number of rows must be a whole number"),
    (f"plate sp 2 by 0 {GOOD}\n", 1, 15, "the number of columns must be positive"),
    (f"plate sp 2 by 3 mm {GOOD}\n", 1, 15, "the number of columns is a plain number, not in m"),
    ("plate sp 2 by 3 capacity 1 J/K\n", 1, 7, "needs `conductance` too"),
    (f"plate sp 2 by 3 {GOOD} density 1 kg/m^3\n", 1, 17, "both by its material (density) and per cell"),
    ("plate sp 2 by 3 cell 1 mm thickness 1 mm density 1 kg/m^3 specific heat 1 J/(kg*K)\n", 1, 7,
     "needs `conductivity`"),
    ("plate sp 2 by 3 cell 1 mm thickness 1 mm density 1 kg/m^2 specific heat 1 J/(kg*K) "
     "conductivity 1 W/(m*K)\n", 1, 50, "a density needs a unit of kg/m^3, not kg/m^2"),
    ("plate sp 2 by 3\n", 1, 7, "needs its material or its per-cell values"),
    (f"plate sp 2 by 3 {GOOD} capacity 2 J/K\n", 1, 50, "`capacity` is given twice"),
    (f"plate sp 2 by 3 {GOOD} start 25\n", 1, 56, "a start temperature needs a unit: K"),
    (f"plate sp 2 by 3 {GOOD}\nfixed sp.lft 300 K\n", 2, 7, "plate `sp` has no cell or edge `lft`"),
    (f"plate sp 2 by 3 {GOOD}\nheat h sp.r3c1 1 W\n", 2, 8, "`r3c1` is outside plate `sp`, which has 2 rows"),
    (f"plate sp 2 by 3 {GOOD}\nground sp.left\n", 2, 8, "is an edge of plate `sp`, a thermal node"),
    (f"plate sp 2 by 3 {GOOD}\nplate sp 1 by 1 {GOOD}\n", 2, 7, "element `sp` is already defined at line 1"),
    (f"mass sp.r1c1 1 J/K\nplate sp 2 by 3 {GOOD}\n", 2, 7, "mass `sp.r1c1` is already defined at line 1"),
    (f"plate sp 2 by 3 {GOOD}\nmass sp.r1c1 1 J/K\n", 2, 6, "mass `sp.r1c1` is already defined at line 1"),
    (f"resistor r sp.r1c1 g 1 ohm\nground g\nplate sp 2 by 3 {GOOD}\n", 3, 7, "is electrical"),
    (f"plate sp 3000 by 3000 {GOOD}\n", 1, 10, "too large"),
], ids=["fractional-rows", "zero-columns", "columns-with-unit", "per-cell-incomplete", "both-forms",
        "material-incomplete", "density-unit", "no-values", "attribute-twice", "start-without-unit",
        "unknown-edge", "cell-outside", "edge-electrical", "plate-twice", "mass-before", "mass-after",
        "cell-electrical", "too-large"])
def test_errors_are_located(text, line, col, fragment):
    with pytest.raises(netgen.NetgenError) as info:
        netgen.load(text + "fixed somewhere 300 K\n")
    shown = info.value.render()
    assert f":{line}:{col}: error:" in shown, shown
    assert fragment in shown, shown


def test_unknown_edge_suggests_the_right_name():
    with pytest.raises(netgen.NetgenError) as info:
        netgen.load(f"plate sp 2 by 3 {GOOD}\nfixed sp.rigth 300 K\n")
    assert "did you mean `sp.right`?" in info.value.render()
