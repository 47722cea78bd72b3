"""Physical dimensions and unit symbols: text units to SI factors and back to readable names."""
from __future__ import annotations

import functools
import re
from dataclasses import dataclass
from fractions import Fraction

# Base dimensions, in this order: mass, length, time, current, temperature.
_BASES = ("kg", "m", "s", "A", "K")


@dataclass(frozen=True, eq=False)
class Dim:
    """Exponents of the SI base dimensions (kg, m, s, A, K)."""

    exps: tuple = (Fraction(0),) * 5

    def __post_init__(self):
        # Compared as integer pairs: the reader compares dimensions a few times per statement,
        # and Fraction's own comparison made that a third of reading a large mesh.
        object.__setattr__(self, "_key", tuple((Fraction(e).numerator, Fraction(e).denominator) for e in self.exps))

    def __eq__(self, other) -> bool:
        return self is other or (isinstance(other, Dim) and self._key == other._key)

    def __hash__(self) -> int:
        return hash(self._key)

    def __mul__(self, other: "Dim") -> "Dim":
        return Dim(tuple(a + b for a, b in zip(self.exps, other.exps)))

    def __truediv__(self, other: "Dim") -> "Dim":
        return Dim(tuple(a - b for a, b in zip(self.exps, other.exps)))

    def __pow__(self, p) -> "Dim":
        p = Fraction(p)
        return Dim(tuple(a * p for a in self.exps))

    @property
    def dimensionless(self) -> bool:
        return all(e == 0 for e in self.exps)

    def __str__(self) -> str:
        return unit_name(self)


def _d(kg=0, m=0, s=0, A=0, K=0) -> Dim:
    return Dim(tuple(Fraction(x) for x in (kg, m, s, A, K)))


NONE = _d()
TIME = _d(s=1)
TEMPERATURE = _d(K=1)
POWER = _d(kg=1, m=2, s=-3)
ENERGY = _d(kg=1, m=2, s=-2)
VOLTAGE = _d(kg=1, m=2, s=-3, A=-1)
CURRENT = _d(A=1)
RESISTANCE = VOLTAGE / CURRENT
CAPACITANCE = _d(s=1, A=1) / VOLTAGE
INDUCTANCE = VOLTAGE * TIME / CURRENT
FREQUENCY = _d(s=-1)
HEAT_CAPACITY = ENERGY / TEMPERATURE
THERMAL_CONDUCTANCE = POWER / TEMPERATURE
THERMAL_RESISTANCE = TEMPERATURE / POWER
SEEBECK = VOLTAGE / TEMPERATURE
LENGTH = _d(m=1)
AREA = _d(m=2)
RESISTIVITY = RESISTANCE * LENGTH
CONDUCTIVITY = THERMAL_CONDUCTANCE / LENGTH
PER_KELVIN = _d(K=-1)
MASS = _d(kg=1)
DENSITY = MASS / LENGTH**3
SPECIFIC_HEAT = HEAT_CAPACITY / MASS
HEAT_TRANSFER_COEFFICIENT = POWER / (AREA * TEMPERATURE)

# Unit symbols of the language and their SI factor and dimension.
SYMBOLS: dict[str, tuple[float, Dim]] = {
    "s": (1.0, TIME),
    "K": (1.0, TEMPERATURE),
    "W": (1.0, POWER),
    "J": (1.0, ENERGY),
    "V": (1.0, VOLTAGE),
    "A": (1.0, CURRENT),
    "ohm": (1.0, RESISTANCE),
    "Ω": (1.0, RESISTANCE),
    "H": (1.0, INDUCTANCE),
    "F": (1.0, CAPACITANCE),
    "m": (1.0, LENGTH),
    "Hz": (1.0, FREQUENCY),
    "g": (1e-3, MASS),  # the gram, so that `kg` reads as the kilogram
}
# Symbols that take no prefix (`mh` is nothing, and `m` before `in` is not milli).
UNPREFIXED: dict[str, tuple[float, Dim]] = {"min": (60.0, TIME), "h": (3600.0, TIME)}
SCALE_WORDS: dict[str, float] = {"%": 0.01, "ppm": 1e-6}
ABSOLUTE_CELSIUS = ("degC", "°C")
PREFIXES: dict[str, float] = {
    "f": 1e-15, "p": 1e-12, "n": 1e-9, "u": 1e-6, "µ": 1e-6, "μ": 1e-6,
    "m": 1e-3, "k": 1e3, "M": 1e6, "G": 1e9,
}
ZERO_CELSIUS = 273.15

# Every word that may stand for a unit; parameter names may not be one of these.
def is_unit_word(word: str) -> bool:
    try:
        _atom(word)
        return True
    except UnitError:
        return word in ABSOLUTE_CELSIUS


class UnitError(ValueError):
    """A unit text that cannot be read; `hint` suggests a fix."""

    def __init__(self, message: str, hint: str | None = None):
        super().__init__(message)
        self.hint = hint


def _atom(word: str) -> tuple[float, Dim]:
    if word in SYMBOLS:
        return SYMBOLS[word]
    if word in UNPREFIXED:
        return UNPREFIXED[word]
    if word in SCALE_WORDS:
        return SCALE_WORDS[word], NONE
    if len(word) > 1 and word[0] in PREFIXES and word[1:] in SYMBOLS:
        f, d = SYMBOLS[word[1:]]
        return PREFIXES[word[0]] * f, d
    raise UnitError(f"unknown unit `{word}`", hint=_suggest(word))


