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
        lines.append(f"{where}error: {_shorten_quotes(self.message)}")
        if self.loc is not None and getattr(self.loc, "text", ""):
            text, col = _window(self.loc.text.rstrip("\n"), max(1, self.loc.col))
            lines.append(f"    {text}")
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


# A long line is echoed as a window around the caret, and a long quoted name in a message is
# shortened, so that a bad line of megabytes prints a few lines, not megabytes.
WINDOW, QUOTED = 100, 120


def _window(text: str, col: int) -> tuple[str, int]:
    """The part of `text` around column `col` (1-based), with `...` where it is cut, and the
    caret's column in that part."""
    if len(text) <= 2 * WINDOW:
        return text, col
    start = max(0, min(col - 1 - WINDOW // 2, len(text) - 2 * WINDOW))
    end = start + 2 * WINDOW
    head = "..." if start > 0 else ""
    return head + text[start:end] + ("..." if end < len(text) else ""), col - start + len(head)


def _shorten_quotes(message: str) -> str:
    """Each `quoted` part longer than QUOTED characters shortened to its start and end, with
    its length said after it."""
    parts = message.split("`")
    for i in range(1, len(parts) - 1, 2):  # the odd parts are inside backquotes
        q = parts[i]
        if len(q) > QUOTED:
            parts[i] = f"{q[:QUOTED - 20]}...{q[-10:]}"
            parts[i + 1] = f" ({len(q)} characters)" + parts[i + 1]
    return "`".join(parts)


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
