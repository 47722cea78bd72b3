"""`netgen export --subckt`: a part that a deck written here `.include`s, driven through its pins
by the outside simulator (ngspice), against netgen's own solution of the same design."""
from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

import netgen
from netgen.cli import main
from netgen.spice.crosscheck_report import Tolerances
from netgen.spice.part import part
from netgen.spice.part_deck import crosscheck_part
from netgen.spice.raw import find_plot
from netgen.spice.simulator import simulate

EXAMPLES = sorted((Path(__file__).resolve().parents[1] / "examples").glob("*.etn"))

# A cooler whose module is driven by its own test drive, `drive`, from p to gnd; a part made
# without it is driven by the deck below instead, with neither module pin on the deck's ground.
COOLER = """
design "cooler for a part"
mass cold 0.5 J/K start 22 degC
mass hot 30 J/K start 22 degC
fixed room 22 degC
link fins hot room 2 W/K
heat load cold 0.25 W
ground gnd
source drive p gnd {drive}
resistor lead p q 50 mohm
thermoelectric tec pins q gnd sides cold hot {{
    seebeck 50 mV/K  resistance 2 ohm  conductance 0.5 W/K
}}
transient until 60 s step 0.25 s
record T(cold) T(hot)
"""

# The deck's drive, as SPICE text for pins np (module +) and ng (module -), matching {drive}.
DRIVES = {
    # An H-bridge of two voltage sources: both pins move against the deck's ground, 6 V common mode.
    "h-bridge": ("step(0 V, 2 V, 1 s)",
                 "vhi np 0 PWL(0 6 0.9995 6 1.0005 8 60 8)\nvlo ng 0 DC 6"),
    # A current source across the pins: nothing ties them to the deck's ground but the part's leak.
    "floating current": ("step(0 A, 1.2 A, 1 s)", "idrv ng np PWL(0 0 0.9995 0 1.0005 1.2 60 1.2)"),
}


@pytest.mark.parametrize("drive", DRIVES, ids=list(DRIVES))
def test_a_deck_written_here_drives_the_part_through_floating_pins(tmp_path, ngspice, drive):
    """The issue's test: ngspice with only `.options reltol=1e-5`; temperatures within 0.1 K of
    netgen's over the transient and 0.01 K at the end (outside check: ngspice)."""
    ours_drive, spice_drive = DRIVES[drive]
    f = tmp_path / "cooler.etn"
    f.write_text(COOLER.format(drive=ours_drive))
    lib = tmp_path / "cooler.lib"
    assert main(["export", str(f), "--subckt", "cooler", "--pins", "p,gnd,cold,hot", "--without", "drive",
                 "-o", str(lib)]) == 0
    deck = "\n".join(["* my driver", f".include {lib}", "xmod np ng tc th cooler", spice_drive,
                      ".options reltol=1e-5", ".tran 0.25 60 uic", ".end"]) + "\n"
    plot = find_plot(simulate(deck, ngspice, tmp_path / "run").plots, "Transient Analysis")
    ts = np.real(plot["time"])
    res = netgen.run(netgen.load(f))
    for node, vec in (("cold", "v(tc)"), ("hot", "v(th)")):
        theirs = np.real(plot[vec]) + 273.15  # degC on the thermal pins
        ours = res.waveforms[f"T({node})"]
        inside = res.time >= ts[1]  # under uic the first point is the start itself
        # Both on the simulator's points (ours is the finer grid): within 0.1 K throughout.
        assert np.abs(np.interp(ts[1:], res.time, ours) - theirs[1:]).max() < 0.1, node
        assert abs(theirs[-1] - ours[-1]) < 0.01, node
        assert inside.sum() > 100


def test_the_part_file_is_one_subckt_and_nothing_that_acts_on_the_deck(tmp_path):
    f = tmp_path / "cooler.etn"
    f.write_text(COOLER.format(drive="step(0 A, 1.2 A, 1 s)"))
    text = part(netgen.load(f), "cooler", ["p", "gnd", "cold", "room"], ["drive"]).text
    lines = text.splitlines()
    cards = [x for x in lines if not x.startswith("*")]
    assert all(x.startswith("*") for x in lines[:cards and lines.index(cards[0])])  # no title line
    assert cards[0] == ".subckt cooler e_p e_gnd t_cold t_room"
    assert cards[-1] == ".ends cooler"
    assert not any(c.split()[0].lower() in (".end", ".tran", ".op", ".options", ".ic", ".nodeset", ".include")
                   for c in cards)
    assert not any(c.startswith(("idrive", "vfix_room", "bfix_room")) for c in cards)  # --without, pinned reservoir
    assert any(c.startswith("rleak_gnd e_gnd 0 ") for c in cards)
    # Starts travel as IC= (a mass returns to a node held at its start: IC=0 there).
    assert "cmass_cold t_cold x_start1 0.5 IC=0.0" in cards
    assert "vstart1 x_start1 0 DC 22.0" in cards
    assert "*   t_cold: cold (thermal, degC)" in lines


