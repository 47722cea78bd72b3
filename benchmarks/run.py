"""Benchmark: plates of N × N cells through netgen, the outside simulator and the scipy floors.

    python benchmarks/run.py [--sizes 10 50 100 300] [--steps 1000] [--nonlinear 100]
                             [--spice-max 100] [--work DIR] [--json FILE]

For each size: the plate written as plain statements (and as one `plate` statement) is read
(`netgen check`) and run (`netgen run`) end to end; the run beyond reading is timed in-process;
the same matrices (`netgen matrices`) go through a bare fixed-step TR-BDF2 loop and through
scipy's solve_ivp (BDF); the exported netlist (`netgen export`) through `ngspice -b -r`. Every
measurement is its own process, so its time and peak memory (ru_maxrss) are its own. The
nonlinear case adds thermoelectric modules and a driver circuit to the plate and is compared
with its linear twin. Prints one table and the cost exponents; not part of the test suite.
"""
from __future__ import annotations

import argparse
import json
import math
import os
import platform
import re
import shutil
import subprocess
import sys
import threading
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))
import grids  # noqa: E402

PHASES = r"""
import json, sys, time
import numpy as np
t0 = time.perf_counter()
import netgen
from netgen.solve.steady import solve_dc
from netgen.solve.assembly import assemble
t1 = time.perf_counter()
d = netgen.load(sys.argv[1])
t2 = time.perf_counter()
res = d.run()
t3 = time.perf_counter()
if len(sys.argv) > 2:
    np.save(sys.argv[2], solve_dc(assemble(d), 0.0, impose=True))
print(json.dumps({"import": t1 - t0, "load": t2 - t1, "run": t3 - t2, "stats": res.stats,
                  "unknowns": len(assemble(d).names), "points": int(len(res.time))}))
"""


def measure(cmd: list[str], cwd: Path, timeout: float | None = None) -> dict:
    """Run one process; its wall time, peak resident memory (MB), exit code and output."""
    out_path, err_path = cwd / ".stdout", cwd / ".stderr"
    with open(out_path, "wb") as out, open(err_path, "wb") as err:
        t0 = time.perf_counter()
        p = subprocess.Popen(cmd, cwd=cwd, stdout=out, stderr=err)
        timer = threading.Timer(timeout, p.kill) if timeout else None
        if timer:
            timer.start()
        _, status, usage = os.wait4(p.pid, 0)
        seconds = time.perf_counter() - t0
        if timer:
            timer.cancel()
        p.returncode = os.waitstatus_to_exitcode(status)
    return {"seconds": seconds, "peak_mb": usage.ru_maxrss / 1024.0, "rc": p.returncode,
            "timed_out": bool(timeout) and seconds >= timeout * 0.999,
            "stdout": out_path.read_text(errors="replace"), "stderr": err_path.read_text(errors="replace")}


def netgen_cmd(*args) -> list[str]:
    return [sys.executable, "-m", "netgen.cli", *args]


def ok(m: dict, what: str) -> dict:
    if m["rc"] != 0 and not m.get("timed_out"):
        raise SystemExit(f"{what} failed (exit {m['rc']}):\n{m['stderr'][-2000:]}")
    return m


def case(work: Path, name: str, text: str, steps: int, spice: bool, floors: bool, spice_timeout: float) -> dict:
    d = work / name
    d.mkdir(parents=True, exist_ok=True)
    f = d / f"{name}.etn"
    f.write_text(text)
    r: dict = {"case": name, "statements": sum(1 for line in text.splitlines() if line.strip())}
    r["check"] = ok(measure(netgen_cmd("check", f.name), d), f"netgen check {name}")
    r["run"] = ok(measure(netgen_cmd("run", f.name, "--quiet"), d), f"netgen run {name}")
    ph = ok(measure([sys.executable, "-c", PHASES, f.name, "x0.npy"], d), f"phases {name}")
    r["phases"] = json.loads(ph["stdout"].strip().splitlines()[-1])
    r["unknowns"] = r["phases"]["unknowns"]
    if floors:
        ok(measure(netgen_cmd("matrices", f.name, "-o", "."), d), f"netgen matrices {name}")
        for kind in ("loop", "ivp"):
            m = ok(measure([sys.executable, str(HERE / "floor.py"), kind, ".", str(steps), "1.0"], d), f"{kind} {name}")
            m["result"] = json.loads(m["stdout"].strip().splitlines()[-1])
            r[kind] = m
    if spice:
        ok(measure(netgen_cmd("export", f.name, "-o", f"{name}.cir"), d), f"netgen export {name}")
        m = measure(["ngspice", "-b", "-r", "out.raw", f"{name}.cir"], d, spice_timeout)
        if m["rc"] != 0 and not m["timed_out"]:
            raise SystemExit(f"ngspice failed on {name}:\n{m['stderr'][-2000:]}{m['stdout'][-2000:]}")
        hit = re.search(r"Total analysis time \(seconds\) = ([0-9.eE+-]+)", m["stdout"] + m["stderr"])
        m["analysis"] = float(hit.group(1)) if hit else None
        r["spice"] = m
        for p in (d / "out.raw",):
            p.unlink(missing_ok=True)
    return r


