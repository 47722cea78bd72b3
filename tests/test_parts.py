"""Reusable parts, `use ... with`, and `include` (LANGUAGE.md, parts and files)."""
import numpy as np
import pytest

import netgen
from netgen.model.errors import NetgenError

STAGE = """
part stage(top, bottom) {
    let G = 1 W/K
    mass mid 2 J/K
    link up top mid G
    link down mid bottom G
}
"""


def test_used_parts_are_prefixed_and_wired_to_their_ports():
    """Series conductances: 1/G = Σ 1/Gᵢ (Fourier's law for resistances in series)."""
    d = netgen.load(STAGE + """
fixed hot 320 K
fixed cold 300 K
use stage s1(hot, x) with G = 2 W/K
use stage s2(x, cold)
mass x 1 J/K
steady
record T(s1.mid) T(x) Q(s1.up) Q(s2.down)
""")
    assert {"s1.mid", "s2.mid", "x", "hot", "cold"} <= set(d.nodes)
    assert {"s1.up", "s1.down", "s2.up", "s2.down"} <= {e.name for e in d.elements}
    st = d.run().steady
    g_total = 1 / (1 / 2 + 1 / 2 + 1 / 1 + 1 / 1)
    q = g_total * 20
    assert st["Q(s1.up)"] == pytest.approx(q, rel=1e-12)
    assert st["Q(s2.down)"] == pytest.approx(q, rel=1e-12)
    assert st["T(x)"] == pytest.approx(320 - q * (1 / 2 + 1 / 2), rel=1e-12)
    assert st["T(s1.mid)"] == pytest.approx(320 - q / 2, rel=1e-12)


def test_parts_inside_parts_nest_their_prefixes():
    d = netgen.load(STAGE + """
part double(a, b) {
    use stage first(a, m)
    use stage second(m, b)
}
fixed hot 310 K
fixed cold 300 K
use double dd(hot, cold)
steady
""")
    assert "dd.first.mid" in d.nodes and "dd.m" in d.nodes
    st = d.run().steady
    assert st["T(dd.m)"] == pytest.approx(305.0)


def test_include_is_relative_to_the_including_file(tmp_path):
    (tmp_path / "lib").mkdir()
    (tmp_path / "lib" / "stage.etn").write_text(STAGE)
    main = tmp_path / "main.etn"
    main.write_text('include "lib/stage.etn"\nfixed a 300 K\nfixed b 310 K\nuse stage s(a, b)\nsteady\n')
    assert netgen.load(main).run().steady["T(s.mid)"] == pytest.approx(305.0)


@pytest.mark.parametrize("text, fragment, line", [
    (STAGE + "use stage s(a)\n", "has 2 ports", 8),
    (STAGE + "fixed a 1 K\nfixed b 2 K\nuse stage s(a, b) with H = 1 W/K\n", "no parameter `H`", 10),
    (STAGE + "use stage s(a, b) with G = 1 K\n", "is in K, but `G` is in W/K", 3),
    ("use nothing s(a)\n", "unknown part `nothing`", 1),
    ("part p(a) {\n  use p inner(a)\n}\nuse p s(x)\n", "uses itself", 2),
    ("part p(a) {\n  steady\n}\n", None, None),
    ("part p(a) {\n  transient until 1 s\n}\nuse p s(x)\n", "not allowed inside a part", 2),
    ("part p(a) {\n  link l a b 1 K\n}\nuse p s(q)\n", "W/K or K/W", 2),
])
def test_part_errors_are_located(text, fragment, line):
    if fragment is None:
        netgen.load(text + "fixed q 1 K\n")  # a part never used is only checked when used
        return
    with pytest.raises(NetgenError) as e:
        netgen.load(text)
    msg = e.value.render()
    assert fragment in msg
    assert e.value.loc.line == line


def test_error_inside_a_part_names_the_use_site():
    with pytest.raises(NetgenError) as e:
        netgen.load("part p(a) {\n  link l a b 1 K\n}\nuse p s(q)\n")
    assert "note: in part `p` used as `s` at <text>:4:1" in e.value.render()


def test_include_errors(tmp_path):
    (tmp_path / "a.etn").write_text('include "b.etn"\n')
    (tmp_path / "b.etn").write_text('include "a.etn"\n')
    with pytest.raises(NetgenError, match="include cycle"):
        netgen.load(tmp_path / "a.etn")
    (tmp_path / "notes.txt").write_text("mass m 1 J/K\n")
    (tmp_path / "c.etn").write_text('include "notes.txt"\n')
    with pytest.raises(NetgenError, match="not a .etn file"):
        netgen.load(tmp_path / "c.etn")
    (tmp_path / "d.etn").write_text('include "missing.etn"\n')
    with pytest.raises(NetgenError, match="cannot read"):
        netgen.load(tmp_path / "d.etn")
    (tmp_path / "e.etn").write_text("mass m 1 J/Q\n")
    (tmp_path / "f.etn").write_text('\ninclude "e.etn"\n')
    with pytest.raises(NetgenError) as e:
        netgen.load(tmp_path / "f.etn")
    assert e.value.loc.file.endswith("e.etn") and e.value.loc.line == 1
    assert "included from" in e.value.render() and "f.etn:2:1" in e.value.render()


def test_part_used_twice_equals_the_same_written_out_by_hand():
    """A stage used twice gives exactly what the two stages written out by hand give."""
    used = netgen.load(STAGE + """
fixed hot 330 K
fixed cold 290 K
heat h x 1.5 W
mass x 1 J/K start 300 K
use stage s1(hot, x) with G = 0.7 W/K
use stage s2(x, cold)
transient until 20 s step 0.5 s
record T(x) T(s1.mid) T(s2.mid)
""").run()
    by_hand = netgen.load("""
fixed hot 330 K
fixed cold 290 K
heat h x 1.5 W
mass x 1 J/K start 300 K
mass a 2 J/K
link a_up hot a 0.7 W/K
link a_down a x 0.7 W/K
mass b 2 J/K
link b_up x b 1 W/K
link b_down b cold 1 W/K
transient until 20 s step 0.5 s
record T(x) T(a) T(b)
""").run()
    assert np.array_equal(used.time, by_hand.time)
    assert np.allclose(used["T(x)"], by_hand["T(x)"], rtol=0, atol=1e-12)
    assert np.allclose(used["T(s1.mid)"], by_hand["T(a)"], rtol=0, atol=1e-12)
    assert np.allclose(used["T(s2.mid)"], by_hand["T(b)"], rtol=0, atol=1e-12)
