"""Reading (issue 15, item 5): `netgen.load` of the N × N plate written as plain statements.

    python benchmarks/reading.py                 # 100² (about 30,000 statements), best of 3
    python benchmarks/reading.py --size 200 --repeat 5
    python benchmarks/reading.py --profile       # and cProfile's top 20 (cumulative and own time)
    python benchmarks/reading.py --commands      # and whole processes: `netgen check FILE`, `netgen --help`,
                                                 # the imports of `netgen run`

CPU seconds (time.process_time) of `netgen.load(path)` in this process, after the imports and
after one untimed load (which builds the parser and compiles the line patterns once, as the
first command of a process does; that cost is printed apart as "first load"). The target of
issue 15 is 0.6 s for the 100² plate.

With `--commands`, whole processes too, as a user starts them: CPU seconds (user + system,
from the children's rusage) of `netgen check FILE`, `netgen --help` and a process that only
imports what `netgen run` imports, best of `--repeat`. Python's bytecode cache matters there:
where PYTHONDONTWRITEBYTECODE is set, every process compiles netgen's modules from source
again, which an installed netgen does not; such processes are given a cache folder of their
own under the temporary directory (PYTHONPYCACHEPREFIX), so nothing is written beside the code.
"""
from __future__ import annotations

import argparse
import cProfile
import io
import os
import pstats
import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))
from grids import plain  # noqa: E402


RUN_IMPORTS = ("import netgen.cli\nfrom netgen.analyses import run\n"
               "from netgen.outputs.files import output_dir, output_file, write_outputs\n"
               "from netgen.outputs.text import print_results\nfrom netgen.language import load\n"
               "from netgen.solve.topology import unused_warnings\n")  # as cli.cmd_run and cli._load import them


def process_cpu(args: list[str], env: dict) -> float:
    """CPU seconds (user + system) of one Python process run with `args`."""
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    p = subprocess.run([sys.executable, *args], env=env, capture_output=True, text=True)
    if p.returncode != 0:
        raise SystemExit(f"{' '.join(args)} failed: {p.stderr[-2000:]}")
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    return (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)


def commands(path: Path, repeat: int, tmp: str) -> None:
    env = dict(os.environ)
    if env.pop("PYTHONDONTWRITEBYTECODE", None):
        env["PYTHONPYCACHEPREFIX"] = str(Path(tmp) / "pycache")
    cli = "import sys; from netgen.cli import main; sys.exit(main())"
    cases = {"netgen check FILE": ["-c", cli, "check", str(path)], "netgen --help": ["-c", cli, "--help"],
             "imports of netgen run": ["-c", RUN_IMPORTS]}
    for args in cases.values():
        process_cpu(args, env)  # writes the bytecode cache once
    for name, args in cases.items():
        times = [process_cpu(args, env) for _ in range(repeat)]
        print(f"{name}: best of {repeat} {min(times):.3f} s CPU (all: {' '.join(f'{t:.3f}' for t in times)})")
    print(f"load average {os.getloadavg()[0]:.2f}")


def main(argv=None) -> None:
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--size", type=int, default=100, help="cells on a side (default 100)")
    ap.add_argument("--repeat", type=int, default=3, help="timed loads; the best is reported (default 3)")
    ap.add_argument("--profile", action="store_true", help="print cProfile's top 20 of one load")
    ap.add_argument("--commands", action="store_true",
                    help="also time whole processes: netgen check FILE, netgen --help, the imports of netgen run")
    args = ap.parse_args(argv)

    t0 = time.process_time()
    import netgen
    import netgen.api  # what `netgen.load` imports on first use
    from netgen.language.elaborate import load
    t_import = time.process_time() - t0

    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / f"plain{args.size}.etn"
        text = plain(args.size)
        path.write_text(text)
        statements = sum(1 for line in text.splitlines() if line.strip())
        t0 = time.process_time()
        netgen.load(path)
        first = time.process_time() - t0
        times = []
        for _ in range(args.repeat):
            t0 = time.process_time()
            design = netgen.load(path)  # kept until timed: freeing the last one is not reading
            times.append(time.process_time() - t0)
            del design
        print(f"plain({args.size}): {statements} statements; import {t_import:.3f} s, first load {first:.3f} s, "
              f"load best of {args.repeat} {min(times):.3f} s CPU (all: {' '.join(f'{t:.3f}' for t in times)}); "
              f"load average {os.getloadavg()[0]:.2f}")
        if args.profile:
            prof = cProfile.Profile()
            prof.enable()
            load(path)
            prof.disable()
            for key in ("cumulative", "tottime"):
                out = io.StringIO()
                pstats.Stats(prof, stream=out).sort_stats(key).print_stats(20)
                print(out.getvalue())
        if args.commands:
            commands(path, args.repeat, tmp)


if __name__ == "__main__":
    main()