def plate_case(work: Path, n: int, steps: int) -> dict:
    d = work / f"plate{n}"
    d.mkdir(parents=True, exist_ok=True)
    f = d / f"plate{n}.etn"
    f.write_text(grids.plate(n, steps))
    return {"case": f"plate{n}", "check": ok(measure(netgen_cmd("check", f.name), d), "check plate"),
            "run": ok(measure(netgen_cmd("run", f.name, "--quiet"), d), "run plate")}


def fmt_t(m: dict | None, key="seconds") -> str:
    if m is None:
        return "-"
    if m.get("timed_out"):
        return f"> {m[key]:.0f}"
    v = m[key]
    return f"{v:.3g}" if v < 10 else f"{v:.0f}"


def table(results: list[dict], plates: dict) -> str:
    head = ("| case | unknowns | check s (MB) | plate check s | run s (MB) | plate run s (MB) | beyond reading s "
            "| floor loop s (MB) | × floor | solve_ivp BDF s (MB) | ngspice s (MB) | ngspice ÷ run |")
    rows = [head, "|" + "|".join(["---"] * (head.count("|") - 1)) + "|"]
    for r in results:
        p = plates.get(r["case"])
        beyond = r["phases"]["run"]
        loop, ivp, sp = r.get("loop"), r.get("ivp"), r.get("spice")
        cells = [
            r["case"], str(r["unknowns"]),
            f"{fmt_t(r['check'])} ({r['check']['peak_mb']:.0f})",
            fmt_t(p["check"]) if p else "-",
            f"{fmt_t(r['run'])} ({r['run']['peak_mb']:.0f})",
            f"{fmt_t(p['run'])} ({p['run']['peak_mb']:.0f})" if p else "-",
            f"{beyond:.3g}",
            f"{loop['result']['seconds']:.3g} ({loop['peak_mb']:.0f})" if loop else "-",
            f"{beyond / loop['result']['seconds']:.2f}" if loop else "-",
            f"{ivp['result']['seconds']:.3g} ({ivp['peak_mb']:.0f})" if ivp else "-",
            f"{fmt_t(sp)} ({sp['peak_mb']:.0f})" if sp else "skipped",
            (("> " if sp.get("timed_out") else "") + _ratio(sp["seconds"] / r["run"]["seconds"])) if sp else "-",
        ]
        rows.append("| " + " | ".join(cells) + " |")
    return "\n".join(rows)


def _ratio(v: float) -> str:
    return f"{v:.2g}" if v < 10 else f"{v:.0f}"


def exponent(results: list[dict], a: int, b: int, get) -> float | None:
    by = {r["case"]: r for r in results}
    ra, rb = by.get(f"grid{a}"), by.get(f"grid{b}")
    if not ra or not rb:
        return None
    return math.log(get(rb) / get(ra)) / math.log(rb["unknowns"] / ra["unknowns"])


