"""JUnit XML for CI systems: one test case per expectation, audit and baseline comparison."""
from __future__ import annotations

import xml.etree.ElementTree as ET
from pathlib import Path

from netgen import __version__
from netgen.outputs.text import check_text
from netgen.regression.verify import Outcome


def _case(suite: ET.Element, classname: str, name: str, seconds: float = 0.0) -> ET.Element:
    return ET.SubElement(suite, "testcase", classname=classname, name=name, time=f"{seconds:.3f}")


def class_name(path) -> str:
    """A path-based class name: `examples/detector_cooler.etn` → `examples.detector_cooler`
    (relative to the working directory where the path lies under it; dots in a name become `_`)."""
    p = Path(path)
    if p.is_absolute():
        try:
            p = p.resolve().relative_to(Path.cwd().resolve())
        except ValueError:
            pass
    parts = [q for q in p.with_suffix("").parts if q not in ("..", ".", p.anchor)]
    return ".".join(q.replace(".", "_") for q in parts) or p.stem


def _suite(o: Outcome) -> ET.Element:
    suite = ET.Element("testsuite", name=str(o.path), time=f"{o.elapsed:.3f}")
    props = ET.SubElement(suite, "properties")
    ET.SubElement(props, "property", name="netgen", value=__version__)
    for k, v in o.settings.items():
        ET.SubElement(props, "property", name=f"set {k}", value=v)
    cls = class_name(o.path)
    if o.error is not None:
        case = _case(suite, cls, "run", o.elapsed)
        ET.SubElement(case, "error", message=o.error.split("\n")[0]).text = o.error
        return suite
    # The design is solved once for all its checks: each carries an equal share of that time, and
    # the baseline case the comparison's, so the cases add up to the suite's time.
    share = max(o.elapsed - o.baseline_seconds, 0.0) / max(len(o.checks), 1)
    for c in o.checks:
        name = (f"line {c.loc.line}: " if c.loc is not None else "") + c.text
        case = _case(suite, cls, name, share)
        if not c.passed:
            ET.SubElement(case, "failure", message=check_text(c)).text = c.detail or check_text(c)
        elif c.detail:
            ET.SubElement(case, "system-out").text = c.detail
    case = _case(suite, cls, "baseline", o.baseline_seconds if o.checks else o.elapsed)
    if o.update is not None:
        ET.SubElement(case, "system-out").text = f"baseline {o.update}: {o.baseline_file}"
    elif o.comparison is None:
        ET.SubElement(case, "skipped", message=f"no baseline at {o.baseline_file}")
    else:
        lines = [f"{d.signal}: {d.deviation:+.6g} {d.unit} {d.where}, allowed ±{d.allowed:.6g} {d.unit}"
                 for d in o.comparison.diffs]
        body = "\n".join(o.comparison.problems + lines)
        if o.comparison.passed:
            ET.SubElement(case, "system-out").text = body
        else:
            ET.SubElement(case, "failure", message=o.comparison.summary()).text = body
    return suite


def junit_xml(outcomes: list[Outcome]) -> str:
    """The whole run as one <testsuites> document, one <testsuite> per design."""
    root = ET.Element("testsuites", name="netgen verify")
    totals = {"tests": 0, "failures": 0, "errors": 0, "skipped": 0}
    for o in outcomes:
        suite = _suite(o)
        cases = suite.findall("testcase")
        counts = {
            "tests": len(cases),
            "failures": sum(c.find("failure") is not None for c in cases),
            "errors": sum(c.find("error") is not None for c in cases),
            "skipped": sum(c.find("skipped") is not None for c in cases),
        }
        for k, v in counts.items():
            suite.set(k, str(v))
            totals[k] += v
        root.append(suite)
    for k, v in totals.items():
        root.set(k, str(v))
    root.set("time", f"{sum(o.elapsed for o in outcomes):.3f}")
    ET.indent(root)
    return '<?xml version="1.0" encoding="UTF-8"?>\n' + ET.tostring(root, encoding="unicode") + "\n"
