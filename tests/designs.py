"""Designs several test files check against the same handbook values (CHECKS.md 5 and 6).

- `cooler`: a module between two held sides (280 K and 300 K), driven by a current `I`; CHECKS 5
  (Rowe (ed.), CRC Handbook of Thermoelectrics): the best COP at I_opt = S·ΔT/(R·(√(1+Z·Tm) − 1)).
- `generator`: a module between 360 K and 300 K into a load `RL`; CHECKS 6 (Ioffe; CRC
  Handbook): open-circuit V = S·ΔT, P_load = (S·ΔT)²·R_L/(R + R_L)², the most at R_L = R.

Each test adds its own records and expectations after the design's lines.
"""

COOLER_S, COOLER_R, COOLER_K, COOLER_TC, COOLER_TH = 0.05, 2.0, 0.5, 280.0, 300.0
GENERATOR_S, GENERATOR_R, GENERATOR_DT = 0.04, 1.5, 60.0


def cooler(tail: str = "record Q(m.a) P(m)") -> str:
    return f"""
let I = 1 A
fixed cold 280 K
fixed hot 300 K
ground g
source drive p g I
thermoelectric m pins p g sides cold hot {{ seebeck 50 mV/K  resistance 2 ohm  conductance 0.5 W/K }}
steady
{tail}
"""


def generator(tail: str = "record P(load) V(p)") -> str:
    return f"""
let RL = 1 ohm
fixed hot 360 K
fixed cold 300 K
ground g
thermoelectric m pins p g sides hot cold {{ seebeck 40 mV/K  resistance 1.5 ohm  conductance 0.4 W/K }}
resistor load p g RL
steady
{tail}
"""
