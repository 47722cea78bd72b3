"""The `netgen` command: argument parsing, printing and exit codes only."""
from __future__ import annotations

import argparse
import json
import sys
from pathlib import Path

from netgen import __version__
from netgen.model.errors import NetgenError

EXIT_OK, EXIT_FAILED, EXIT_INPUT, EXIT_SIMULATOR = 0, 1, 2, 3


class _Parser(argparse.ArgumentParser):
    def error(self, message):  # argparse's own errors are input errors too: exit 2
        self.print_usage(sys.stderr)
        print(f"netgen: error: {message}", file=sys.stderr)
        raise SystemExit(EXIT_INPUT)


def _settings(pairs: list[str] | None) -> dict[str, str]:
    out = {}
    for p in pairs or []:
        if "=" not in p:
            raise NetgenError(f"--set {p}: expected NAME=VALUE", None, "e.g. --set I_drive=1.5A")
        k, v = p.split("=", 1)
        if k.strip() in out:  # which one was meant? the last silently winning hides a typo
            raise NetgenError(f"--set {k.strip()} is given twice ({k.strip()}={out[k.strip()]}, then {k.strip()}={v.strip()})",
                              None, "give each parameter once")
        out[k.strip()] = v.strip()
    return out


def _load(args):
    from netgen.language import load

    return load(args.file, _settings(getattr(args, "set", None)))


def _notes(d) -> None:
    from netgen.solve.topology import unused_warnings

    for w in unused_warnings(d):
        print(w, file=sys.stderr)


def cmd_check(args) -> int:
    from netgen.outputs.text import describe

    d = _load(args)
    if args.json:
        from netgen.outputs.json_docs import design_document, dumps

        print(dumps(design_document(d)))
    else:
        print(describe(d))
    _notes(d)
    return EXIT_OK


def cmd_run(args) -> int:
    from netgen.analyses import run
    from netgen.outputs.files import output_dir, output_file, write_outputs
    from netgen.outputs.text import print_results

    out = output_dir(args.out, "--out")  # every output path checked before the solve
    output_dir(args.plot, "--plot")
    output_file(args.report, "--report")
    if args.plot or args.report:
        from netgen.outputs.plots import require

        require()  # before the solve: a missing matplotlib should not cost a long transient
    d = _load(args)
    _notes(d)
    progress = None
    if sys.stderr.isatty() and not args.quiet and not args.json:
        from netgen.outputs.text import Progress

        progress = Progress(d.transient.until if d.transient else 1.0)
    try:
        res = run(d, progress)
    except NetgenError as e:
        partial = getattr(e, "results", None)
        if out is not None and partial is not None:
            try:
                for path in write_outputs(partial, out):
                    print(f"wrote {path} (partial: up to t = {partial.time[-1]:.6g} s)", file=sys.stderr)
            except NetgenError as w:  # say so, then report the solve's own error
                print(w.render(), file=sys.stderr)
        raise
    finally:
        if progress is not None:
            progress.done()
    if args.json:
        from netgen.outputs.json_docs import dumps, run_document

        print(dumps(run_document(res)))
    else:
        print_results(res)
    if out is not None:
        for path in write_outputs(res, out):
            print(f"wrote {path}", file=sys.stderr if args.json else sys.stdout)
    if args.plot or args.report:
        _run_pictures(args, res)
    return EXIT_OK if res.passed else EXIT_FAILED


def _run_pictures(args, res) -> None:
    """`run --plot DIR` and `run --report OUT.html`, with the design's baseline overlaid if it has one."""
    from netgen.regression.verify import Outcome, attach_baseline

    o = Outcome(Path(args.file), _settings(args.set), results=res)
    try:
        attach_baseline(o)
    except NetgenError as e:
        print(f"note: the baseline is not shown: {e.message}", file=sys.stderr)
    if args.plot:
        from netgen.outputs.plots import write_plots

        written = write_plots(res, Path(args.plot), o.baseline)
        n = len([w for w in written if w.suffix == ".png"])
        print(f"wrote {n} plots (PNG and SVG) to {args.plot}" if written else "no transient: nothing to plot")
    if args.report:
        from netgen.outputs.files import write_atomic
        from netgen.outputs.html import html_report

        write_atomic(Path(args.report), html_report([o], f"netgen run: {Path(args.file).name}"))
        print(f"wrote {args.report}")


