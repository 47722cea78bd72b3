"""The SPICE netlist writer: structure, names, values and signs; and an outside simulator's answers."""
from __future__ import annotations

import math
import os
import re
import subprocess
from pathlib import Path

import numpy as np
import pytest

import netgen
from netgen.solve.steady import solve_dc
from netgen.solve.assembly import assemble
from netgen.cli import main
from netgen.model.expr import evaluate
from netgen.spice import raw
from netgen.spice.netlist import netlist, write_netlist

EXAMPLES = sorted((Path(__file__).resolve().parents[1] / "examples").glob("*.etn"))
NUMBER = re.compile(r"[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?")
STANDARD_OPTIONS = {"reltol", "abstol", "vntol", "chgtol", "method"}

# Every kind of element, with names that collide once SPICE lowercases them or `.` becomes `__`.
ALL_KINDS = """
design "every kind"
mass die 0.45 J/K start 24 degC
mass Die 0.2 J/K
mass stage1.pad 1.5 J/K
mass stage1__pad 2 J/K
fixed room 24 degC
link fins die room 2.2 W/K
link l2 Die room 4 K/W
link l3 stage1.pad room 1 W/K
link l4 stage1__pad room 1 W/K
heat chip die 0.3 W
ground gnd
source vdrive a gnd 5 V
source idrive gnd c 0.25 A
resistor r1 a b 10 ohm
resistor R1 a gnd 1 kohm
resistor rh b c 2 ohm heats die tempco 0.004 1/K at Die ref 300 K
capacitor c1 c gnd 1 uF start 0.5 V
inductor l1 b gnd 1 mH start 0.01 A
switch sw c gnd closed 1 s .. 2 s
thermoelectric tec pins c gnd sides die room {
    seebeck 52 mV/K  resistance 1.8 ohm  conductance 0.6 W/K
}
steady
transient until 10 s step 0.1 s
"""


def parse(text: str) -> tuple[str, list[str], list[list[str]]]:
    """Netlist text → (title, comment lines, cards as token lists); `+` lines joined on."""
    lines = text.splitlines()
    comments, cards = [], []
    for line in lines[1:]:
        if line.startswith("*"):
            comments.append(line)
        elif line.startswith("+"):
            cards[-1] += line[1:].split()
        elif line.strip():
            cards.append(line.split())
    return lines[0], comments, cards


def bvalue(expr: str, values: dict[str, float]) -> float:
    """A B-source expression (SPICE3 syntax: + - * / abs, V(node), I(source)) at the given values,
    read by Python after putting the numbers in: independent of how netgen prints it."""
    body = expr.split("=", 1)[1]
    body = re.sub(r"\b([VI])\(([A-Za-z0-9_]+)\)", lambda m: repr(values[f"{m.group(1)}({m.group(2)})"]), body)
    assert re.fullmatch(r"[-+*/().0-9eE ,abs]*", body), body
    return eval(body, {"abs": abs})  # noqa: S307 - digits, operators and abs only (checked above)


def elements(text: str) -> dict[str, list[str]]:
    return {c[0]: c for c in parse(text)[2] if not c[0].startswith(".")}


def name_table(text: str) -> dict[str, str]:
    """The header's `netlist name: ours` rows."""
    comments = parse(text)[1]
    start = comments.index("* Names (netlist name: ours):")
    rows = {}
    for line in comments[start + 1:]:
        if not line.startswith("*   "):
            break
        spice, ours = line[4:].split(": ", 1)
        rows[spice] = ours
    return rows


def signal_map(text: str) -> dict[str, str]:
    return dict(re.findall(r"^\*   (\S+\(.*?\)) = (\S+)$", text, re.M))


@pytest.fixture(scope="module")
def all_kinds():
    d = netgen.load(ALL_KINDS)
    return d, write_netlist(d)


# ---- structure -----------------------------------------------------------------------------
def test_title_header_and_end(all_kinds):
    _, text = all_kinds
    title, comments, cards = parse(text)
    assert title == "every kind"
    head = " ".join(comments)
    for words in ("temperature = voltage (K)", "heat flow = current (W)", "heat capacity =",
                  "thermal resistance = resistance (K/W)", "absolute zero", "ground"):
        assert words in head
    assert "edge" in head and "switches" in head  # the switch's control edges are not instantaneous
    assert cards[-1] == [".end"]
    assert not any(c[0].lower() in (".control", ".endc") for c in cards)


