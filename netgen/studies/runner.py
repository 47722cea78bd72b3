"""Running a study's tasks on an executor: rows kept by run, streamed to disk as they finish,
a progress callback, and an interruption (Ctrl-C) that keeps what finished."""
from __future__ import annotations

import csv
import io
import json
import math
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path

from netgen.model.jsonsafe import jsonable
from netgen.studies.columns import ERROR, Row, Task, union

Progress = Callable[[int, int, int], None]  # (finished, total, failed)


@dataclass
class Outcome:
    """The rows of a study by run index (those that finished), of `total` runs."""

    total: int
    rows: dict[int, Row] = field(default_factory=dict)
    interrupted: bool = False

    @property
    def finished(self) -> int:
        return len(self.rows)

    @property
    def failed(self) -> int:
        return sum(1 for r in self.rows.values() if r.error is not None)

    def ordered(self) -> list[Row]:
        return [self.rows[i] for i in sorted(self.rows)]

    def columns(self) -> list[str]:
        return union(list(self.rows.values()))

    def how_far(self) -> str:
        return f"{self.finished} of {self.total} runs finished" + (f", {self.failed} failed" if self.failed else "")


def execute(tasks: list[Task], ex, lead: Callable[[int], dict], progress: Progress | None = None,
            stream: Path | None = None) -> Outcome:
    """Run `tasks` on `ex`. Each finished row is appended at once to `stream` (JSON lines: the
    row's `lead` columns, its values, its error), so that even a study killed outright leaves its
    finished runs on disk. Ctrl-C stops the study and keeps what finished (`interrupted`)."""
    out = Outcome(len(tasks))
    f = open(stream, "w", encoding="utf-8") if stream is not None else None  # noqa: SIM115 - closed below
    try:
        for row in ex.rows(tasks):
            out.rows[row.index] = row
            if f is not None:
                f.write(json.dumps(jsonable({**lead(row.index), **row.values, **({ERROR: row.error} if row.error else {})}))
                        + "\n")
                f.flush()
            if progress is not None:
                progress(out.finished, out.total, out.failed)
    except KeyboardInterrupt:
        out.interrupted = True
    finally:
        ex.close()
        if f is not None:
            f.close()
    return out


def table(out: Outcome, lead: Callable[[int], dict]) -> tuple[list[str], list[dict]]:
    """The finished rows in run order as dicts over one list of columns: the lead columns, the
    measured ones, then `error` if any run failed."""
    rows = out.ordered()
    lead_cols = list(lead(rows[0].index)) if rows else []
    cols = lead_cols + out.columns() + ([ERROR] if out.failed else [])
    body = []
    for r in rows:
        d = {**lead(r.index), **r.values}
        if r.error is not None:
            d[ERROR] = r.error
        body.append(d)
    return cols, body


def csv_text(cols: list[str], body: list[dict]) -> str:
    """One row a run; numbers in the shortest text that reads back to the same float; a value
    a run did not give is empty."""
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(cols)
    for d in body:
        w.writerow([_cell(d.get(c)) for c in cols])
    return buf.getvalue()


def _cell(v) -> str:
    if v is None:
        return ""
    if isinstance(v, float):
        return "" if math.isnan(v) else repr(v)
    return str(v)