def cmd_verify(args) -> int:
    from netgen.outputs.files import output_dir, output_file
    from netgen.regression.baseline import baseline_path
    from netgen.regression.verify import check_names, design_files, exit_code, outcome_lines, parse_rtol, total_line, verify_file

    settings = _settings(args.set)
    rtol, per_signal = parse_rtol(args.rtol)
    directory = output_dir(args.baseline, "--baseline", write=args.update_baseline)
    output_file(args.junit, "--junit")
    output_file(args.report, "--report")
    if args.report:
        from netgen.outputs.plots import require

        require()
    files = design_files(args.paths)
    check_names(files, directory)
    if args.update_baseline:  # every baseline folder, before the first design runs
        for f in files:
            folder = baseline_path(f, directory).parent
            output_dir(str(folder), "--baseline", label=f"--update-baseline: the baseline folder of `{f}`")
    outcomes = []
    if args.jobs is not None and args.jobs < 1:
        raise NetgenError(f"-j {args.jobs}: expected at least 1", None, "e.g. -j 4")
    if args.jobs and args.jobs > 1 and len(files) > 1:
        from netgen.regression.parallel import verify_files

        done = verify_files(files, min(args.jobs, len(files)), settings=settings, directory=directory, rtol=rtol,
                            per_signal=per_signal, update=args.update_baseline)
    else:
        done = (verify_file(f, settings, directory, rtol, per_signal, args.update_baseline) for f in files)
    for o in done:  # in the order given, whether run here or on a pool
        if not args.json:
            print("\n".join(outcome_lines(o)), flush=True)
        outcomes.append(o)
    report = sys.stderr if args.json else sys.stdout
    if args.json:
        from netgen.outputs.json_docs import dumps, verify_document

        print(dumps(verify_document(outcomes, total_line(outcomes), exit_code(outcomes))))
    else:
        print(total_line(outcomes))
    if args.junit:
        from netgen.outputs.junit import junit_xml
        from netgen.outputs.files import write_atomic

        write_atomic(Path(args.junit), junit_xml(outcomes))
        print(f"wrote {args.junit}", file=report)
    if args.report:
        from netgen.outputs.files import write_atomic
        from netgen.outputs.html import html_report

        write_atomic(Path(args.report), html_report(outcomes, "netgen verify"))
        print(f"wrote {args.report}", file=report)
    unused = [s for s in per_signal if not any(o.results and s in o.results.signals for o in outcomes)]
    if unused:
        print(f"netgen: error: --rtol names {', '.join(unused)}, which no design records", file=sys.stderr)
        return EXIT_INPUT
    return exit_code(outcomes)



def _study_start(args, name: str):
    """What `sweep` and `tolerance` share before their runs: output folders checked, the file
    read once and checked, the executor."""
    from netgen.language.elaborate import load_text, read_source
    from netgen.outputs.files import make_dir, output_dir
    from netgen.studies.executors import executor

    out = output_dir(args.out, "--out") or Path(".")
    output_dir(args.plot, "--plot")
    if args.plot:
        from netgen.outputs.plots import require

        require()
    settings = _settings(args.set)
    text = read_source(args.file)
    _notes(load_text(text, args.file, settings))
    ex = executor(args.jobs, args.cluster)
    make_dir(out)
    progress = None
    if sys.stderr.isatty() and not args.quiet and not args.json:
        from netgen.outputs.study_text import StudyProgress

        progress = StudyProgress(name)
    return out, settings, text, ex, progress