def test_element_lines(all_kinds):
    d, text = all_kinds
    el = elements(text)
    assert el["cmass_die"][1:4] == ["t_die", "0", "0.45"]
    assert el["rlink_fins"][1:4] == ["t_die", "t_room", repr(1 / 2.2)]
    assert el["rlink_l2"][1:4] == ["t_die_2", "t_room", "4.0"]
    assert el["vfix_room"][1:] == ["t_room", "0", "DC", "297.15"]
    assert el["iheat_chip"][1:] == ["0", "t_die", "DC", "0.3"]  # into the node: from 0 through the source
    assert el["v_vdrive"][1:] == ["e_a", "0", "DC", "5.0"]  # V(a) - V(gnd) = 5
    assert el["i_idrive"][1:] == ["e_c", "0", "DC", "0.25"]  # ours leaves at gnd: I b a
    assert el["r_r1"][1:] == ["e_a", "e_b", "10.0"]
    assert el["r_r1_2"][1:] == ["e_a", "0", "1000.0"]  # R1 collides with r1 in SPICE
    assert el["c_c1"][1:4] == ["e_c", "0", "1e-06"]
    assert el["l_l1"][1:4] == ["e_b", "0", "0.001"]
    assert el["bres_rh"][1:3] == ["e_b", "e_c"] and el["bjoule_rh"][1:3] == ["0", "t_die"]
    # R = R0·(1 + alpha·(T − ref)) (LANGUAGE.md, tempco), at a few states.
    for vb, vc, T in ((1.0, 0.25, 300.0), (3.0, -1.0, 350.0), (-2.0, 0.5, 260.0)):
        at = {"V(e_b)": vb, "V(e_c)": vc, "V(t_die_2)": T}
        R = 2.0 * (1 + 0.004 * (T - 300.0))
        assert bvalue(el["bres_rh"][3], at) == pytest.approx((vb - vc) / R, rel=1e-12)
        assert bvalue(el["bjoule_rh"][3], at) == pytest.approx((vb - vc) ** 2 / R, rel=1e-12)
    # The switch: S element, its 0/1 control source and a model with the two resistances.
    assert el["s_sw"][1:] == ["e_c", "0", "x_sw_ctl", "0", "msw_sw"]
    assert el["vsw_sw"][1:4] == ["x_sw_ctl", "0", "DC"]
    model = next(c for c in parse(text)[2] if c[:2] == [".model", "msw_sw"])
    assert " ".join(model[2:]) == "SW(RON=0.001 ROFF=1000000000.0 VT=0.5 VH=0)"


def test_thermoelectric_lines(all_kinds):
    """LANGUAGE.md: V(P)-V(N) = I·R + S·(T_B − T_A); Q_A = S·T_A·I − ½I²R + K·ΔT taken from A;
    Q_B = S·T_B·I + ½I²R + K·ΔT given to B."""
    _, text = all_kinds
    el = elements(text)
    # The sense source carries the module current from pin p (e_c) to pin n (ground).
    assert el["bte_tec"][1:3] == ["e_c", "x_tec_m"] and el["vte_tec"][1:] == ["x_tec_m", "0", "DC", "0"]
    assert el["bteqa_tec"][1:3] == ["t_die", "0"] and el["bteqb_tec"][1:3] == ["0", "t_room"]
    S, R, K = 0.052, 1.8, 0.6
    for Ta, Tb, I in ((297.0, 305.0, 1.5), (280.0, 310.0, -0.7), (300.0, 300.0, 0.0)):
        at = {"V(t_die)": Ta, "V(t_room)": Tb, "I(vte_tec)": I}
        assert bvalue(el["bte_tec"][3], at) == pytest.approx(I * R + S * (Tb - Ta), rel=1e-12, abs=1e-12)
        assert bvalue(el["bteqa_tec"][3], at) == pytest.approx(S * Ta * I - 0.5 * I * I * R + K * (Ta - Tb),
                                                              rel=1e-12, abs=1e-12)
        assert bvalue(el["bteqb_tec"][3], at) == pytest.approx(S * Tb * I + 0.5 * I * I * R + K * (Ta - Tb),
                                                              rel=1e-12, abs=1e-12)
    assert "^" not in text and "**" not in text


