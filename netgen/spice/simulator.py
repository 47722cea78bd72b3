"""Runs an outside circuit simulator on a netlist in batch mode and reads back its raw file."""
from __future__ import annotations

import contextlib
import os
import re
import shutil
import signal
import subprocess
import tempfile
import threading
import time
from dataclasses import dataclass
from pathlib import Path

from netgen.model.errors import NetgenError
from netgen.spice.raw import Plot, RawError, read_raw

DEFAULT_SIMULATOR = "ngspice"
TIMEOUT = 600.0  # seconds; a netlist of our size takes well under one
NETLIST, RAW, LOG = "netlist.cir", "out.raw", "simulator.log"
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
    is used and removed afterwards (the returned paths are then gone), on every way out:
    an error, the timeout, Ctrl-C, or SIGTERM/SIGHUP (after which the process still ends by
    that signal). The simulator runs in a process group of its own, which is ended when it
    exits, times out or is interrupted, so nothing it started is left running."""
    exe = find_simulator(cmd)
    with _signals_as_interrupt():
        if workdir is None:
            with tempfile.TemporaryDirectory(prefix="netgen-sim-") as tmp:
                return _run(text, exe, Path(tmp), env, timeout)
        workdir = Path(workdir)
        try:
            workdir.mkdir(parents=True, exist_ok=True)
        except OSError as e:
            raise NetgenError(f"cannot write in `{workdir}`: {e.strerror or e}", None,
                              "name a folder you can write to") from None
        return _run(text, exe, workdir, env, timeout)


def _run(text: str, exe: str, wd: Path, env: dict[str, str] | None, timeout: float) -> Run:
    netlist, raw, log_path = wd / NETLIST, wd / RAW, wd / LOG
    try:
        netlist.write_text(text, encoding="utf-8")
        if raw.exists():
            raw.unlink()  # never read a previous run's results
        out = open(log_path, "wb")
    except OSError as e:
        raise NetgenError(f"cannot write in `{wd}`: {e.strerror or e}", None, "name a folder you can write to") from None
    command = [exe, "-b", "-r", RAW, NETLIST]  # relative names: the run happens inside wd
    # Its output goes to a file, not a pipe: a child it leaves behind could hold a pipe open.
    with out:
        try:
            p = subprocess.Popen(command, cwd=wd, env=dict(os.environ if env is None else env),
                                 stdin=subprocess.DEVNULL, stdout=out, stderr=subprocess.STDOUT,
                                 start_new_session=True)
        except OSError as e:  # not executable, wrong format, ...
            raise SimulatorError(f"{exe} could not be started: {e.strerror or e}") from None
    try:
        finished = _wait(p, timeout)
    finally:
        _end_group(p)  # on every way out: exited, timed out, interrupted
    log = _read_log(log_path)
    if not finished:
        raise SimulatorError(f"{exe} did not finish within {timeout:g} s", log,
                             "give it longer with --timeout SECONDS, or look at the netlist with --keep DIR")
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


def _wait(p: subprocess.Popen, timeout: float) -> bool:
    """Wait up to `timeout` seconds for the simulator to exit; False if it has not. Where the
    system allows, it is left unreaped (WNOWAIT), so that its process group id cannot be taken
    by another process before `_end_group` ends the group."""
    if not (hasattr(os, "waitid") and hasattr(os, "WNOWAIT")):
        try:
            p.wait(timeout)
            return True
        except subprocess.TimeoutExpired:
            return False
    deadline = time.monotonic() + timeout
    delay = 0.0005
    while True:
        try:
            if os.waitid(os.P_PID, p.pid, os.WEXITED | os.WNOHANG | os.WNOWAIT) is not None:
                return True
        except ChildProcessError:  # already reaped
            return True
        left = deadline - time.monotonic()
        if left <= 0:
            return False
        delay = min(delay * 2, left, 0.05)
        time.sleep(delay)


def _end_group(p: subprocess.Popen) -> None:
    """End the simulator and everything it started (its process group), and reap it."""
    if hasattr(os, "killpg"):
        try:
            os.killpg(p.pid, signal.SIGKILL)
        except (ProcessLookupError, PermissionError):
            pass
    elif p.poll() is None:  # pragma: no cover - no process groups on this system
        p.kill()
    p.wait()


def _read_log(path: Path, limit: int = 1 << 20) -> str:
    """The simulator's output (its last `limit` bytes: the end is where it says why)."""
    try:
        with open(path, "rb") as f:
            f.seek(0, os.SEEK_END)
            size = f.tell()
            f.seek(max(0, size - limit))
            data = f.read()
    except OSError:
        return ""
    return ("...\n" if size > limit else "") + _text(data)


@contextlib.contextmanager
def _signals_as_interrupt():
    """While the simulator runs, SIGTERM and SIGHUP (whose default is to end the process on the
    spot, leaving the simulator and the temporary folder behind) raise KeyboardInterrupt, so
    the cleanup runs; afterwards the process ends by the signal it got, as it would have. Only
    signals left at their default, and only in the main thread (where handlers can be set)."""
    if threading.current_thread() is not threading.main_thread():
        yield
        return
    got: list[int] = []

    def interrupt(signum, frame):
        got.append(signum)
        raise KeyboardInterrupt

    old = {}
    for name in ("SIGTERM", "SIGHUP"):
        sig = getattr(signal, name, None)
        if sig is not None and signal.getsignal(sig) == signal.SIG_DFL:
            old[sig] = signal.signal(sig, interrupt)
    try:
        yield
    finally:
        for sig, handler in old.items():
            signal.signal(sig, handler)
        if got:
            os.kill(os.getpid(), got[0])  # its default action again: the process ends


def _text(b: bytes | str | None) -> str:
    if b is None:
        return ""
    return b if isinstance(b, str) else b.decode("utf-8", "replace")
