"""Where a study's runs go: one after another here (`--jobs 1`), a local process pool
(`--jobs N`), or a Dask distributed scheduler (`--cluster ADDRESS`, `--cluster local`).

Each executor yields `Row`s as runs finish, in any order; a study puts them back in run order.
The runs are `columns.Task`s (text and SI overrides), so what a worker computes does not depend
on which worker, or in which order: the numbers are the same whatever the executor.
"""
from __future__ import annotations

import concurrent.futures as cf
import multiprocessing
import os
import signal
from collections.abc import Iterator

from netgen.model.errors import NetgenError
from netgen.studies.columns import Row, Task, run_task

CLUSTER_HINT = 'install the cluster extra (from a checkout: python -m pip install -e ".[cluster]"; Dask distributed)'


class Serial:
    """Every run in this process, in order."""

    name = "serial"

    def rows(self, tasks: list[Task]) -> Iterator[Row]:
        for t in tasks:
            yield run_task(t)

    def close(self) -> None:
        pass


def _ignore_interrupt() -> None:
    """A worker leaves Ctrl-C to the study, which stops the pool and keeps the finished rows."""
    signal.signal(signal.SIGINT, signal.SIG_IGN)


class Pool:
    """A local process pool of `jobs` workers."""

    def __init__(self, jobs: int):
        self.jobs = jobs
        self.name = f"{jobs} processes"
        self.pool = cf.ProcessPoolExecutor(max_workers=jobs, initializer=_ignore_interrupt)

    def rows(self, tasks: list[Task]) -> Iterator[Row]:
        self.finished = False
        futures = [self.pool.submit(run_task, t) for t in tasks]
        for f in cf.as_completed(futures):
            yield f.result()
        self.finished = True

    def close(self) -> None:
        if getattr(self, "finished", True):  # every run done: the workers end as usual
            self.pool.shutdown(wait=True)
            return
        # Interrupted: pending runs are cancelled, and runs under way are ended with their
        # workers, so the study stops now rather than after its longest run.
        processes = list((getattr(self.pool, "_processes", None) or {}).values())
        self.pool.shutdown(wait=False, cancel_futures=True)
        for p in processes:
            if p.is_alive():
                p.terminate()


class Cluster:
    """A Dask distributed scheduler at `address` (`tcp://host:8786`), or `local`: a
    LocalCluster of `jobs` worker processes started for this study and stopped after it."""

    def __init__(self, address: str, jobs: int | None = None):
        try:
            from distributed import Client, LocalCluster
        except ImportError:
            raise NetgenError(f"--cluster {address}: running on a cluster needs Dask distributed, which is not "
                              "installed", None, CLUSTER_HINT) from None
        self.cluster = None
        try:
            if address == "local":
                import dask

                # Workers forked from this process start with netgen already imported: measured on 2
                # loaded cores, 8 runs took 6 s with fork against 35 s with Dask's default (spawn,
                # each worker importing numpy, scipy and the grammar again).
                fork = "fork" in multiprocessing.get_all_start_methods()
                with dask.config.set({"distributed.worker.multiprocessing-method": "fork"} if fork else {}):
                    self.cluster = LocalCluster(n_workers=jobs or os.cpu_count() or 1, threads_per_worker=1,
                                                processes=True, dashboard_address=None)
                self.client = Client(self.cluster)
            else:
                self.client = Client(address, timeout="10s")
        except (OSError, TimeoutError, ValueError) as e:
            self.close()
            raise NetgenError(f"--cluster {address}: cannot reach the scheduler ({e})", None,
                              "start one with `dask scheduler` and workers with `dask worker ADDRESS`, "
                              "or use --cluster local") from None
        self.name = f"cluster {address}"

    def rows(self, tasks: list[Task]) -> Iterator[Row]:
        from distributed import as_completed

        futures = self.client.map(run_task, tasks, pure=False)
        self._futures = futures
        for f in as_completed(futures):
            yield f.result()

    def close(self) -> None:
        """Cancel what is left, then disconnect (and stop a local cluster); a second call does nothing."""
        futures, self._futures = getattr(self, "_futures", None), None
        client, self.client = getattr(self, "client", None), None
        cluster, self.cluster = self.cluster, None
        if client is not None:
            if futures:
                client.cancel(futures)
            client.close()
        if cluster is not None:
            cluster.close()


def executor(jobs: int | None = None, cluster: str | None = None):
    """`--jobs N` (default: the number of cores) or `--cluster ADDRESS`."""
    if cluster is not None:
        if not cluster.strip():
            raise NetgenError('--cluster "": expected an address', None, "e.g. --cluster tcp://host:8786 or --cluster local")
        return Cluster(cluster.strip(), jobs)
    if jobs is None:
        jobs = len(os.sched_getaffinity(0)) if hasattr(os, "sched_getaffinity") else (os.cpu_count() or 1)
    if jobs < 1:
        raise NetgenError(f"--jobs {jobs}: expected at least 1", None, "e.g. --jobs 4, or --jobs 1 for one run at a time")
    return Serial() if jobs == 1 else Pool(jobs)