def test_names_map_back(all_kinds):
    d, text = all_kinds
    rows = name_table(text)
    nodes = {"die": "t_die", "Die": "t_die_2", "stage1__pad": "t_stage1__pad", "stage1.pad": "t_stage1__pad_2",
             "room": "t_room", "a": "e_a", "b": "e_b", "c": "e_c"}
    for ours, spice in nodes.items():
        kind = "T" if spice.startswith("t_") else "V"
        assert rows[spice] == f"{kind}({ours})"
    assert rows["0"] == "absolute zero; ground gnd"
    # Every netlist node and element is in the table, and no two rows share a name (case ignored).
    cards = elements(text)
    used_nodes = {n for c in cards.values() for n in c[1:3]} | {cards["s_sw"][3]}
    assert used_nodes <= set(rows)
    assert set(cards) <= set(rows)
    assert len({k.lower() for k in rows}) == len(rows)
    assert all(k == k.lower() for k in rows)
    # Each element row names a kind and one of our elements (or masses).
    ours = {e.name for e in d.elements} | {n.name for n in d.nodes.values() if n.capacity}
    for spice in cards:
        if spice == "vclock_start":  # the netlist's own start clock, no element of ours
            continue
        assert rows[spice].split(":")[0].split()[1] in ours
    # Signals come back by name: node values and branch currents with their signs.
    sig = signal_map(text)
    assert sig["T(die)"] == "V(t_die)" and sig["V(a)"] == "V(e_a)"
    assert sig["Q(room)"] == "-I(vfix_room)"
    assert sig["I(vdrive)"] == "-I(v_vdrive)"
    assert sig["I(l1)"] == "I(l_l1)" and sig["I(tec)"] == "I(vte_tec)"
    # The same map, for code that reads results back without parsing comments.
    again, nm = netlist(d)
    assert again == text and nm.signals == sig
    assert nm.nodes["Die"] == "t_die_2" and nm.nodes["gnd"] == "0" and nm.stems["R1"] == "r1_2"


def test_names_are_deterministic(all_kinds):
    d, text = all_kinds
    assert write_netlist(netgen.load(ALL_KINDS)) == text
    # The order of statements does not change which name keeps its spelling.
    lines = ALL_KINDS.splitlines()
    swapped = "\n".join(lines[:3] + [lines[4], lines[3]] + lines[5:])
    assert name_table(write_netlist(netgen.load(swapped)))["t_die_2"] == "T(Die)"


def test_values_are_plain_numbers(all_kinds):
    d, text = all_kinds
    body = [c for c in parse(text)[2]]
    for card in body:
        for tok in card[1:]:
            for m in NUMBER.finditer(tok):
                start, end = m.span()
                if start and (tok[start - 1].isalnum() or tok[start - 1] in "_."):
                    continue  # a digit inside a name such as t_stage1__pad
                after = tok[end:end + 1]
                assert not after.isalpha(), f"{tok!r}: a number with a scale suffix"
    # Values read back exactly.
    el = elements(text)
    assert float(el["rlink_fins"][3]) == 1 / 2.2
    assert float(el["c_c1"][3]) == d.element("c1").capacitance


def test_initial_state_on_every_node_capacitor_and_inductor(all_kinds):
    d, text = all_kinds
    cards = parse(text)[2]
    sys = assemble(d)
    x0 = np.append(solve_dc(sys, 0.0, impose=True), 0.0)
    ic = {}
    for c in cards:
        if c[0] == ".ic":
            for item in c[1:]:
                k, v = item.split("=")
                ic[k[2:-1]] = float(v)
    el = elements(text)
    nodes = {n for k, c in el.items() if not k.startswith(("s_",)) for n in c[1:3]} - {"0"} | {"x_sw_ctl"}
    assert set(ic) == nodes
    assert ic["t_die"] == x0[sys.node_index["die"]] == 297.15
    assert ic["e_c"] == x0[sys.node_index["c"]]
    assert ic["x_sw_ctl"] == 0.0
    for name, c in el.items():
        if name[0] in "cl":
            assert c[-1].startswith("IC="), name
    assert el["l_l1"][-1] == "IC=0.01"
    assert el["c_c1"][-1] == "IC=0.5"
    assert el["cmass_die"][-1] == "IC=297.15"
    tran = next(c for c in cards if c[0] == ".tran")
    assert tran[1:] == ["0.1", "10.0", "uic"]
    assert any(c == [".op"] for c in cards)
    opts = next(c for c in cards if c[0] == ".options")
    assert {o.split("=")[0] for o in opts[1:]} <= STANDARD_OPTIONS
    reltol = float(next(o for o in opts[1:] if o.startswith("reltol=")).split("=")[1])
    assert reltol * 300 < 1e-3  # ARCHITECTURE.md: a tolerance on 300 K must stay well below a mK


