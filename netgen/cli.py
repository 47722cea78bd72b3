"""The `netgen` command: argument parsing, printing and exit codes only."""
from __future__ import annotations

import argparse
import sys
from pathlib import Path

from . import __version__
from .errors import NetgenError

EXIT_OK, EXIT_FAILED, EXIT_INPUT = 0, 1, 2


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
        out[k.strip()] = v.strip()
    return out


def _load(args):
    from .language import load

    return load(args.file, _settings(getattr(args, "set", None)))


def cmd_check(args) -> int:
    from .report import describe

    d = _load(args)
    print(describe(d))
    return EXIT_OK


def cmd_run(args) -> int:
    from .report import print_results, write_outputs

    d = _load(args)
    progress = None
    if sys.stderr.isatty() and not args.quiet:
        from .report import Progress

        progress = Progress(d.transient.until if d.transient else 1.0)
    res = d.run() if progress is None else _run_with(d, progress)
    print_results(res)
    if args.out:
        for path in write_outputs(res, Path(args.out)):
            print(f"wrote {path}")
    return EXIT_OK if res.passed else EXIT_FAILED


def _run_with(d, progress):
    from .runner import run_design

    try:
        return run_design(d, progress)
    finally:
        progress.done()


def cmd_export(args) -> int:
    from .spice.netlist import write_netlist

    d = _load(args)
    text = write_netlist(d)
    if args.output:
        from .report import write_atomic

        write_atomic(Path(args.output), text)
        print(f"wrote {args.output}")
    else:
        sys.stdout.write(text)
    return EXIT_OK


def cmd_matrices(args) -> int:
    from .report import write_matrices

    d = _load(args)
    for path in write_matrices(d, Path(args.output)):
        print(f"wrote {path}")
    return EXIT_OK


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

    add("check", cmd_check, "read and check a description; print what it holds")
    r = add("run", cmd_run, "solve the description's analyses and print a summary")
    r.add_argument("--out", metavar="DIR", help="write transient.csv and summary.json into DIR")
    r.add_argument("--quiet", action="store_true", help="no progress line")
    e = add("export", cmd_export, "write the SPICE netlist of a description")
    e.add_argument("-o", "--output", metavar="OUT.cir", help="file to write (default: standard output)")
    m = add("matrices", cmd_matrices, "write the assembled matrices (Matrix Market) and unknown names")
    m.add_argument("-o", "--output", metavar="DIR", default="matrices", help="directory (default: ./matrices)")
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
