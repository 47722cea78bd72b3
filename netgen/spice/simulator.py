"""Runs an outside circuit simulator on a netlist in batch mode and reads back its raw file."""
from __future__ import annotations

import os
import re
import shutil
import subprocess
import tempfile
from dataclasses import dataclass
from pathlib import Path

from netgen.model.errors import NetgenError
from netgen.spice.raw import Plot, RawError, read_raw

DEFAULT_SIMULATOR = "ngspice"
TIMEOUT = 600.0  # seconds; a netlist of our size takes well under one
NETLIST, RAW = "netlist.cir", "out.raw"
# How the simulator says what went wrong ("Error: unknown subckt", "doAnalyses: TRAN: Timestep
# too small", "run simulation(s) aborted"); used to pick its words, not to decide failure: the
# exit code does that (ngspice exits 1 on every error tried, and 0 with a title saying "error:").
_SAID = re.compile(r"^\s*(error\b|doanalyses:|.*\berror:|.*simulation\(s\) aborted|.*timestep too small)", re.I)


def _said(line: str) -> bool:
    return bool(_SAID.match(line)) and not line.startswith("Circuit:")  # its echo of our title


class SimulatorError(NetgenError):
    """The simulator is missing, failed, or wrote no usable results; `log` is its own output."""

    def __init__(self, message: str, log: str = "", hint: str | None = None):
        super().__init__(message, None, hint)
        self.log = log

    def render(self) -> str:
        """The message, then the simulator's own last lines, indented, then the hint."""
        out = [f"error: {self.message}"]
        if self.log.strip():
            out.append("  the simulator said:")
            out += [f"    {line}" for line in _tail(self.log)]
        if self.hint:
            out.append(f"  hint: {self.hint}")
        return "\n".join(out)


@dataclass
class Run:
    """What one simulator run left: its plots, its printed output, and where its files are."""

    plots: list[Plot]
    log: str
    netlist: Path
    raw: Path
    command: list[str]


def _tail(log: str, lines: int = 25) -> list[str]:
    """What the simulator said went wrong: its error lines (each once) if it marked any, else
    the end of its output, where a failing program usually says why."""
    kept = [ln.rstrip() for ln in log.splitlines() if ln.strip()]
    errors = list(dict.fromkeys(ln for ln in kept if _said(ln)))
    if errors:
        kept = errors
    return (["..."] if len(kept) > lines else []) + kept[-lines:]


def find_simulator(cmd: str = DEFAULT_SIMULATOR) -> str:
    """The simulator's executable: a path, or a name looked up on PATH."""
    exe = shutil.which(cmd)
    if exe is None:
        raise SimulatorError(f"the circuit simulator `{cmd}` was not found",
                             hint="install it (Debian/Ubuntu: apt-get install ngspice) "
                                  "or name its executable with --simulator PATH")
    return os.path.abspath(exe)  # the run happens in another directory


def simulate(text: str, cmd: str = DEFAULT_SIMULATOR, workdir: Path | None = None,
             env: dict[str, str] | None = None, timeout: float = TIMEOUT) -> Run:
    """Write `text` to WORKDIR/netlist.cir, run `CMD -b -r out.raw netlist.cir` there (an
    argument list, never a shell), and read out.raw. Without `workdir`, a temporary directory
    is used and removed afterwards (the returned paths are then gone)."""
    exe = find_simulator(cmd)
    if workdir is None:
        with tempfile.TemporaryDirectory(prefix="netgen-sim-") as tmp:
            return _run(text, exe, Path(tmp), env, timeout)
    workdir = Path(workdir)
    workdir.mkdir(parents=True, exist_ok=True)
    return _run(text, exe, workdir, env, timeout)


def _run(text: str, exe: str, wd: Path, env: dict[str, str] | None, timeout: float) -> Run:
    netlist, raw = wd / NETLIST, wd / RAW
    netlist.write_text(text, encoding="utf-8")
    if raw.exists():
        raw.unlink()  # never read a previous run's results
    command = [exe, "-b", "-r", RAW, NETLIST]  # relative names: the run happens inside wd
    try:
        p = subprocess.run(command, cwd=wd, env=dict(os.environ if env is None else env),
                           stdin=subprocess.DEVNULL, capture_output=True, timeout=timeout)
    except subprocess.TimeoutExpired as e:
        log = _text(e.stdout) + _text(e.stderr)
        raise SimulatorError(f"{exe} did not finish within {timeout:g} s", log) from None
    except OSError as e:  # not executable, wrong format, ...
        raise SimulatorError(f"{exe} could not be started: {e.strerror or e}") from None
    log = _text(p.stdout) + _text(p.stderr)
    (wd / "simulator.log").write_text(log, encoding="utf-8")
    if p.returncode != 0:
        first = next((ln.strip() for ln in log.splitlines() if _said(ln)), "")
        raise SimulatorError(f"{exe} failed (exit code {p.returncode})" + (f": {first}" if first else ""), log)
    if not raw.exists():
        raise SimulatorError(f"{exe} wrote no results ({RAW})", log)
    try:
        plots = read_raw(raw)
    except RawError as e:
        raise SimulatorError(f"{exe} wrote results that cannot be read: {e.message}", log) from None
    return Run(plots, log, netlist, raw, command)


def _text(b: bytes | str | None) -> str:
    if b is None:
        return ""
    return b if isinstance(b, str) else b.decode("utf-8", "replace")
