"""`netgen verify -j N`: designs verified on a local process pool, handed back in the order
given, so the output is the same as one after another."""
from __future__ import annotations

import concurrent.futures as cf
import signal
from collections.abc import Iterator
from functools import partial
from pathlib import Path

from netgen.regression.verify import Outcome, verify_file


def _ignore_interrupt() -> None:
    """Ctrl-C is for the command, which stops the pool."""
    signal.signal(signal.SIGINT, signal.SIG_IGN)


def verify_files(files: list[Path], jobs: int, **options) -> Iterator[Outcome]:
    """`verify_file(f, **options)` for each file on `jobs` processes, yielded in the order of
    `files` as soon as each and those before it are done."""
    pool = cf.ProcessPoolExecutor(max_workers=jobs, initializer=_ignore_interrupt)
    try:
        futures = [pool.submit(partial(verify_file, f, **options)) for f in files]
        for f in futures:
            yield f.result()
    finally:
        processes = list((getattr(pool, "_processes", None) or {}).values())
        pool.shutdown(wait=False, cancel_futures=True)
        for p in processes:
            if p.is_alive():
                p.terminate()