def machine() -> str:
    cpu = platform.processor() or platform.machine()
    try:
        for line in Path("/proc/cpuinfo").read_text().splitlines():
            if line.startswith("model name"):
                cpu = line.split(":", 1)[1].strip()
                break
    except OSError:
        pass
    mem = ""
    try:
        kb = int(Path("/proc/meminfo").read_text().split()[1])
        mem = f", {kb / 2**20:.0f} GB"
    except (OSError, ValueError, IndexError):
        pass
    import numpy
    import scipy

    spice = subprocess.run(["ngspice", "-v"], capture_output=True, text=True).stdout if shutil.which("ngspice") else ""
    ver = re.search(r"ngspice-\S+", spice)
    return (f"{cpu}, {os.cpu_count()} cores{mem}; Python {platform.python_version()}, numpy {numpy.__version__}, "
            f"scipy {scipy.__version__}" + (f", {ver.group(0)}" if ver else "") +
            f"; load average at the end {os.getloadavg()[0]:.2f}")


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--sizes", type=int, nargs="+", default=[10, 50, 100, 300])
    ap.add_argument("--steps", type=int, default=1000, help="seconds simulated, reported every second")
    ap.add_argument("--nonlinear", type=int, nargs="*", default=[50, 100], help="sizes of the case with modules")
    ap.add_argument("--spice-max", type=int, default=100, help="largest size given to ngspice")
    ap.add_argument("--nonlinear-spice-max", type=int, default=50, help="largest case with modules given to ngspice")
    ap.add_argument("--spice-timeout", type=float, default=3600.0)
    ap.add_argument("--no-floors", action="store_true")
    ap.add_argument("--work", type=Path, default=Path("benchmark-work"))
    ap.add_argument("--json", type=Path, default=None, help="also write the measurements here")
    args = ap.parse_args(argv)
    work = args.work.resolve()
    work.mkdir(parents=True, exist_ok=True)
    spice_ok = shutil.which("ngspice") is not None
    results, plates, notes = [], {}, []
    for n in args.sizes:
        spice = spice_ok and n <= args.spice_max
        if spice_ok and not spice:
            notes.append(f"ngspice skipped at {n}²: above --spice-max {args.spice_max} (it grows much faster than "
                         "linearly; at 100² it already takes minutes)")
        print(f"grid {n} x {n} ...", file=sys.stderr, flush=True)
        r = case(work, f"grid{n}", grids.plain(n, args.steps), args.steps, spice, not args.no_floors,
                 args.spice_timeout)
        results.append(r)
        plates[r["case"]] = plate_case(work, n, args.steps)
    for n in args.nonlinear:
        print(f"grid {n} x {n} with modules ...", file=sys.stderr, flush=True)
        spice = spice_ok and n <= min(args.spice_max, args.nonlinear_spice_max)
        if spice_ok and not spice:
            notes.append(f"ngspice skipped for the modules at {n}²: above --nonlinear-spice-max {args.nonlinear_spice_max}")
        results.append(case(work, f"modules{n}", grids.modules(n, args.steps), args.steps, spice, False,
                            args.spice_timeout))
    if not spice_ok:
        notes.append("ngspice not found: the outside simulator was not run")
    print(f"\nmachine: {machine()}")
    print(f"{args.steps} s simulated, results every 1 s; times in seconds, peak resident memory in MB\n")
    print(table(results, plates))
    for r in results:
        st = r["phases"]["stats"]
        print(f"\n{r['case']}: netgen {st.get('steps')} steps, {st.get('rejected')} rejected, "
              f"{st.get('factorizations')} factorisations; reading {r['phases']['load']:.3g} s, "
              f"import {r['phases']['import']:.3g} s", end="")
        if "ivp" in r:
            iv = r["ivp"]["result"]
            print(f"; solve_ivp {iv['steps']} points, {iv['nfev']} evaluations, {iv['factorizations']} LU", end="")
        if r.get("spice") and r["spice"].get("analysis"):
            print(f"; ngspice analysis {r['spice']['analysis']:.3g} s", end="")
    print()
    by = {r["case"]: r for r in results}
    for a, b in ((50, 300), (50, 100), (100, 300)):
        e1 = exponent(results, a, b, lambda r: r["phases"]["run"])
        e2 = exponent(results, a, b, lambda r: r["run"]["seconds"])
        if e1 is not None:
            print(f"cost exponent {a}² → {b}² (time ∝ unknowns^p): run beyond reading p = {e1:.2f}, "
                  f"netgen run end to end p = {e2:.2f}")
    for n in args.nonlinear:
        nl, lin = by.get(f"modules{n}"), by.get(f"grid{n}")
        if nl and lin:
            print(f"nonlinear {n}² ÷ its linear twin: run beyond reading {nl['phases']['run'] / lin['phases']['run']:.2f}, "
                  f"end to end {nl['run']['seconds'] / lin['run']['seconds']:.2f}")
    for note in notes:
        print(f"note: {note}")
    if args.json:
        slim = [{k: ({kk: vv for kk, vv in v.items() if kk not in ("stdout", "stderr")} if isinstance(v, dict) else v)
                 for k, v in r.items()} for r in results]
        args.json.write_text(json.dumps({"machine": machine(), "results": slim,
                                         "plates": {k: {kk: {x: y for x, y in vv.items() if x not in ("stdout", "stderr")}
                                                        for kk, vv in v.items() if isinstance(vv, dict)}
                                                    for k, v in plates.items()}}, indent=1))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
