"""The one error root: located user errors, printed as file:line:col with the line, a caret and a hint."""
from __future__ import annotations


class NetgenError(Exception):
    """An error the user caused or can act on. `loc` is a design.Loc or None."""

    def __init__(self, message: str, loc=None, hint: str | None = None, notes: list[str] | None = None):
        super().__init__(message)
        self.message = message
        self.loc = loc
        self.hint = hint
        self.notes = notes or []

    def render(self) -> str:
        lines = []
        where = f"{self.loc}: " if self.loc is not None else ""
        lines.append(f"{where}error: {self.message}")
        if self.loc is not None and getattr(self.loc, "text", ""):
            text = self.loc.text.rstrip("\n")
            lines.append(f"    {text}")
            col = max(1, self.loc.col)
            # Keep tabs so the caret lines up under the same characters.
            pad = "".join(ch if ch == "\t" else " " for ch in text[: col - 1])
            lines.append(f"    {pad}^")
        for note in self.notes:
            lines.append(f"  note: {note}")
        if self.hint:
            lines.append(f"  hint: {self.hint}")
        return "\n".join(lines)

    def __str__(self) -> str:
        return self.render()


class NetgenErrors(NetgenError):
    """Several located errors found in one pass; rendered one after another."""

    def __init__(self, errors: list[NetgenError]):
        super().__init__(errors[0].message, errors[0].loc, errors[0].hint)
        self.errors = errors

    def render(self) -> str:
        body = "\n".join(e.render() for e in self.errors)
        n = len(self.errors)
        return body + (f"\n{n} errors" if n > 1 else "")


class SolveError(NetgenError):
    """A solve that did not succeed: no convergence, a singular system, a step-size collapse."""
