"""Element kinds, one module each, and the registry that lists them.

To add a kind: write its module (see `base.Kind` for what it provides), add its grammar rule
to `grammar/etn.lark` and its entry to `grammar/language.md`, and list it in `KINDS` below.
The reader, the assembler, the signals, the checks and the netlist writer find it here.
"""
from __future__ import annotations

from netgen.elements.base import THERMAL_REF, EnergyTerm, Kind, TwoTerminal
from netgen.elements.capacitor import Capacitor
from netgen.elements.controller import Controller
from netgen.elements.convection import Convection
from netgen.elements.diode import Diode
from netgen.elements.fixed import Fixed
from netgen.elements.heat import Heat
from netgen.elements.inductor import Inductor
from netgen.elements.link import Link
from netgen.elements.radiation import Radiation
from netgen.elements.resistor import Resistor, Tempco
from netgen.elements.source import CurrentSource, VoltageSource
from netgen.elements.switch import Switch
from netgen.elements.thermoelectric import Thermoelectric

# In the order their branch unknowns and stamps are laid out.
KINDS: tuple[type[Kind], ...] = (
    Link, Heat, Fixed, Resistor, Capacitor, Inductor, VoltageSource, CurrentSource, Switch, Thermoelectric,
    Radiation, Convection, Controller, Diode,
)

# Statement keyword → the function that reads it (kinds sharing a statement share its reader).
READERS = {k.statement: k.read for k in KINDS}

__all__ = ["KINDS", "READERS", "Kind", "TwoTerminal", "EnergyTerm", "THERMAL_REF", "Tempco",
           *(k.__name__ for k in KINDS)]
