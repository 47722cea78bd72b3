"""Benchmark: plates of N × N cells through netgen, the outside simulator and the scipy floors.

    python benchmarks/run.py [--sizes 50 100 200 300 500] [--steps 1000] [--nonlinear 50]
                             [--spice-max 100] [--work DIR] [--json FILE] [--readme]

For each size: the plate written as plain statements (and as one `plate` statement) is read
(`netgen check`) and run (`netgen run`) end to end; the run beyond reading is timed in-process;
the same matrices (`netgen matrices`) go through the one-solve floor (trapezoidal rule, one LU,
one solve a step), the same-method floor (a bare fixed-step TR-BDF2 loop) and scipy's solve_ivp
(BDF); the exported netlist (`netgen export`) through `ngspice -b -r`, once with the tolerances
it states and once with the simulator's defaults. Every measurement is its own process, so its
CPU time (user + system, from wait4) and peak memory (ru_maxrss) are its own. The
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
import accuracy  # noqa: E402
import grids  # noqa: E402

PHASES = r"""
import json, sys, time
import numpy as np
t0 = time.process_time()
import netgen
import netgen.api  # what `netgen.load` imports on first use: timed as import, not as reading
from netgen.solve.steady import solve_dc
from netgen.solve.assembly import assemble
from netgen.solve import transient
t1 = time.process_time()
d = netgen.load(sys.argv[1])
t2 = time.process_time()
# Where the run's time goes: the transient's back-substitutions and factorisations, timed around
# the calls (a microsecond each against milliseconds), and the rest.
spent = {"solve": 0.0, "factor": 0.0}
def timed(what, f):
    def g(*a, **k):
        t = time.process_time()
        try:
            return f(*a, **k)
        finally:
            spent[what] += time.process_time() - t
    return g
transient._Factors.solve = timed("solve", transient._Factors.solve)
transient.lu = timed("factor", transient.lu)
res = d.run()
t3 = time.process_time()
if len(sys.argv) > 2:
    np.save(sys.argv[2], solve_dc(assemble(d), 0.0, impose=True))
print(json.dumps({"import": t1 - t0, "load": t2 - t1, "run": t3 - t2, "stats": res.stats,
                  "solve": spent["solve"], "factor": spent["factor"],
                  "unknowns": len(assemble(d).names), "points": int(len(res.time))}))
"""


# Where PYTHONDONTWRITEBYTECODE is set (as on the development machine), every process would compile
# netgen from source, about 0.3 s a command that an installed netgen does not spend: the processes
# measured here may write their bytecode, as Python does by default, and a first run writes it.
ENV = {k: v for k, v in os.environ.items() if k != "PYTHONDONTWRITEBYTECODE"}


def bytecode_cache() -> None:
    subprocess.run([sys.executable, "-c", "import netgen.cli, netgen.api, netgen.analyses, netgen.spice.netlist, "
                    "netgen.outputs.files"], env=ENV, check=True)


def measure(cmd: list[str], cwd: Path, timeout: float | None = None) -> dict:
    """Run one process; its CPU time (`seconds`: user + system), wall time, peak resident memory
    (MB), exit code and output. A timeout is on the wall clock."""
    out_path, err_path = cwd / ".stdout", cwd / ".stderr"
    with open(out_path, "wb") as out, open(err_path, "wb") as err:
        t0 = time.perf_counter()
        p = subprocess.Popen(cmd, cwd=cwd, stdout=out, stderr=err, env=ENV)
        timer = threading.Timer(timeout, p.kill) if timeout else None
        if timer:
            timer.start()
        _, status, usage = os.wait4(p.pid, 0)
        seconds = time.perf_counter() - t0
        if timer:
            timer.cancel()
        p.returncode = os.waitstatus_to_exitcode(status)
    return {"seconds": usage.ru_utime + usage.ru_stime, "wall": seconds, "peak_mb": usage.ru_maxrss / 1024.0,
            "rc": p.returncode, "timed_out": bool(timeout) and seconds >= timeout * 0.999,
            "stdout": out_path.read_text(errors="replace"), "stderr": err_path.read_text(errors="replace")}


def netgen_cmd(*args) -> list[str]:
    return [sys.executable, "-m", "netgen.cli", *args]


def ok(m: dict, what: str) -> dict:
    if m["rc"] != 0 and not m.get("timed_out"):
        raise SystemExit(f"{what} failed (exit {m['rc']}):\n{m['stderr'][-2000:]}")
    return m


def defaults(netlist: str) -> str:
    """The netlist with the simulator's default tolerances: its `.options` keep only the method."""
    return re.sub(r"^\.options .*$", lambda m: " ".join(w for w in m.group(0).split() if not re.match(
        r"(reltol|abstol|vntol|chgtol|trtol)=", w, re.I)), netlist, flags=re.M | re.I)