def _study_end(args, name: str, out: Path, outcome, files: dict, doc: dict, cols, body, stream: Path) -> int:
    """Write the study's files (also after an interruption, with the runs that finished), print
    the table or the JSON document, and say how far an interrupted study got."""
    import json

    from netgen.outputs.files import write_set
    from netgen.outputs.study_text import rows_table

    write_set(files)
    stream.unlink(missing_ok=True)  # its rows are in the files now
    if args.json:
        print(json.dumps({**doc, "rows": body}, indent=1))
    else:
        print(rows_table(cols, body))
        for path in files:
            print(f"wrote {path}")
    if outcome.failed and not args.json:
        print(f"{outcome.failed} of {outcome.finished} runs failed: each has its error in the `error` column",
              file=sys.stderr)
    if outcome.interrupted:
        print(f"netgen {name}: interrupted: {outcome.how_far()}; their rows are in {out / (name + '.csv')}",
              file=sys.stderr)
        return 130
    return EXIT_OK


def cmd_sweep(args) -> int:
    from netgen.model.jsonsafe import jsonable
    from netgen.studies.runner import csv_text, table
    from netgen.studies.sweep import best_line, read_axes, run_sweep

    out, settings, text, ex, progress = _study_start(args, "sweep")
    try:
        axes = read_axes(text, args.file, settings, args.vary, args.log or [])
        stream = out / "sweep.partial.jsonl"
        s = run_sweep(text, args.file, settings, axes, ex, tuple(args.best) if args.best else None, progress, stream)
    finally:
        ex.close()
        if progress is not None:
            progress.done()
    cols, body = table(s.outcome, s.lead)
    doc = jsonable(s.document())
    files = {out / "sweep.csv": csv_text(cols, body), out / "sweep.json": json.dumps(doc, indent=1) + "\n"}
    code = _study_end(args, "sweep", out, s.outcome, files, doc, cols, jsonable(body), stream)
    if not args.json:
        for note in s.notes:
            print(f"note: {note}", file=sys.stderr)
        if s.best is not None:
            print(best_line(s))
    if args.plot and body:
        from netgen.outputs.study_plots import sweep_plots

        n = len(sweep_plots(Path(args.plot), axes, cols, body, s.best))
        print(f"wrote {n} plots to {args.plot}", file=sys.stderr if args.json else sys.stdout)
    return code



def cmd_tolerance(args) -> int:
    from netgen.outputs.study_text import stats_table, yield_lines
    from netgen.model.jsonsafe import jsonable
    from netgen.studies.runner import csv_text, table
    from netgen.studies.tolerance import run_tolerance

    out, settings, text, ex, progress = _study_start(args, "tolerance")
    stream = out / "tolerance.partial.jsonl"
    try:
        t = run_tolerance(text, args.file, settings, args.runs, args.seed, ex, progress, stream)
    finally:
        ex.close()
        if progress is not None:
            progress.done()
    cols, body = table(t.outcome, t.lead)
    doc = jsonable(t.document(cols))
    files = {out / "tolerance.csv": csv_text(cols, body), out / "tolerance.json": json.dumps(doc, indent=1) + "\n"}
    if args.json:
        code = _study_end(args, "tolerance", out, t.outcome, files, doc, cols, jsonable(body), stream)
    else:
        from netgen.outputs.files import write_set

        write_set(files)
        stream.unlink(missing_ok=True)
        print(f"{t.outcome.how_far()} (seed {t.seed})")
        print("\n".join(yield_lines(doc["yield"])) or "no expectations: no yield")
        if doc["stats"]:
            print(stats_table(doc["stats"]))
        for path in files:
            print(f"wrote {path}")
        code = EXIT_OK
        if t.outcome.failed:
            print(f"{t.outcome.failed} of {t.outcome.finished} runs failed: each has its error in the `error` column "
                  "of tolerance.csv; a failed run counts as not meeting the expectations", file=sys.stderr)
        if t.outcome.interrupted:
            print(f"netgen tolerance: interrupted: {t.outcome.how_far()}; their rows are in {out / 'tolerance.csv'}",
                  file=sys.stderr)
            code = 130
    if args.plot and body:
        from netgen.outputs.study_plots import histograms

        n = len(histograms(Path(args.plot), [c for c in cols if c not in ("run", "error")], body))
        print(f"wrote {n} histograms to {args.plot}", file=sys.stderr if args.json else sys.stdout)
    return code




