"""`--json`: one JSON document on standard output for `check`, `run` and `verify` (the studies
write theirs in netgen/studies). NaN and infinities are null."""
from __future__ import annotations

import json

from netgen.model.design import Design, Modes, Steady, Transient
from netgen.model.jsonsafe import jsonable
from netgen.outputs.files import summary


def dumps(doc: dict) -> str:
    return json.dumps(jsonable(doc), indent=1, allow_nan=False)


def design_document(d: Design) -> dict:
    """`netgen check --json`: what the design holds, in SI."""
    analyses = []
    for a in d.analyses:
        if isinstance(a, Steady):
            analyses.append({"analysis": "steady"})
        elif isinstance(a, Transient):
            analyses.append({"analysis": "transient", "until": a.until, "step": a.step})
        elif isinstance(a, Modes):
            analyses.append({"analysis": "modes"})
    return {
        "file": d.file, "title": d.title,
        "parameters": {n: {"value": v, "unit": u} for n, (v, u) in d.params.items()},
        "spreads": {n: {"law": s.law, "share": s.share} for n, s in getattr(d, "spreads", {}).items()},
        "nodes": [{"name": n.name, "domain": n.domain, "capacity": n.capacity, "start": n.start}
                  for n in d.nodes.values()],
        "grounds": list(d.grounds),
        "elements": [{"name": e.name, "kind": getattr(type(e), "statement", type(e).__name__.lower()),
                      "line": e.loc.line} for e in d.elements],
        "analyses": analyses,
        "records": [s.written or str(s) for s in d.records],
        "expectations": [{"line": e.loc.line, "text": e.text} for e in d.expectations],
    }


def run_document(res) -> dict:
    """`netgen run --json`: the summary of summary.json, and whether every check passed."""
    return {**summary(res), "passed": res.passed}


def verify_document(outcomes: list, total: str, code: int) -> dict:
    """`netgen verify --json`: one entry per design, in the order given, and the total."""
    designs = []
    for o in outcomes:
        entry = {"file": str(o.path), "status": o.status, "elapsed": o.elapsed}
        if o.error is not None:
            entry["error"] = o.error
        else:
            entry["expectations"] = [{"text": c.text, "line": c.loc.line if c.loc else None, "measured": c.measured,
                                      "limit": c.limit, "unit": c.unit, "passed": c.passed} for c in o.checks]
            entry["baseline"] = ("updated: " + o.update) if o.update else (
                "none" if o.comparison is None else ("ok" if o.comparison.passed else "FAIL"))
            if o.comparison is not None:
                entry["baseline_summary"] = o.comparison.summary()
        designs.append(entry)
    return {"designs": designs, "total": total, "exit": code}