def _suggest(word: str) -> str | None:
    low = word.lower()
    for cand in ["ohm", "Hz", "degC"] + [p + s for p in PREFIXES for s in SYMBOLS] + list(SYMBOLS):
        if cand.lower() == low:
            return f"did you mean `{cand}`? (prefixes and symbols are case-sensitive)"
    return "units are s K degC W J V A ohm H F m Hz g, with prefixes f p n u m k M G, and min h % ppm"


_TOKEN = re.compile(r"\s*(?:(?P<num>\d+)|(?P<word>[A-Za-zµμΩ°%]+)|(?P<op>[*/^()\-]))")


@functools.lru_cache(maxsize=4096)  # a large mesh repeats a handful of units many thousand times
def parse_unit(text: str) -> tuple[float, Dim, bool]:
    """Read a unit text such as `W/(m*K)` or `degC`.

    Returns (factor, dimension, is_celsius). `is_celsius` is true only for a bare
    `degC`/`°C`, which means an absolute temperature (offset 273.15 K).
    """
    if text in ABSOLUTE_CELSIUS:
        return 1.0, TEMPERATURE, True
    tokens = []
    pos = 0
    while pos < len(text):
        m = _TOKEN.match(text, pos)
        if not m or m.end() == pos:
            raise UnitError(f"cannot read unit `{text}`")
        pos = m.end()
        tokens.append(m.group("num") or m.group("word") or m.group("op"))
    state = {"i": 0}

    def peek():
        return tokens[state["i"]] if state["i"] < len(tokens) else None

    def take():
        state["i"] += 1
        return tokens[state["i"] - 1]

    def primary():
        tok = take() if peek() is not None else None
        if tok == "(":
            f, d = product()
            if take() != ")" if peek() is not None else True:
                raise UnitError(f"unbalanced parenthesis in unit `{text}`")
        elif tok is not None and tok.isdigit():
            if tok != "1":
                raise UnitError(f"a number inside unit `{text}`", hint="only `1/...` is allowed")
            f, d = 1.0, NONE
        elif tok is not None and tok not in "*/^()-":
            if tok in ABSOLUTE_CELSIUS:
                raise UnitError(
                    f"`{tok}` may not appear inside a compound unit",
                    hint="write temperature differences in K, e.g. `W/K`",
                )
            f, d = _atom(tok)
        else:
            raise UnitError(f"cannot read unit `{text}`")
        if peek() == "^":
            take()
            sign = 1
            if peek() == "-":
                take()
                sign = -1
            p = take() if peek() is not None else None
            if p is None or not p.isdigit():
                raise UnitError(f"a power in unit `{text}` must be an integer")
            e = sign * int(p)
            f, d = f**e, d**e
        return f, d

    def product():
        f, d = primary()
        while peek() in ("*", "/"):
            op = take()
            f2, d2 = primary()
            if op == "*":
                f, d = f * f2, d * d2
            else:
                f, d = f / f2, d / d2
        return f, d

    f, d = product()
    if peek() is not None:
        raise UnitError(f"cannot read unit `{text}`")
    return f, d, False


# Readable names for the dimensions users meet, for messages and tables.
_NAMES: list[tuple[Dim, str]] = [
    (NONE, "1"), (TIME, "s"), (TEMPERATURE, "K"), (POWER, "W"), (ENERGY, "J"),
    (VOLTAGE, "V"), (CURRENT, "A"), (RESISTANCE, "ohm"), (CAPACITANCE, "F"),
    (INDUCTANCE, "H"), (FREQUENCY, "Hz"), (HEAT_CAPACITY, "J/K"),
    (THERMAL_CONDUCTANCE, "W/K"), (THERMAL_RESISTANCE, "K/W"), (SEEBECK, "V/K"),
    (LENGTH, "m"), (AREA, "m^2"), (RESISTIVITY, "ohm*m"), (CONDUCTIVITY, "W/(m*K)"),
    (PER_KELVIN, "1/K"), (MASS, "kg"), (DENSITY, "kg/m^3"), (SPECIFIC_HEAT, "J/(kg*K)"),
    (HEAT_TRANSFER_COEFFICIENT, "W/(m^2*K)"),
    (VOLTAGE / TIME, "V/s"), (CURRENT / TIME, "A/s"),
    (TEMPERATURE / TIME, "K/s"), (POWER / TIME, "W/s"), (ENERGY / TEMPERATURE**2, "J/K^2"),
]


def unit_name(d: Dim) -> str:
    """A readable unit for dimension `d`, e.g. `W/K`; falls back to base units."""
    for dim, name in _NAMES:
        if dim == d:
            return name
    # Next, one plain unit over or times another (`A/W`, not `s^3*A/(kg*m^2)`).
    simple = [(dim, name) for dim, name in _NAMES if name.isalpha()]
    for da, na in simple:
        for db, nb in simple:
            if da / db == d:
                return f"{na}/{nb}"
            if da * db == d:
                return f"{na}*{nb}"
    num, den = [], []
    for base, e in zip(_BASES, d.exps):
        if e == 0:
            continue
        txt = base if abs(e) == 1 else f"{base}^{abs(e)}"
        (num if e > 0 else den).append(txt)
    top = "*".join(num) or "1"
    if not den:
        return top
    return f"{top}/{den[0]}" if len(den) == 1 else f"{top}/({'*'.join(den)})"