@pytest.mark.parametrize("analyses, op, tran", [
    ("steady", True, None),
    ("transient until 50 s", False, ["0.1", "50.0", "uic"]),
    ("transient until 50 s step 2 s\nsteady", True, ["2.0", "50.0", "uic"]),
    ("", True, None),  # no analysis: netgen solves the steady state, so does the netlist
], ids=["steady", "transient", "both", "none"])
def test_analyses(analyses, op, tran):
    text = write_netlist(netgen.load(f"mass m 1 J/K start 300 K\nfixed f 300 K\nlink l m f 1 W/K\n{analyses}\n"))
    cards = parse(text)[2]
    assert ([".op"] in cards) == op
    got = next((c[1:] for c in cards if c[0] == ".tran"), None)
    assert got == tran
    assert any(c[0] == ".ic" for c in cards) == (tran is not None)


# ---- time-varying values -----------------------------------------------------------------------
def _heat_card(value: str, until="10 s", step="1 s") -> tuple[list[str], str, object]:
    d = netgen.load(f"fixed f 300 K\nlink l f n 1 W/K\nheat h n {value}\ntransient until {until} step {step}\n")
    text = write_netlist(d)
    card = next(c for k, c in elements(text).items() if k.endswith("heat_h"))
    return card, text, d.element("h").power


def _pwl_points(card: list[str]) -> tuple[np.ndarray, np.ndarray]:
    inner = " ".join(card[5:]).removeprefix("PWL(").removesuffix(")").split()
    vals = np.array(inner, dtype=float)
    return vals[0::2], vals[1::2]


@pytest.mark.parametrize("value, form", [
    ("0.5 W", ["DC", "0.5"]),
    ("step(0 W, 1 W, 2 s)", ["DC", "0.0", "PWL(0.0", "0.0", "1.9995", "0.0", "2.0005", "1.0)"]),
    ("ramp(1 W, 3 W, 1 s, 4 s)", ["DC", "1.0", "PWL(0.0", "1.0", "1.0", "1.0", "4.0", "3.0)"]),
    ("table(0 s, 1 W, 5 s, 2 W)", ["DC", "1.0", "PWL(0.0", "1.0", "5.0", "2.0)"]),
    ("pulse(0 W, 2 W, 1 s, 0.5 s, 0.25 s, 2 s, 6 s)", ["DC", "0.0", "PULSE(0.0", "2.0", "1.0", "0.5", "0.25", "2.0", "6.0)"]),
    ("sine(1 W, 0.5 W, 0.1 Hz)", ["DC", "1.0", "SIN(1.0", "0.5", "0.1)"]),
], ids=["dc", "step", "ramp", "table", "pulse", "sine"])
def test_shapes(value, form):
    card, _, _ = _heat_card(value)
    assert card[0].startswith("iheat") and card[1:3] == ["0", "t_n"]
    assert card[3:] == form


def test_pulse_with_instant_edges_keeps_its_timing():
    """SPICE reads a zero rise/fall as TSTEP: we give a tiny edge centred on the ideal jump."""
    card, text, _ = _heat_card("pulse(0 W, 2 W, 1 s, 0 s, 0 s, 2 s, 6 s)")
    low, high, td, tr, tf, pw, per = (float(x.strip("PULSE()")) for x in card[5:12])
    assert (low, high, per) == (0.0, 2.0, 6.0)
    assert tr == tf == pytest.approx(1e-3) and td + tr / 2 == pytest.approx(1.0)
    assert td + tr + pw + tf / 2 == pytest.approx(3.0)
    assert "edge" in text


def test_steps_have_centred_edges_with_the_same_integral():
    card, text, wave = _heat_card("table(0 s, 0 W, 3 s, 0 W, 3 s, 2 W, 6 s, 1 W)")
    t, v = _pwl_points(card)
    assert np.all(np.diff(t) > 0)
    # Over the 10 s run the ideal table carries 0 + (2 + 1)/2·3 + 1·4 = 8.5 J.
    assert np.trapezoid(v, t) + v[-1] * (10 - t[-1]) == pytest.approx(8.5, abs=1e-7)
    away = np.array([1.0, 2.99, 3.01, 4.5, 8.0])
    assert np.interp(away, t, v) == pytest.approx(evaluate(wave.expr, away), abs=1e-12)
    assert "centred on the jump" in text.replace("\n*   ", " ")


