"""Parameter overrides: `--set NAME=VALUE` on the command line, `netgen.load(path, {NAME: value})`
in the Python API. Each replaces the value of a top-level `let NAME = ...`.

A value is text, read as the right side of a `let` line ("1.5 A", "2 * P", "step(0 A, 1 A, 1 s)"),
or, from the API only, a number: SI in the parameter's own dimension (1.5 for a current is 1.5 A,
300 for a temperature is 300 K). A number replaces only a parameter that is a plain quantity; a
parameter that varies in time takes text.
"""
from __future__ import annotations

import math
import numbers
from collections.abc import Mapping

from lark.exceptions import UnexpectedInput

from netgen.model import units as U
from netgen.model.design import Loc
from netgen.model.errors import NetgenError
from netgen.model.expr import Const
from netgen.language.expressions import ExprReader, Typed
from netgen.language.grammar import parser
from netgen.language.plain_lines import MAX_DEPTH, TooDeep

COMMAND_LINE, API = "--set", "override"
_API_HINT = 'give a number in SI units or text with its unit, e.g. {"I_drive": 1.5} or {"I_drive": "1.5 A"}'


def _is_number(value) -> bool:
    return isinstance(value, numbers.Real) and not isinstance(value, bool)


class Overrides(dict):
    """Override values by parameter name. `flag` is how messages name them: `--set` for the
    command line (whose values are always text), `override` for the API."""

    def __init__(self, values: Mapping | None = None, flag: str | None = None):
        super().__init__(values or {})
        self.flag = flag or getattr(values, "flag", COMMAND_LINE)

    def _where(self, name: str) -> str:
        """`--set P=3 K` on the command line (as the user typed it), `override P` in the API."""
        return f"--set {name}={self[name]}" if self.flag == COMMAND_LINE else f"override {name}"

    def read(self, name: str, in_file: Typed, params: dict[str, Typed]) -> Typed:
        """The value that replaces `let name = ...`, whose own value read as `in_file`; checked
        against its dimension. Raises NetgenError (with no location: the value is not in the file)."""
        value = self[name]
        if isinstance(value, str):
            return self._text(name, value, in_file, params)
        if not in_file.constant:
            raise NetgenError(
                f"{self._where(name)}: `{name}` varies in time in the design, so a number cannot replace it",
                None, f'give its new value as text, as on a `let` line, e.g. {{"{name}": "step(...)"}} '
                f'or a constant with its unit')
        v = float(value)
        if not math.isfinite(v):
            raise NetgenError(f"{self._where(name)}: {value!r} is not a finite number", None)
        return Typed(Const(v), in_file.dim, weight=in_file.weight)  # SI in the parameter's dimension (kelvin for a temperature)

    def _text(self, name: str, text: str, in_file: Typed, params: dict[str, Typed]) -> Typed:
        where = self._where(name)
        shown = "" if self.flag == COMMAND_LINE else f" {text!r}"
        try:
            tree = parser().parse(text, start="expr")
        except TooDeep as e:
            raise NetgenError(f"{where}: the value{shown} nests {e.depth} levels deep, and netgen reads at most "
                              f"{MAX_DEPTH}", None,
                              "give a simpler value, or compute it in the file with `let`") from None
        except UnexpectedInput:
            hint = "write a number with its unit, e.g. --set I_drive=1.5A" if self.flag == COMMAND_LINE else _API_HINT
            raise NetgenError(f"{where}: cannot read the value{shown}", None, hint) from None
        try:
            typed = ExprReader(params, lambda _t: Loc(self.flag, 1, 1, text)).read(tree)
        except NetgenError as e:
            raise NetgenError(f"{where}: {e.message}", None, e.hint) from None
        if typed.dim != in_file.dim and typed.dim.dimensionless:
            unit = U.unit_name(in_file.dim)
            raise NetgenError(
                f"{where}: `{name}` is in {unit}, the value given{shown} has no unit", None,
                f"give it a unit: {unit}" + (f", e.g. --set {name}={text}{unit}" if self.flag == COMMAND_LINE else ""))
        if typed.dim != in_file.dim:
            raise NetgenError(
                f"{where}: `{name}` is in {U.unit_name(in_file.dim)}, the value given{shown} is in "
                f"{U.unit_name(typed.dim)}", None)
        if typed.constant and not typed.degc and typed.weight is not None:
            typed.weight = in_file.weight  # a number in K takes the place of what the file wrote
        return typed


def from_api(overrides) -> Overrides | None:
    """The `overrides` argument of `netgen.load`, checked: a mapping of parameter names to text or
    numbers (None or empty: no overrides)."""
    if overrides is None:
        return None
    if not isinstance(overrides, Mapping):
        raise NetgenError(
            f"overrides: expected a dict of parameter names to values, not {type(overrides).__name__}", None,
            _API_HINT)
    for name, value in overrides.items():
        if not isinstance(name, str):
            raise NetgenError(f"override {name!r}: a parameter name is text, not {type(name).__name__}", None,
                              _API_HINT)
        if not (isinstance(value, str) or _is_number(value)):
            raise NetgenError(
                f"override {name}: expected a number (SI) or text with a unit, not {type(value).__name__} "
                f"{value!r}", None, _API_HINT)
    return Overrides(overrides, API)
