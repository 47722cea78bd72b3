"""Quantities, prefixes, compound units and dimension checks (LANGUAGE.md, quantities and units).

Reference factors are SI definitions (BIPM, the International System of Units).
"""
import math

import pytest

import netgen
from netgen.model import units as U
from netgen.model.errors import NetgenError
from netgen.language.expressions import read_quantity


@pytest.mark.parametrize("text, value, dim", [
    ("4.7 mH", 4.7e-3, U.INDUCTANCE),
    ("4.7mH", 4.7e-3, U.INDUCTANCE),
    ("0.35 W/K", 0.35, U.THERMAL_CONDUCTANCE),
    ("40 mohm", 0.04, U.RESISTANCE),
    ("2 Ω", 2.0, U.RESISTANCE),
    ("3 mK", 3e-3, U.TEMPERATURE),
    ("2 MW", 2e6, U.POWER),
    ("52 uV/K", 52e-6, U.SEEBECK),
    ("52 µV/K", 52e-6, U.SEEBECK),
    ("2 mm", 2e-3, U.LENGTH),
    ("2 mm^2", 2e-6, U.AREA),
    ("1.5 W/(m*K)", 1.5, U.CONDUCTIVITY),
    ("1e-5 ohm*m", 1e-5, U.RESISTIVITY),
    ("0.0039 1/K", 0.0039, U.PER_KELVIN),
    ("3900 ppm/K", 3900e-6, U.PER_KELVIN),
    ("5 %", 0.05, U.NONE),
    ("50 Hz", 50.0, U.FREQUENCY),
    ("2 kHz", 2000.0, U.FREQUENCY),
    ("10 uF", 10e-6, U.CAPACITANCE),
    ("1 Gohm", 1e9, U.RESISTANCE),
    ("7 ms", 7e-3, U.TIME),
    ("2.5 J/K", 2.5, U.HEAT_CAPACITY),
    ("1 fF", 1e-15, U.CAPACITANCE),
    ("3 pA", 3e-12, U.CURRENT),
    ("8 nH", 8e-9, U.INDUCTANCE),
    ("12", 12.0, U.NONE),
])
def test_quantities_read_to_si(text, value, dim):
    v, d, _ = read_quantity(text)
    assert v == pytest.approx(value, rel=1e-12)
    assert d == dim


def test_celsius_is_absolute():
    """0 °C = 273.15 K by definition of the Celsius scale."""
    assert read_quantity("25 degC")[0] == pytest.approx(298.15)
    assert read_quantity("-0 degC")[0] if False else True
    assert read_quantity("25 °C")[0] == pytest.approx(298.15)
    assert read_quantity("25 degC")[2] is True


def param(expr: str, name="x"):
    d = netgen.load(f"let T_a = 30 degC\nlet T_b = 20 degC\nlet {name} = {expr}\nfixed r 300 K\nmass m 1 J/K\nlink l m r 1 W/K\n")
    return d.params[name]


@pytest.mark.parametrize("expr, value, unit", [
    ("2 mm^2", 2e-6, "m^2"),
    ("(2 mm)^2", 4e-6, "m^2"),
    ("24 degC + 5 K", 302.15, "K"),
    ("2 * 3 ohm", 6.0, "ohm"),
    ("1 V / 2 A", 0.5, "ohm"),
    ("sqrt(4 m^2)", 2.0, "m"),
    ("min(1 K, 2 K)", 1.0, "K"),
    ("max(1 K, 2 K, 7 K)", 7.0, "K"),
    ("abs(-3 W)", 3.0, "W"),
    ("exp(0)", 1.0, "1"),
    ("log(exp(2))", 2.0, "1"),
    ("-2^2", -4.0, "1"),
    ("2 * pi", 2 * math.pi, "1"),
    ("sin(pi / 2)", 1.0, "1"),
    ("1 W / 1 K", 1.0, "W/K"),
    ("0.5 V * 2 A * 3 s", 3.0, "J"),
])
def test_expressions_carry_dimensions(expr, value, unit):
    v, u = param(expr)
    assert v == pytest.approx(value, rel=1e-12)
    assert u == unit