@pytest.mark.parametrize("value, has", [
    ("1 W + 0.5 W * sin(2 * pi * 0.1 Hz * time)", "sin("),
    ("1 W * log(1 + time / 1 s)", "ln("),
    ("1 W * (time / 4 s - 1)^3", "*"),
    ("1 W * sqrt(time / 1 s) + 0.1 W * exp(-time / 5 s) + 1 W * abs(cos(time / 1 s))", "exp("),
    ("min(1 W, time * 0.2 W/s) + max(0 W, 0.1 W * (time / 1 s - 5))", "abs("),
    ("1 W * (time / 1 s + 1)^0.5", "^"),
], ids=["sin", "log", "cube", "functions", "minmax", "root"])
def test_expressions_of_time_are_b_sources(value, has):
    card, text, wave = _heat_card(value)
    assert card[0] == "bheat_h" and card[1:3] == ["0", "t_n"]
    expr = " ".join(card[3:]).removeprefix("I=")
    assert has in expr and "log(" not in expr and "min(" not in expr and "max(" not in expr
    assert ("^" in expr) == (has == "^")  # integer powers are products: ngspice's ^ takes |base|
    py = expr.replace("^", "**")
    for t in (0.0, 0.7, 3.0, 6.5, 9.9):
        got = eval(py, {"time": t, "ln": math.log, "sin": math.sin, "cos": math.cos, "exp": math.exp,
                        "sqrt": math.sqrt, "abs": abs})
        assert got == pytest.approx(float(evaluate(wave.expr, t)), rel=1e-12, abs=1e-15)


def test_shapes_inside_expressions_are_sampled():
    card, text, wave = _heat_card("2 * step(0 W, 1 W, 2 s) + 0.5 W * sin(time / 1 s)", until="20 s")
    assert card[0] == "iheat_h" and card[5].startswith("PWL(")
    t, v = _pwl_points(card)
    assert np.all(np.diff(t) > 0) and t[-1] == 20.0
    probe = np.array([0.5, 1.9, 2.1, 7.3, 15.0])
    assert np.interp(probe, t, v) == pytest.approx(evaluate(wave.expr, probe), abs=2e-4)
    assert "sampled" in text
    flat, _, _ = _heat_card("2 * step(0 W, 1 W, 2 s)")
    assert len(_pwl_points(flat)[0]) == 4  # straight runs are not written point by point


# ---- files -----------------------------------------------------------------------------------
@pytest.mark.parametrize("path", EXAMPLES, ids=[p.name for p in EXAMPLES])
def test_examples_export(path):
    text = write_netlist(netgen.load(path))
    cards = parse(text)[2]
    assert cards[-1] == [".end"]
    assert set(elements(text)) <= set(name_table(text))


def test_cli_export(tmp_path, capsys):
    out = tmp_path / "dc.cir"
    assert main(["export", str(EXAMPLES[0]), "-o", str(out)]) == 0
    assert out.read_text() == write_netlist(netgen.load(EXAMPLES[0]))


# ---- an outside simulator ----------------------------------------------------------------------
def read_raw(path: Path) -> dict[str, dict[str, np.ndarray]]:
    """A SPICE raw file → {plot name: {vector name: values}} (netgen.spice.raw does the reading)."""
    return {p.name: {n: np.real(p.data[:, i]) for i, n in enumerate(p.names)} for p in raw.read_raw(path)}


def simulate(exe: str, text: str, tmp: Path, ascii: bool = False) -> dict[str, dict[str, np.ndarray]]:
    (tmp / "netlist.cir").write_text(text)
    env = {k: v for k, v in os.environ.items() if k != "SPICE_ASCIIRAWFILE"}
    if ascii:
        env["SPICE_ASCIIRAWFILE"] = "1"
    p = subprocess.run([exe, "-b", "-r", "out.raw", "netlist.cir"], cwd=tmp, env=env,
                       capture_output=True, text=True, timeout=60)
    log = p.stdout + p.stderr
    assert p.returncode == 0 and "error" not in log.lower(), log
    return read_raw(tmp / "out.raw")