def reltol(netlist: str, value: float) -> str:
    """The netlist with the tolerances it states, but `reltol` set to `value`."""
    return re.sub(r"\breltol=\S+", f"reltol={value:g}", netlist, flags=re.I)


# The outside simulator's settings: the netlist as exported, one step looser, and its defaults.
SPICE_SETTINGS = (("stated", None), ("reltol 1e-6", 1e-6), ("defaults", "defaults"))


def spice_run(d: Path, netlist: str, timeout: float, ref=None) -> dict:
    m = measure(["ngspice", "-b", "-r", "out.raw", netlist], d, timeout)
    if m["rc"] != 0 and not m["timed_out"]:
        raise SystemExit(f"ngspice failed on {netlist}:\n{m['stderr'][-2000:]}{m['stdout'][-2000:]}")
    hit = re.search(r"Total analysis time \(seconds\) = ([0-9.eE+-]+)", m["stdout"] + m["stderr"])
    m["analysis"] = float(hit.group(1)) if hit else None
    if ref is not None and not m["timed_out"] and (d / "out.raw").exists():
        t, ys = accuracy.spice_signals(d / "out.raw", (d / netlist).read_text(), ref[1])
        m["error_mk"] = accuracy.worst(ref, t, ys) * 1e3 if ys else None
    (d / "out.raw").unlink(missing_ok=True)
    return m


def case(work: Path, name: str, text: str, steps: int, spice: bool, floors: bool, spice_timeout: float,
         ivp: bool = True, ivp_timeout: float = 600.0, accurate: bool = False) -> dict:
    d = work / name
    d.mkdir(parents=True, exist_ok=True)
    f = d / f"{name}.etn"
    f.write_text(text)
    r: dict = {"case": name, "statements": sum(1 for line in text.splitlines() if line.strip())}
    r["check"] = ok(measure(netgen_cmd("check", f.name), d), f"netgen check {name}")
    r["run"] = ok(measure(netgen_cmd("run", f.name, "--quiet", "--out", "out"), d), f"netgen run {name}")
    ref = None
    if accurate:  # netgen's default run against a tight reference (accuracy.py)
        (d / f"{name}-ref.etn").write_text(accuracy.tight(text))
        r["reference"] = ok(measure(netgen_cmd("run", f"{name}-ref.etn", "--quiet", "--out", "ref"), d),
                            f"netgen reference {name}")
        ref = accuracy.read_csv(d / "ref" / "transient.csv")
        r["error_mk"] = accuracy.worst(ref, *accuracy.read_csv(d / "out" / "transient.csv")) * 1e3
    ph = ok(measure([sys.executable, "-c", PHASES, f.name, "x0.npy"], d), f"phases {name}")
    r["phases"] = json.loads(ph["stdout"].strip().splitlines()[-1])
    r["unknowns"] = r["phases"]["unknowns"]
    if floors:
        ok(measure(netgen_cmd("matrices", f.name, "-o", "."), d), f"netgen matrices {name}")
        for kind in ("trap", "loop", "ivp"):
            if kind == "ivp" and not ivp:
                continue
            m = measure([sys.executable, str(HERE / "floor.py"), kind, ".", str(steps), "1.0"], d,
                        ivp_timeout if kind == "ivp" else None)
            if m["timed_out"]:
                r[kind] = m
                continue
            ok(m, f"{kind} {name}")
            m["result"] = json.loads(m["stdout"].strip().splitlines()[-1])
            r[kind] = m
    if spice:
        r["export"] = ok(measure(netgen_cmd("export", f.name, "-o", f"{name}.cir"), d), f"netgen export {name}")
        stated = (d / f"{name}.cir").read_text()
        r["spice_settings"] = {}
        for label, how in SPICE_SETTINGS:
            path = f"{name}.cir" if how is None else f"{name}-{label.replace(' ', '')}.cir"
            if how is not None:
                (d / path).write_text(defaults(stated) if how == "defaults" else reltol(stated, how))
            r["spice_settings"][label] = spice_run(d, path, spice_timeout, ref)
        r["spice"], r["spice_defaults"] = r["spice_settings"]["stated"], r["spice_settings"]["defaults"]
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
    head = ("| case | unknowns | check s | run s (MB) | plate run s (MB) | in solver s | one-solve floor s (MB) "
            "| run ÷ floor | in solver ÷ floor | same-method floor s | in solver ÷ same method "
            "| netgen's error mK | solve_ivp BDF s (MB) | ngspice, stated tolerances s (MB) [mK] "
            "| ngspice, reltol 1e-6 s [mK] | ngspice, defaults s [mK] | ngspice within 10 mK ÷ run |")
    rows = [head, "|" + "|".join(["---"] * (head.count("|") - 1)) + "|"]
    for r in results:
        p = plates.get(r["case"])
        beyond = r["phases"]["run"]
        trap, loop, ivp = r.get("trap"), r.get("loop"), r.get("ivp")
        sp, settings = r.get("spice"), r.get("spice_settings", {})
        floor = trap["result"]["seconds"] if trap and "result" in trap else None
        cells = [
            r["case"], str(r["unknowns"]), fmt_t(r["check"]),
            f"{fmt_t(r['run'])} ({r['run']['peak_mb']:.0f})",
            f"{fmt_t(p['run'])} ({p['run']['peak_mb']:.0f})" if p else "-",
            f"{beyond:.3g}",
            f"{floor:.3g} ({trap['peak_mb']:.0f})" if floor else "-",
            f"{r['run']['seconds'] / floor:.2f}" if floor else "-",
            f"{beyond / floor:.2f}" if floor else "-",
            f"{loop['result']['seconds']:.3g}" if loop else "-",
            f"{beyond / loop['result']['seconds']:.2f}" if loop else "-",
            f"{r['error_mk']:.3g}" if r.get("error_mk") is not None else "-",
            ("> limit" if ivp.get("timed_out") else f"{ivp['result']['seconds']:.3g} ({ivp['peak_mb']:.0f})")
            if ivp else "skipped",
            f"{fmt_t(sp)} ({sp['peak_mb']:.0f}){_mk(sp)}" if sp else "skipped",
            *[f"{fmt_t(m)}{_mk(m)}" if m else "skipped"
              for m in (settings.get("reltol 1e-6"), settings.get("defaults"))],
            _within(settings, r["run"]["seconds"]),
        ]
        rows.append("| " + " | ".join(cells) + " |")
    return "\n".join(rows)