def cmd_export(args) -> int:
    from netgen.outputs.files import output_file
    from netgen.spice.netlist import write_netlist

    out = output_file(args.output, "-o")
    d = _load(args)
    if args.subckt is None and (args.pins or args.without or args.temperature):
        raise NetgenError("--pins, --without and --temperature belong to a part: give --subckt NAME too", None,
                          "e.g. netgen export cooler.etn --subckt cooler --pins p,gnd,die")
    if args.reduce is not None:
        from netgen.spice.reduced_export import export_reduced

        text = export_reduced(d, args.reduce, args.subckt, _list(args.pins), _list(args.without),
                              args.temperature == "kelvin")
    elif args.subckt is not None:
        from netgen.spice.part import part

        text = part(d, args.subckt, _list(args.pins), _list(args.without), args.temperature == "kelvin").text
    else:
        text = write_netlist(d)
    if out is not None:
        from netgen.outputs.files import write_atomic

        write_atomic(out, text)
        print(f"wrote {args.output}")
    else:
        sys.stdout.write(text)
    return EXIT_OK


def _list(text: str | None) -> list[str]:
    return [x.strip() for x in text.split(",")] if text else []


def cmd_crosscheck(args) -> int:
    from netgen.outputs.files import output_dir
    from netgen.spice.crosscheck import Tolerances, crosscheck
    from netgen.spice.simulator import SimulatorError

    keep = output_dir(args.keep, "--keep")
    d = _load(args)
    try:
        rep = crosscheck(d, args.simulator, Tolerances.from_rtol(args.rtol), keep, timeout=args.timeout,
                         reduce=args.reduce)
    except SimulatorError as e:  # missing or failed: its own words, and a code of its own
        print(f"netgen crosscheck: {e.render()}", file=sys.stderr)
        return EXIT_SIMULATOR
    print(rep.table(args.all))
    if args.keep:
        print(f"kept the netlist, the raw file and the simulator's output in {args.keep}")
    return EXIT_OK if rep.passed else EXIT_FAILED


def cmd_format(args) -> int:
    from netgen.language.layout import format_files
    from netgen.outputs.files import write_atomic

    done = format_files(args.files)  # every file read and formatted before any is written
    changed = [f for f in done if f.changed]
    # With --diff, standard output carries the diff alone, so that it can be applied as it is.
    report = sys.stderr if args.diff else sys.stdout
    for f in changed:
        if args.diff:
            sys.stdout.write(f.diff())
        if args.check:
            print(f"would change: {f.path}", file=report)
        elif not args.diff:
            write_atomic(f.path, f.new)
            print(f"formatted {f.path}", file=report)
    verb = "would change" if args.check or args.diff else "changed"
    print(f"{len(changed)} of {len(done)} file{'s' if len(done) != 1 else ''} {verb}", file=report)
    return EXIT_FAILED if args.check and changed else EXIT_OK


def _positive(text: str) -> float:
    try:
        v = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text!r} is not a number") from None
    if not v > 0:
        raise argparse.ArgumentTypeError(f"{text!r} must be greater than zero")
    return v


def _count(text: str) -> int:
    try:
        v = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text!r} is not a whole number") from None
    if v < 1:
        raise argparse.ArgumentTypeError(f"{text!r} must be 1 or more")
    return v


def cmd_matrices(args) -> int:
    from netgen.outputs.files import output_dir, write_matrices

    out = output_dir(args.output, "-o")
    d = _load(args)
    for path in write_matrices(d, out):
        print(f"wrote {path}")
    return EXIT_OK