def vector(plot: dict[str, np.ndarray], how: str) -> np.ndarray:
    """`how` from the netlist's signal map, e.g. "-I(vfix_room)"."""
    sign = -1.0 if how.startswith("-") else 1.0
    return sign * plot[how.lstrip("-").lower()]


def compare(d, text: str, plots, steady_rel=1e-6, kelvin=2e-3, rel=1e-4):
    """Steady within `steady_rel`; transient temperatures within `kelvin`, other signals `rel`."""
    res = d.run()
    sig = signal_map(text)
    if res.steady is not None:
        op = plots["Operating Point"]
        for s, ours in res.steady.items():
            if s in sig:
                assert vector(op, sig[s])[0] == pytest.approx(ours, rel=steady_rel, abs=1e-12), s
    if res.time is not None:
        tr = plots["Transient Analysis"]
        t = tr["time"]  # the simulator does not write t = 0 under `uic`; the .ic lines hold it
        for s, ours in res.waveforms.items():
            if s not in sig:
                continue
            theirs = np.interp(res.time, t, vector(tr, sig[s]))
            keep = res.time >= t[0]
            tol = kelvin if s.startswith("T(") else rel * max(1.0, np.abs(ours).max())
            err = np.abs(theirs - ours)[keep]
            assert err.max() <= tol, f"{s}: off by {err.max():.3g} at t = {res.time[keep][err.argmax()]:.4g} s"
    return res


RC = """
design "thermal RC"
mass die 0.45 J/K start 20 degC
mass sink 12 J/K start 20 degC
fixed room 24 degC
link spreader die sink 1.5 W/K
link fins sink room 0.8 W/K
heat chip die step(0.1 W, 0.6 W, 5 s)
steady
transient until 60 s step 0.5 s tolerance 1e-7
record T(die) T(sink) Q(room)
"""


@pytest.mark.parametrize("ascii", [False, True], ids=["binary", "ascii"])
def test_ngspice_thermal_rc(ngspice, tmp_path, ascii):
    d = netgen.load(RC)
    text = write_netlist(d)
    plots = simulate(ngspice, text, tmp_path, ascii)
    res = compare(d, text, plots, kelvin=1e-3)
    # Hand check of the steady state: 0.1 W through 1/1.5 + 1/0.8 K/W above 297.15 K.
    assert res.steady["T(die)"] == pytest.approx(297.15 + 0.1 * (1 / 1.5 + 1 / 0.8), rel=1e-12)
    assert res.steady["Q(room)"] == pytest.approx(-0.1)


TEC = """
design "cooler between two reservoirs"
fixed cold 0 degC
fixed hot 30 degC
ground gnd
source drive p gnd {drive}
thermoelectric tec pins p gnd sides cold hot {{
    seebeck 52 mV/K  resistance 1.8 ohm  conductance 0.6 W/K
}}
steady
record V(p) I(tec) I(drive) Q(cold) Q(hot)
"""


MATERIAL = """
material warm { seebeck 200 uV/K * (1 + 0.002 * (T - 300 K) / 1 K)
                resistivity 1e-5 ohm*m * (1 + 0.004 * (T - 300 K) / 1 K)
                conductivity 1.5 W/(m*K) * (1 - 0.001 * (T - 300 K) / 1 K) }
fixed cold 0 degC
fixed hot 30 degC
mass plate 0.3 J/K start 10 degC
link pad plate cold 0.5 W/K
ground gnd
source drive p gnd ramp(0 A, 1.5 A, 1 s, 4 s)
thermoelectric tec pins p gnd sides plate hot { couples 31 material warm leg 1 mm^2 1.2 mm }
steady
transient until 10 s step 0.05 s tolerance 1e-6
record T(plate) V(p) I(tec) Q(cold) Q(hot)
"""


@pytest.mark.parametrize("drive", ["1.2 A", "2.5 V"])
def test_ngspice_cooler_with_fixed_sides(ngspice, tmp_path, drive):
    d = netgen.load(TEC.format(drive=drive))
    text = write_netlist(d)
    res = compare(d, text, simulate(ngspice, text, tmp_path))
    # LANGUAGE.md: Q_A = S·T_A·I − ½I²R + K(T_A − T_B) is what the cold reservoir gives up.
    S, R, K, Tc, Th = 0.052, 1.8, 0.6, 273.15, 303.15
    I = res.steady["I(tec)"]
    assert res.steady["Q(cold)"] == pytest.approx(S * Tc * I - 0.5 * I * I * R + K * (Tc - Th), rel=1e-9)
    assert res.steady["V(p)"] == pytest.approx(I * R + S * (Th - Tc), rel=1e-9)


