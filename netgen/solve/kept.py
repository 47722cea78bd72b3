"""Which solved states a transient keeps: every unknown while that is cheap, else only the columns
the run's signals read, with each unknown's smallest and largest value kept as it goes.

A transient of a large mesh reports thousands of points of every unknown; kept whole, a 300 × 300
plate's states are 720 MB. The run knows before it starts which signals it will evaluate (the
recorded ones, expectations, figures of merit); `traced` finds the unknowns those read by
evaluating them once on a stand-in that notes every column read. `States` stores every column
until the samples pass `BUDGET` bytes, then only the traced ones; what scans every node (the dew
point caution) reads the running extremes instead. A signal that needs a column that was dropped
raises `NotKept`, which says how to keep it.
"""
from __future__ import annotations

import numpy as np

from netgen.model.errors import NetgenError
from netgen.model.signals import as_signal

# Stored states (samples × unknowns × 8 bytes) up to this size keep every unknown, as small
# designs always have; above it only the columns the run needs.
BUDGET = 256 * 1024 * 1024


class NotKept(NetgenError):
    """A signal read an unknown whose states the transient did not keep."""

    def __init__(self, name: str, kept: int, n: int):
        super().__init__(
            f"the transient kept the values of {kept} of its {n:,} unknowns at every point, not those of "
            f"`{name}`: a run this large keeps only what it reports",
            None, "record a signal of it (`record T(x)`), or, in Python, keep every unknown: "
            "netgen.run(design, keep_all=True)")
        self.unknown = name


class Kept:
    """Samples × n states of which only some columns are stored; `[rows, cols]` reads them like
    an array, and reading a column that was not kept raises `NotKept`. `lo` and `hi` hold every
    unknown's smallest and largest value over all samples."""

    def __init__(self, data: np.ndarray, cols: np.ndarray, names: list[str], lo: np.ndarray, hi: np.ndarray):
        self.data, self.names, self.lo, self.hi = data, names, lo, hi
        self.pos = np.full(len(names), -1, dtype=np.intp)
        self.pos[cols] = np.arange(len(cols))
        self.shape = (data.shape[0], len(names))

    def __getitem__(self, key):
        if not isinstance(key, tuple) or len(key) != 2:
            raise TypeError("kept states are read as [rows, columns]")
        rows, cols = key
        where = self.pos[cols]
        missing = np.flatnonzero(np.atleast_1d(where) < 0)
        if len(missing):
            first = int(np.atleast_1d(cols)[missing[0]]) if np.ndim(cols) else int(cols)
            raise NotKept(self.names[first], int(np.count_nonzero(self.pos >= 0)), len(self.names))
        return self.data[rows, where]

    def __len__(self):
        return self.shape[0]


class States:
    """The transient's states, appended a row at a time into one preallocated block (untouched
    pages of a large `np.empty` are never committed, so a generous capacity costs no memory).
    With `cols` given, once the rows pass `BUDGET` bytes the block is cut down to those columns
    and each unknown's extremes are kept from then on."""

    def __init__(self, names: list[str], capacity: int, cols: np.ndarray | None = None):
        self.names, self.n = names, len(names)
        self.buf = np.empty((max(capacity, 4), self.n))
        self.k = 0
        self.want = cols
        self.cols = None  # the kept columns once the block is cut down
        self.lo = self.hi = None

    def append(self, row) -> None:
        if self.cols is None and self.want is not None and (self.k + 1) * self.n * 8 > BUDGET:
            self._cut()
        if self.k == len(self.buf):
            bigger = np.empty((int(len(self.buf) * 1.5) + 4, self.buf.shape[1]))
            bigger[: self.k] = self.buf[: self.k]
            self.buf = bigger
        if self.cols is None:
            self.buf[self.k] = row
        else:
            self.buf[self.k] = row[self.cols]
            np.minimum(self.lo, row, out=self.lo)
            np.maximum(self.hi, row, out=self.hi)
        self.k += 1

    def _cut(self) -> None:
        self.cols = np.asarray(self.want, dtype=np.intp)
        old = self.buf[: self.k]
        self.lo = old.min(axis=0) if self.k else np.full(self.n, np.inf)
        self.hi = old.max(axis=0) if self.k else np.full(self.n, -np.inf)
        small = np.empty((len(self.buf), len(self.cols)))
        small[: self.k] = old[:, self.cols]
        self.buf = small

    def array(self):
        """The states: an array (samples × n) when every unknown was kept, else a `Kept`."""
        if self.cols is None:
            return self.buf[: self.k]
        return Kept(self.buf[: self.k], self.cols, self.names, self.lo, self.hi)


class _Tracer:
    """One row of states standing in for a run's, noting each column a signal reads."""

    def __init__(self, x: np.ndarray):
        self.x = x[None, :]
        self.shape = self.x.shape
        self.read: set[int] = set()

    def __getitem__(self, key):
        rows, cols = key
        self.read.update(int(c) for c in np.atleast_1d(cols))
        return self.x[rows, cols]

    def __len__(self):
        return 1


def traced(sig, texts, x0: np.ndarray) -> set[int]:
    """The unknowns the signals `texts` read, found by evaluating each once at the states `x0`."""
    X = _Tracer(np.asarray(x0, dtype=float))
    Xdot = np.zeros_like(X.x)
    for text in dict.fromkeys(texts):
        sig(text, X, Xdot, np.array([0.0]), False)
    return X.read


def extremes(X, sys, text: str) -> np.ndarray:
    """The smallest and largest value of a node's own temperature or voltage over the samples of
    `X` (a `Kept`, which tracked them); any other signal re-raises `NotKept`."""
    s = as_signal(text)
    if s.kind in ("T", "V") and len(s.args) == 1 and s.args[0] in sys.node_index and isinstance(X, Kept):
        i = sys.node_index[s.args[0]]
        if i >= sys.n:
            return np.zeros(2)
        return np.array([X.lo[i], X.hi[i]])
    raise NotKept(text, int(np.count_nonzero(X.pos >= 0)), len(X.names))