def test_kelvin_keeps_absolute_temperatures(tmp_path):
    f = tmp_path / "cooler.etn"
    f.write_text(COOLER.format(drive="step(0 A, 1.2 A, 1 s)"))
    text = part(netgen.load(f), "cooler", ["p", "gnd", "cold"], kelvin=True).text
    assert "vfix_room t_room 0 DC 295.15" in text and "+273.15" not in text
    celsius = part(netgen.load(f), "cooler", ["p", "gnd", "cold"]).text
    assert "vfix_room t_room 0 DC 22.0" in celsius and "(V(t_cold)+273.15)" in celsius


@pytest.mark.parametrize("args, message, col", [
    (["--pins", "p,gnd,cld"], "--pins: the design has no node `cld`", 14),
    (["--pins", "p,p"], "--pins: `p` is named twice", 10),
    (["--pins", "p,cold", "--without", "drive,lode"], "--without: the design has no element `lode`", 17),
], ids=["unknown pin", "pin twice", "unknown element"])
def test_bad_pins_and_elements_are_located_errors(tmp_path, capsys, args, message, col):
    f = tmp_path / "cooler.etn"
    f.write_text(COOLER.format(drive="1 A"))
    assert main(["export", str(f), "--subckt", "cooler", *args]) == 2
    err = capsys.readouterr().err
    assert message in err and f"command line:1:{col}: error" in err
    assert "^" in err and "hint:" in err


def test_part_options_need_subckt(tmp_path, capsys):
    f = tmp_path / "cooler.etn"
    f.write_text(COOLER.format(drive="1 A"))
    assert main(["export", str(f), "--pins", "p"]) == 2
    assert "--subckt" in capsys.readouterr().err


@pytest.mark.parametrize("path", EXAMPLES, ids=[p.stem for p in EXAMPLES])
def test_every_example_passes_as_a_part_in_a_deck(ngspice, path):
    """Each example as a part in a deck that sets only reltol=1e-5, compared by the cross-check
    with a 0.1 K tolerance on every temperature (outside check: ngspice)."""
    d = netgen.load(path)
    rep = crosscheck_part(d, ".options reltol=1e-5", Tolerances(kelvin=0.1), simulator=ngspice)
    assert rep.passed, rep.table()
    assert rep.transient and all(r.signal.startswith("T(") for r in rep.transient)


SPICE = Path(__file__).resolve().parents[1] / "examples" / "spice"


def test_the_worked_example_is_current_and_runs(tmp_path, ngspice):
    """examples/spice: the shipped part is what export writes now, and the hand-written
    regulator deck runs in ngspice with the module floating (outside check: ngspice; the
    regulator's current against its set point 0.16 V / 0.1 ohm, Ohm's law)."""
    design = SPICE.parent / "detector_cooler.etn"
    lib = tmp_path / "cooler.lib"
    assert main(["export", str(design), "--subckt", "cooler", "--pins", "p,gnd,die,sink", "--without", "drive",
                 "-o", str(lib)]) == 0
    cards = lambda text: [x for x in text.splitlines() if not x.startswith("*")]  # the header names the path
    assert cards(lib.read_text()) == cards((SPICE / "cooler.lib").read_text())
    deck = (SPICE / "regulator.cir").read_text()
    (tmp_path / "regulator.cir").write_text(deck)
    plot = find_plot(simulate(deck, ngspice, tmp_path).plots, "Transient Analysis")
    current = np.real(plot["v(sense)"])[-1] / 0.1
    assert abs(current - 1.6) < 1e-3
    assert np.real(plot["v(drain)"]).min() > 1.0  # the module's - pin never on the deck's ground
    ours = netgen.run(netgen.load(design)).waveforms["T(die)"][-1] - 273.15
    assert abs(np.real(plot["v(tdie)"])[-1] - ours) < 0.02