def test_ngspice_cooler_of_a_temperature_dependent_material(ngspice, tmp_path):
    """S, R and K are expressions of the mean side temperature (LANGUAGE.md, materials)."""
    d = netgen.load(MATERIAL)
    text = write_netlist(d)
    el = elements(text)
    # The module's S, R, K follow the mean side temperature: 31 couples of two legs (LANGUAGE.md).
    Ta, Tb, I = 290.0, 310.0, 1.2
    Tm = 0.5 * (Ta + Tb)
    S = 62 * 200e-6 * (1 + 0.002 * (Tm - 300))
    R = 62 * 1e-5 * (1 + 0.004 * (Tm - 300)) * 1.2e-3 / 1e-6
    K = 62 * 1.5 * (1 - 0.001 * (Tm - 300)) * 1e-6 / 1.2e-3
    at = {"V(t_plate)": Ta, "V(t_hot)": Tb, "I(vte_tec)": I}
    assert bvalue(el["bte_tec"][3], at) == pytest.approx(I * R + S * (Tb - Ta), rel=1e-12)
    assert bvalue(el["bteqa_tec"][3], at) == pytest.approx(S * Ta * I - 0.5 * I * I * R + K * (Ta - Tb), rel=1e-12)
    assert bvalue(el["bteqb_tec"][3], at) == pytest.approx(S * Tb * I + 0.5 * I * I * R + K * (Ta - Tb), rel=1e-12)
    compare(d, text, simulate(ngspice, text, tmp_path), kelvin=5e-4, rel=1e-4)


MIXED = """
design "every wave and element through the simulator"
mass body 2 J/K start 300 K
mass lump 0.5 J/K
fixed bath table(0 s, 300 K, 2 s, 300 K, 2 s, 305 K, 6 s, 302 K)
link l1 body bath 0.8 W/K
link l2 lump bath 4 K/W
heat h1 body pulse(0 W, 2 W, 0.5 s, 0 s, 0.2 s, 1 s, 3 s)
heat h2 lump 0.2 W + 0.1 W * sin(2 * pi * 0.5 Hz * time)
ground g
source vs a g sine(1 V, 0.5 V, 2 Hz)
resistor rh a b 2 ohm heats body tempco 4000 ppm/K at body ref 300 K
inductor ind b c 0.1 H start 0.05 A
capacitor cap c g 0.05 F
switch sw c g closed 1 s .. 2 s, 4 s .. 5 s on 0.5 ohm off 20 ohm
source is1 g c 2 * step(0 A, 0.05 A, 3 s)
transient until 6 s step 0.01 s tolerance 1e-6
record T(body) T(lump) V(a) V(b) V(c) I(ind) I(vs)
"""


def test_ngspice_every_wave_and_element(ngspice, tmp_path):
    """Pulse, sine, table with a jump, a B source of time, a sampled shape, a switch, a self-heating
    resistor with a tempco, an inductor and a capacitor with start values."""
    d = netgen.load(MIXED)
    text = write_netlist(d)
    compare(d, text, simulate(ngspice, text, tmp_path), kelvin=2e-4, rel=1e-4)


@pytest.mark.parametrize("path", EXAMPLES, ids=[p.name for p in EXAMPLES])
def test_ngspice_examples(ngspice, tmp_path, path):
    """The examples' temperatures (their currents jump, where an edge and a point in time differ)."""
    d = netgen.load(path)
    text = write_netlist(d)
    plots = simulate(ngspice, text, tmp_path)
    res = d.run()
    tr, sig = plots["Transient Analysis"], signal_map(text)
    for s, ours in res.waveforms.items():
        if s.startswith("T(") and s in sig:
            theirs = np.interp(res.time, tr["time"], vector(tr, sig[s]))
            keep = res.time >= tr["time"][0]
            # netgen runs at the examples' own (default) tolerance: in detector_cooler the die
            # cools by 30 K in two seconds and netgen is within 10 mK of the simulator there.
            assert np.abs(theirs - ours)[keep].max() < 0.03, s
