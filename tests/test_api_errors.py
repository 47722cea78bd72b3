"""The Python API's edge: every error the caller's arguments can cause is a NetgenError with a clear
message (never a lark, OS or type error from inside), and `overrides` take numbers (SI) or text."""
from pathlib import Path

import pytest

import netgen
from netgen.model.errors import NetgenError

ROOT = Path(__file__).resolve().parents[1]
# A block heated by P through a link to a reservoir at T0: T(m) = T0 + P/G (one thermal resistance).
BLOCK = ("let P = 1 W\nlet T0 = 25 degC\nlet G = 2 W/K\nmass m 1 J/K\nfixed r T0\nheat h m P\nlink l m r G\n"
         "steady\n")
WAVE = "let I = step(0 A, 1 A, 1 s)\nground g\nresistor r a g 1 ohm\nsource s g a I\ntransient until 2 s\n"


# ---- overrides: numbers are SI in the parameter's dimension, text is read as on a `let` line --------
@pytest.mark.parametrize("overrides, name, expected", [
    ({"P": 3}, "P", (3.0, "W")),
    ({"P": 3.0}, "P", (3.0, "W")),
    ({"P": "3 W"}, "P", (3.0, "W")),
    ({"P": "3000 mW"}, "P", (3.0, "W")),
    ({"T0": 300}, "T0", (300.0, "K")),          # a temperature in SI is kelvin, whatever the file wrote
    ({"T0": "26.85 degC"}, "T0", (pytest.approx(300.0), "K")),
    ({"P": 0.5, "G": "2 * P / 1 K"}, "G", (1.0, "W/K")),
], ids=["int", "float", "text", "text-prefix", "kelvin-number", "celsius-text", "text-using-a-number"])
def test_overrides_take_numbers_and_text(overrides, name, expected):
    assert netgen.load(BLOCK, overrides).params[name] == expected


def test_a_number_override_solves_as_its_text():
    """T(m) = T0 + P/G: 300 K + 3 W / 2 W/K = 301.5 K (series conduction to a fixed temperature)."""
    by_number = netgen.load(BLOCK, {"P": 3, "T0": 300}).run().steady["T(m)"]
    by_text = netgen.load(BLOCK, {"P": "3 W", "T0": "300 K"}).run().steady["T(m)"]
    assert by_number == by_text == pytest.approx(301.5, rel=1e-12)


def test_numpy_numbers_are_numbers():
    np = pytest.importorskip("numpy")
    assert netgen.load(BLOCK, {"P": np.float64(2.5), "G": np.int64(4)}).params["G"] == (4.0, "W/K")


def test_a_wave_parameter_still_takes_text():
    assert netgen.load(WAVE, {"I": "2 A"}).params["I"] == (2.0, "A")


@pytest.mark.parametrize("overrides, fragments", [
    ({"P": "3 K"}, ["override P:", "`P` is in W", "'3 K' is in K"]),
    ({"P": "3 Q"}, ["override P:", "cannot read the value '3 Q'"]),
    ({"P": "3 )"}, ["override P:", "cannot read the value"]),
    ({"P": "Q * 1 W"}, ["override P:", "unknown name `Q`"]),
    ({"Q": 3}, ["override Q:", "the design has no parameter `Q`"]),
    ({"P": float("nan")}, ["override P:", "nan is not a finite number"]),
    ({"P": float("inf")}, ["override P:", "inf is not a finite number"]),
    ({"P": True}, ["override P:", "expected a number (SI) or text with a unit, not bool"]),
    ({"P": None}, ["override P:", "not NoneType"]),
    ({"P": [3, "W"]}, ["override P:", "not list"]),
    ({"P": b"3 W"}, ["override P:", "not bytes"]),
    ({3: "3 W"}, ["override 3:", "a parameter name is text, not int"]),
    ("P=3W", ["overrides: expected a dict", "not str"]),
    ([("P", "3 W")], ["overrides: expected a dict", "not list"]),
], ids=["wrong-unit", "unknown-unit", "unreadable", "unknown-name-inside", "unknown-parameter", "nan", "inf",
        "bool", "none", "list-value", "bytes-value", "int-key", "string-not-dict", "list-not-dict"])
