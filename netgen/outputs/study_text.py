"""Printed output of design studies: the progress line on a terminal and the table of rows."""
from __future__ import annotations

from netgen.outputs.text import StatusLine

MAX_TABLE_ROWS = 60  # longer tables are in the CSV file; the terminal shows their start and end


class StudyProgress(StatusLine):
    """`sweep: 37 of 121 runs, 1 failed, 12 s, about 27 s left` on one line of standard error."""

    def __init__(self, what: str, stream=None):
        super().__init__(stream)
        self.what = what

    def __call__(self, finished: int, total: int, failed: int) -> None:
        elapsed = self.due(force=finished >= total)
        if elapsed is None:
            return
        left = elapsed * (total - finished) / finished if finished else float("nan")
        self.show(f"{self.what}: {finished} of {total} runs" + (f", {failed} failed" if failed else "")
                  + f", {elapsed:.0f} s" + (f", about {left:.0f} s left" if finished < total else ""))


def cell(v) -> str:
    if v is None:
        return ""
    if isinstance(v, float):
        return "" if v != v else f"{v:.6g}"
    return str(v)


def rows_table(cols: list[str], body: list[dict]) -> str:
    """Aligned columns; an error is shown in full at the end of its row."""
    shown = body if len(body) <= MAX_TABLE_ROWS else body[: MAX_TABLE_ROWS // 2] + [None] + body[-MAX_TABLE_ROWS // 2:]
    plain = [c for c in cols if c != "error"]
    cells = [[cell(d.get(c)) for c in plain] if d is not None else ["..."] + [""] * (len(plain) - 1) for d in shown]
    widths = [max([len(c)] + [len(r[k]) for r in cells]) for k, c in enumerate(plain)]
    lines = ["  ".join(c.rjust(w) for c, w in zip(plain, widths)).rstrip()]
    for d, r in zip(shown, cells):
        line = "  ".join(x.rjust(w) for x, w in zip(r, widths))
        if d is not None and d.get("error"):
            line += f"  failed: {d['error']}"
        lines.append(line.rstrip())
    return "\n".join(lines)


def yield_lines(yields: list[dict]) -> list[str]:
    """`line 12: expect final T(die) < 0 degC: yield 97.0 % (95 % interval 93.1 % to 98.8 %), 485 of 500`."""
    return [f"line {y['line']}: {y['expectation']}: yield {100 * y['yield']:.1f} % (95 % interval "
            f"{100 * y['low']:.1f} % to {100 * y['high']:.1f} %), {y['passed']} of {y['runs']} runs pass"
            for y in yields]


def stats_table(stats: dict) -> str:
    """One line per measured column: mean, std, p1, p50, p99, the worst value and its run."""
    head = ["column", "mean", "std", "p1", "p50", "p99", "worst", "run"]
    cells = [[c, *(f"{s[k]:.6g}" for k in ("mean", "std", "p1", "p50", "p99")), f"{s['worst']['value']:.6g}",
              str(s["worst"]["run"])] for c, s in stats.items()]
    widths = [max([len(h)] + [len(r[k]) for r in cells]) for k, h in enumerate(head)]
    lines = ["  ".join(h.ljust(w) if k == 0 else h.rjust(w) for k, (h, w) in enumerate(zip(head, widths)))]
    lines += ["  ".join(x.ljust(w) if k == 0 else x.rjust(w) for k, (x, w) in enumerate(zip(r, widths))) for r in cells]
    return "\n".join(lines)
