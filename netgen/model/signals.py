"""Signals as values: `T(die)`, `V(a, b)`, `I(coil)`, `Q(link)`, `Q(tec.a)`, read once from text."""
from __future__ import annotations

import functools
import re
from dataclasses import dataclass, field

# U: a controller's output or state, in the unit of the source it drives (one of A, V, W).
SIGNAL_UNITS = {"T": "K", "V": "V", "I": "A", "Q": "W", "P": "W", "U": "", "S": "J/K", "E": "J"}
KINDS = tuple(SIGNAL_UNITS)
_FORM = re.compile(r"\s*([A-Za-z]+)\s*\(\s*([^(),\s]+)\s*(?:,\s*([^(),\s]+)\s*)?\)\s*")


def kind_of(signal) -> str:
    """The kind (T V I Q P S E) of a signal, given as a Signal or as text; "" for anything else."""
    if isinstance(signal, Signal):
        return signal.kind
    try:
        return parse(str(signal)).kind
    except ValueError:
        return ""


def signal_unit(signal) -> str:
    """The SI unit of a signal (a Signal or its text), e.g. `K` for `T(die)`; "" for anything else."""
    return SIGNAL_UNITS.get(kind_of(signal), "")


@dataclass
class Signal:
    """A result signal: its kind (T V I Q P) and the node(s) or the element it names.

    `loc` is where it was written and `written` its spelling there (the column heading); two
    signals are the same signal whatever their spelling. A module side, `Q(tec.a)`, keeps the
    whole name in `args`: element names may hold dots (`stage1.tec`), so the side is told apart
    from the name only against a design (`element_and_side`).
    """

    kind: str
    args: tuple[str, ...]
    loc: object = field(default=None, compare=False)
    written: str = field(default="", compare=False)

    @property
    def text(self) -> str:
        return self.written or self.canonical

    @property
    def canonical(self) -> str:
        return f"{self.kind}({', '.join(self.args)})"

    @property
    def unit(self) -> str:
        return SIGNAL_UNITS.get(self.kind, "")

    def __hash__(self):
        return hash((self.kind, self.args))

    def element_and_side(self, has_element) -> tuple[str, str | None]:
        """(element name, side or None) of an I, P or Q signal; `has_element(name)` tells
        whether the design has an element of that name."""
        name = self.args[0]
        if self.kind == "Q" and "." in name and not has_element(name):
            base, side = name.rsplit(".", 1)
            return base, side
        return name, None


@functools.lru_cache(maxsize=65536)
def parse(text: str) -> Signal:
    """The Signal written as `text` (`T(x)`, `V(a, b)`, `Q(m.a)`). Raises ValueError otherwise."""
    m = _FORM.fullmatch(text)
    if m is None or m.group(1) not in SIGNAL_UNITS:
        raise ValueError(f"`{text}` is not a signal")
    args = tuple(a for a in m.group(2, 3) if a is not None)
    return Signal(m.group(1), args)


def as_signal(s) -> Signal:
    return s if isinstance(s, Signal) else parse(str(s))