def test_bad_overrides_are_netgen_errors_in_the_api_s_words(overrides, fragments):
    with pytest.raises(NetgenError) as e:
        netgen.load(BLOCK, overrides)
    message = str(e.value)
    for frag in fragments:
        assert frag in message, message
    assert "--set" not in message


def test_a_number_cannot_replace_a_parameter_that_varies_in_time():
    with pytest.raises(NetgenError) as e:
        netgen.load(WAVE, {"I": 2.0})
    assert "override I: `I` varies in time in the design, so a number cannot replace it" in str(e.value)


def test_the_command_line_still_speaks_of_set(tmp_path, capsys):
    from netgen.cli import main

    f = tmp_path / "b.etn"
    f.write_text(BLOCK)
    assert main(["check", str(f), "--set", "P=3 K"]) == 2
    err = capsys.readouterr().err
    assert "--set P=3 K: `P` is in W, the value given is in K" in err and "override" not in err
    assert main(["check", str(f), "--set", "Q=3W"]) == 2
    assert "--set Q: the design has no parameter `Q`" in capsys.readouterr().err


# ---- what to load -----------------------------------------------------------------------------
def _latin(tmp: Path) -> Path:
    (tmp / "latin.etn").write_bytes(b"mass m 1 J/K\n# caf\xe9\n")
    return tmp / "latin.etn"


def _etn_directory(tmp: Path) -> Path:
    (tmp / "dir.etn").mkdir()
    return tmp / "dir.etn"


LOAD_ERRORS = {  # id: (the argument, made in a temporary directory; a fragment of the message)
    "directory": (lambda t: str(t), "Is a directory"),
    "directory-path": (lambda t: t, "Is a directory"),
    "directory-named-etn": (_etn_directory, "Is a directory"),
    "missing-without-suffix": (lambda t: str(t / "nothere"), "No such file or directory"),
    "missing-bare-name": (lambda t: "cooler", "cannot read `cooler`"),
    "missing-etn": (lambda t: str(t / "nothere.etn"), "No such file or directory"),
    "empty": (lambda t: "", "netgen.load: the path or text is empty"),
    "blank": (lambda t: "  \t ", "netgen.load: the path or text is empty"),
    "none": (lambda t: None, "netgen.load: expected a path or the text of a design, not NoneType"),
    "int": (lambda t: 3, "netgen.load: expected a path or the text of a design, not int"),
    "nul-in-path": (lambda t: "a\0b.etn", "a path cannot hold a NUL character"),
    "name-too-long": (lambda t: "x" * 300 + ".etn", "File name too long"),
    "bytes-not-utf8": (lambda t: b"mass m 1 J/K\n# caf\xe9\n", "<bytes>:2:6: error: the bytes given are not valid UTF-8"),
    "file-not-utf8": (_latin, "latin.etn:2:6: error: the file is not valid UTF-8"),
    "bytes-of-bad-text": (lambda t: b"mass m 1 J/K\nlnk l m r 1 W/K\n", "did you mean `link`"),
    "one-line-text": (lambda t: "mass m 1 J/K", "has no reservoir"),  # one line with spaces is text
}


@pytest.mark.parametrize("case", list(LOAD_ERRORS))
def test_load_errors_are_netgen_errors(tmp_path, case):
    make, fragment = LOAD_ERRORS[case]
    with pytest.raises(NetgenError) as e:
        netgen.load(make(tmp_path))
    assert fragment in str(e.value), str(e.value)


@pytest.mark.parametrize("how", ["str", "Path", "bytes-of-path", "bytes-of-text"])
def test_what_loads(how):
    path = ROOT / "examples" / "detector_cooler.etn"
    arg = {"str": str(path), "Path": path, "bytes-of-path": str(path).encode(), "bytes-of-text": path.read_bytes()}[how]
    assert len(netgen.load(arg).nodes) == 6


# ---- what to run ------------------------------------------------------------------------------
@pytest.mark.parametrize("what, fragment", [
    ("examples/detector_cooler.etn", "netgen.run: expected a Design, not str"),
    (None, "netgen.run: expected a Design, not NoneType"),
], ids=["a-path", "none"])
def test_run_takes_a_design(what, fragment):
    with pytest.raises(NetgenError) as e:
        netgen.run(what)
    assert fragment in str(e.value) and "netgen.load" in str(e.value)