def _study_options(sp, name: str) -> None:
    where = sp.add_mutually_exclusive_group()
    where.add_argument("--jobs", type=int, metavar="N", help="run on N local processes (default: the number of cores)")
    where.add_argument("--cluster", metavar="ADDRESS",
                    help="run on a Dask scheduler (tcp://host:8786), or `local` for a cluster on this machine")
    sp.add_argument("--out", metavar="DIR", help=f"write {name}.csv and {name}.json into DIR (default: here)")
    sp.add_argument("--plot", metavar="DIR", help="write PNG plots into DIR (needs matplotlib)")
    sp.add_argument("--json", action="store_true", help="print one JSON document instead of the table")
    sp.add_argument("--quiet", action="store_true", help="no progress line")


def build_parser() -> argparse.ArgumentParser:
    p = _Parser(prog="netgen", description="Coupled heat-and-electricity networks from .etn descriptions.")
    p.add_argument("--version", action="version", version=f"netgen {__version__}")
    sub = p.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)

    def add(name, func, help_text):
        sp_ = sub.add_parser(name, help=help_text, description=help_text)
        sp_.add_argument("file", metavar="FILE", help="a .etn description")
        sp_.add_argument("--set", action="append", metavar="NAME=VALUE",
                         help="override a `let` parameter, e.g. --set I_drive=1.5A (repeatable)")
        sp_.set_defaults(func=func)
        return sp_

    c = add("check", cmd_check, "read and check a description; print what it holds")
    c.add_argument("--json", action="store_true", help="print what it holds as one JSON document")
    r = add("run", cmd_run, "solve the description's analyses and print a summary")
    r.add_argument("--out", metavar="DIR", help="write transient.csv and summary.json into DIR")
    r.add_argument("--quiet", action="store_true", help="no progress line")
    r.add_argument("--json", action="store_true", help="print the summary (as in summary.json) as one JSON document")
    r.add_argument("--plot", metavar="DIR", help="write a PNG and an SVG plot of each recorded signal into DIR (needs matplotlib)")
    r.add_argument("--report", metavar="OUT.html", help="write a self-contained HTML report (needs matplotlib)")
    v = sub.add_parser("verify", help="run designs, check expectations and audits, compare with baselines",
                       description="Run every design given (a directory: its *.etn files), evaluate its "
                       "expectations and audits, and compare its recorded signals with its baseline.")
    v.add_argument("paths", nargs="+", metavar="FILE_OR_DIR", help="a .etn design or a directory of them")
    v.add_argument("--baseline", metavar="DIR",
                   help="where baselines are kept (default: baselines/ beside each design), as DIR/NAME.json")
    v.add_argument("--update-baseline", action="store_true",
                   help="write the baselines of these designs from this run, and say which changed")
    v.add_argument("--rtol", action="append", metavar="[SIGNAL=]R",
                   help="relative tolerance of the baseline comparison, as a share of each signal's "
                   "range (default 0.1%%): --rtol 0.5%% for all, --rtol 'T(die)=0.2%%' for one (repeatable)")
    v.add_argument("--set", action="append", metavar="NAME=VALUE",
                   help="override a `let` parameter in every design, e.g. --set I_drive=1.5A (repeatable)")
    v.add_argument("--junit", metavar="OUT.xml", help="write a JUnit XML test report")
    v.add_argument("-j", "--jobs", type=int, metavar="N", help="verify N designs at a time on local processes "
                   "(default 1); the output keeps the order of the designs")
    v.add_argument("--json", action="store_true", help="print one JSON document instead of the lines")
    v.add_argument("--report", metavar="OUT.html", help="write a self-contained HTML report (needs matplotlib)")
    v.set_defaults(func=cmd_verify)
    sw = add("sweep", cmd_sweep, "run a design at every point of a grid of parameter values")
    sw.add_argument("--vary", action="append", required=True, metavar="NAME=FROM..TO[:COUNT]",
                    help="a parameter and its range, e.g. --vary I_drive=0.5A..3A:11 (repeatable: a grid)")
    sw.add_argument("--log", action="append", metavar="NAME", help="space the values of NAME evenly on a log scale")
    sw.add_argument("--best", nargs=2, metavar=("max|min", "COLUMN"),
                    help="the point where COLUMN is largest or smallest, e.g. --best max 'COP(tec)'")
    _study_options(sw, "sweep")
    tl = add("tolerance", cmd_tolerance, "run a design many times with its `spread` parameters drawn")
    tl.add_argument("--runs", type=int, required=True, metavar="N", help="how many runs")
    tl.add_argument("--seed", type=int, default=0, metavar="S",
                    help="seed of the draws (default 0): run k draws the same values whatever the executor")
    _study_options(tl, "tolerance")
    e = add("export", cmd_export, "write the SPICE netlist of a description")
    e.add_argument("-o", "--output", metavar="OUT.cir", help="file to write (default: standard output)")
    e.add_argument("--subckt", metavar="NAME",
                   help="write a part for your own deck: one .subckt NAME with the pins given, for .include")
    e.add_argument("--pins", metavar="NODE[,NODE...]",
                   help="the part's pins in order, electrical or thermal nodes (with --subckt)")
    e.add_argument("--without", metavar="ELEMENT[,ELEMENT...]",
                   help="leave these elements out of the part, e.g. the design's own drive (with --subckt)")
    e.add_argument("--temperature", choices=("celsius", "kelvin"), default=None,
                   help="a thermal node's voltage in the part: degrees Celsius (default) or kelvin")
    e.add_argument("--reduce", metavar="N", type=_count, default=None,
                   help="replace the linear thermal network by a reduced model of at most N states (PACT)")
    x = add("crosscheck", cmd_crosscheck,
            "run the exported netlist in an outside circuit simulator and compare it with netgen's results")
    x.add_argument("--simulator", metavar="CMD", default="ngspice",
                   help="the simulator's executable, run as CMD -b -r OUT.raw NETLIST (default: ngspice)")
    x.add_argument("--rtol", metavar="R", type=_positive, default=None,
                   help="relative tolerance of the comparison (default 1e-3); every tolerance scales with it")
    x.add_argument("--reduce", metavar="N", type=_count, default=None,
                   help="run the netlist with its linear thermal network reduced to at most N states, "
                   "against netgen's full solution")
    x.add_argument("--all", action="store_true", help="print every row (default: the worst rows and a count of the rest)")
    x.add_argument("--keep", metavar="DIR", help="keep the netlist, the raw file and the simulator's output in DIR")
    x.add_argument("--timeout", metavar="SECONDS", type=_positive, default=600.0,
                   help="end the simulator (and everything it started) after SECONDS (default: 600)")
    m = add("matrices", cmd_matrices, "write the assembled matrices (Matrix Market) and unknown names")
    m.add_argument("-o", "--output", metavar="DIR", default="matrices", help="directory (default: ./matrices)")
    f = sub.add_parser("format", help="rewrite .etn files into the canonical layout",
                       description="Rewrite each file into one canonical layout (spacing, indentation inside "
                       "{ ... }, comments aligned), keeping its lines, comments, units and meaning.")
    f.add_argument("files", nargs="+", metavar="FILE", help="a .etn file (several may be given)")
    f.add_argument("--check", action="store_true",
                   help="write nothing; name each file that would change and exit with 1 if any would")
    f.add_argument("--diff", action="store_true", help="write nothing; print a unified diff of each change")
    f.set_defaults(func=cmd_format)
    return p


def main(argv: list[str] | None = None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    if not getattr(args, "command", None):
        parser.print_help()
        return EXIT_INPUT
    try:
        return args.func(args)
    except NetgenError as e:
        print(e.render(), file=sys.stderr)
        return EXIT_INPUT
    except KeyboardInterrupt:
        print("netgen: interrupted", file=sys.stderr)
        return 130
    except BrokenPipeError:
        return EXIT_OK


if __name__ == "__main__":  # pragma: no cover
    raise SystemExit(main())