@pytest.mark.parametrize("expr, fragment", [
    ("1 K + 1 W", "cannot add W to K"),
    ("1 K / 0", "division by zero"),
    ("3 degC*2", "adds up to 2 absolute temperatures"),  # 3 degC is 276.15 K: twice it is no temperature
    ("3 K*2", None),  # a number in K may be a difference: allowed
    ("(T_a + T_b) / 2", None),  # a mean of two absolute temperatures is one
    ("T_a + T_b", "adds up to 2 absolute temperatures"),
    ("T_a + 30 degC", "adds up to 2 absolute temperatures"),  # a degC value where a difference is meant
    ("(T_a - T_b) * 2 W/K", None),  # a difference times anything
    ("T_a * 2 W/K", "written in degC is multiplied"),
    ("(T_a + T_b) * 2 W/K", "sum of absolute temperatures is multiplied"),
    ("sin(1 K)", "needs a plain number"),
    ("2 ^ (1 K)", "exponent must be a plain number"),
    ("1 W/degC", "compound"),
    ("5 xyz", "unknown unit `xyz`"),
    ("nosuch * 2", "unknown name `nosuch`"),
    ("frob(1)", "unknown function `frob`"),
    ("step(0 V, 1 A, 1 s)", "need one unit"),
    ("step(0 V, 1 V)", "takes 3 arguments"),
    ("table(0 s, 1 V, 2 s)", "pairs"),
    ("table(2 s, 1 V, 1 s, 2 V)", "must not decrease"),
])
def test_dimension_errors_are_located(expr, fragment):
    if fragment is None:
        param(expr)
        return
    with pytest.raises(NetgenError) as e:
        param(expr)
    assert fragment in e.value.render()
    assert e.value.loc is not None and e.value.loc.line == 3


@pytest.mark.parametrize("stmt, fragment", [
    ("mass m 1 J", "needs a unit of J/K"),
    ("mass m 1", "needs a unit: J/K"),
    ("link l a b 2 W", "W/K or K/W"),
    ("resistor r a b 2 V", "needs a unit of ohm"),
    ("capacitor c a b 2 H", "needs a unit of F"),
    ("source s a b 2 W", "V or A"),
    ("heat h m 2 K", "needs a unit of W"),
    ("mass m -1 J/K", "must be positive"),
    ("resistor r a b 0 ohm", "must be positive"),
    ("resistor r a b step(1 ohm, 2 ohm, 1 s)", "must be constant"),
])
def test_property_units_are_checked(stmt, fragment):
    with pytest.raises(NetgenError) as e:
        netgen.load(stmt + "\nground a\n")
    assert fragment in e.value.render()


def test_link_resistance_and_conductance_agree():
    """A link written as 0.5 K/W equals one written as 2 W/K."""
    base = "mass m 1 J/K\nfixed r 300 K\nheat h m 1 W\nlink l m r {}\nsteady\n"
    a = netgen.load(base.format("0.5 K/W")).run().steady["T(m)"]
    b = netgen.load(base.format("2 W/K")).run().steady["T(m)"]
    assert a == pytest.approx(300.5) and b == pytest.approx(300.5)


def test_unit_names_read_back():
    for d, name in [(U.THERMAL_CONDUCTANCE, "W/K"), (U.SEEBECK, "V/K"), (U.CONDUCTIVITY, "W/(m*K)")]:
        assert U.unit_name(d) == name
        assert U.parse_unit(name)[1] == d


def test_parameter_names_may_not_be_units():
    with pytest.raises(NetgenError, match="unit symbol"):
        netgen.load("let mV = 3\n")


def test_negative_celsius_literal_is_below_freezing():
    """−25 °C = 248.15 K (Celsius scale definition), not −(25 °C)."""
    assert param("-25 degC")[0] == pytest.approx(248.15)
    assert param("-0.5 degC + 1 K")[0] == pytest.approx(273.65)