def _mk(m: dict) -> str:
    return f" [{m['error_mk']:.3g}]" if m.get("error_mk") is not None else ""


def _within(settings: dict, run: float) -> str:
    """The cheapest of the simulator's settings whose temperatures are within 10 mK of the
    reference, its CPU time over netgen's run, and which setting it was."""
    good = [(m["seconds"], label) for label, m in settings.items()
            if m.get("error_mk") is not None and m["error_mk"] <= 10.0 and not m.get("timed_out")]
    if not good:
        return "-"
    sec, label = min(good)
    return f"{_ratio(sec / run)} ({label})"


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
    ap.add_argument("--sizes", type=int, nargs="+", default=[50, 100, 200, 300, 500])
    ap.add_argument("--steps", type=int, default=1000, help="seconds simulated, reported every second")
    ap.add_argument("--nonlinear", type=int, nargs="*", default=[50], help="sizes of the case with modules")
    ap.add_argument("--ivp-max", type=int, default=200, help="largest size given to solve_ivp")
    ap.add_argument("--ivp-timeout", type=float, default=600.0, help="wall-clock limit of one solve_ivp run")
    ap.add_argument("--readme", action="store_true", help="write the table into benchmarks/README.md")
    ap.add_argument("--spice-max", type=int, default=100, help="largest size given to ngspice")
    ap.add_argument("--nonlinear-spice-max", type=int, default=50, help="largest case with modules given to ngspice")
    ap.add_argument("--spice-timeout", type=float, default=3600.0)
    ap.add_argument("--no-floors", action="store_true")
    ap.add_argument("--accuracy-max", type=int, default=100,
                    help="largest size whose runs are compared with a tight reference (tolerance 1e-7)")
    ap.add_argument("--work", type=Path, default=Path("benchmark-work"))
    ap.add_argument("--json", type=Path, default=None, help="also write the measurements here")
    args = ap.parse_args(argv)
    work = args.work.resolve()
    work.mkdir(parents=True, exist_ok=True)
    bytecode_cache()
    spice_ok = shutil.which("ngspice") is not None
    results, plates, notes = [], {}, []
    for n in args.sizes:
        spice = spice_ok and n <= args.spice_max
        if spice_ok and not spice:
            notes.append(f"ngspice skipped at {n}²: above --spice-max {args.spice_max} (it grows much faster than "
                         "linearly; at 100² it already takes minutes)")
        print(f"grid {n} x {n} ...", file=sys.stderr, flush=True)
        r = case(work, f"grid{n}", grids.plain(n, args.steps), args.steps, spice, not args.no_floors,
                 args.spice_timeout, n <= args.ivp_max, args.ivp_timeout, n <= args.accuracy_max)
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
    where = machine()
    when = time.strftime("%Y-%m-%d %H:%M UTC", time.gmtime())
    print(f"\nmachine: {where}")
    print(f"{args.steps} s simulated, results every 1 s; CPU seconds, peak resident memory in MB\n")
    tab = table(results, plates)
    print(tab)
    summary: list[str] = []
    for r in results:
        st = r["phases"]["stats"]
        print(f"\n{r['case']}: netgen {st.get('steps')} steps, {st.get('rejected')} rejected, "
              f"{st.get('factorizations')} factorisations, {st.get('solves')} back-substitutions; "
              f"reading {r['phases']['load']:.3g} s, import {r['phases']['import']:.3g} s; in solver "
              f"{r['phases']['solve']:.3g} s back-substituting, {r['phases']['factor']:.3g} s factorising, "
              f"{r['phases']['run'] - r['phases']['solve'] - r['phases']['factor']:.3g} s the rest "
              f"(the start's steady state, vectors, checks, results)", end="")
        beyond = r["run"]["seconds"] - r["phases"]["import"] - r["phases"]["load"] - r["phases"]["run"]
        if beyond > 0.05 * r["run"]["seconds"]:  # two processes apart; below this it is their noise
            print(f"; netgen run beyond import, reading and solver {beyond:.3g} s (starting Python, the "
                  f"checks and cautions, writing files)", end="")
        if "ivp" in r:
            iv = r["ivp"]["result"]
            print(f"; solve_ivp {iv['steps']} points, {iv['nfev']} evaluations, {iv['factorizations']} LU", end="")
        if r.get("spice") and r["spice"].get("analysis"):
            print(f"; ngspice analysis {r['spice']['analysis']:.3g} s", end="")
    print()
    by = {r["case"]: r for r in results}
    for a, b in ((100, 500), (100, 300), (50, 100)):
        e1 = exponent(results, a, b, lambda r: r["phases"]["run"])
        e2 = exponent(results, a, b, lambda r: r["run"]["seconds"])
        e3 = exponent(results, a, b, lambda r: r["trap"]["result"]["seconds"] if "result" in r.get("trap", {}) else math.nan)
        if e1 is not None:
            summary.append(f"growth exponent {a}² → {b}² (CPU time ∝ unknowns^p): in solver p = {e1:.2f}, "
                           f"netgen run end to end p = {e2:.2f}, one-solve floor p = {e3:.2f}")
            print(summary[-1])
    for n in args.nonlinear:
        nl, lin = by.get(f"modules{n}"), by.get(f"grid{n}")
        if nl and lin:
            print(f"nonlinear {n}² ÷ its linear twin: run beyond reading {nl['phases']['run'] / lin['phases']['run']:.2f}, "
                  f"end to end {nl['run']['seconds'] / lin['run']['seconds']:.2f}")
    for note in notes:
        print(f"note: {note}")
    if args.readme:
        text = (f"Measured {when} by `python benchmarks/run.py {' '.join(argv if argv is not None else sys.argv[1:])}`"
                f" on {where}; {args.steps} s simulated, results every 1 s; CPU seconds (user + system), peak "
                f"resident memory in MB.\n\n{tab}\n\n" + "".join(f"- {x}\n" for x in summary + [f"note: {n}" for n in notes]))
        readme = HERE / "README.md"
        old = readme.read_text()
        start, end = "<!-- table: benchmarks/run.py --readme -->", "<!-- end of table -->"
        if start in old and end in old:
            new = old[: old.index(start) + len(start)] + "\n" + text + old[old.index(end):]
        else:
            new = old.rstrip("\n") + f"\n\n## Latest measurement\n\n{start}\n{text}{end}\n"
        readme.write_text(new)
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
