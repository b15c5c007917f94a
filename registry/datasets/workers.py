"""Fingerprint a dataset's files here, on N local worker processes, or on a Dask cluster.

Every way runs the same jobs (plan.py) and merges their fingerprints in job order, so the result
is the same to the bit. Without --workers the jobs run one after another in this process, each
reading ahead and hashing on two threads; with --workers N each of N processes works on one
thread (this process being one of them), which is what lets N workers use N cores.
"""

from __future__ import annotations

import gc
import multiprocessing
import threading
from collections import deque
from collections.abc import Callable, Mapping, Sequence
from concurrent.futures import (
    FIRST_COMPLETED,
    Future,
    ProcessPoolExecutor,
    wait,
)
from concurrent.futures.process import BrokenProcessPool
from dataclasses import dataclass, replace
from typing import Any

from registry.datasets.errors import EmptyDataset
from registry.datasets.file_digests import DigestHelper
from registry.datasets.fingerprint import DatasetFingerprint, empty_fingerprint, merge_fingerprints
from registry.datasets.jobs import JobResult, run_job
from registry.datasets.locations import SourceFile
from registry.datasets.plan import FingerprintPlan, Job, plan_fingerprint
from registry.errors import UserError

CLUSTER_TIMEOUT = 10.0  # seconds to wait for a Dask scheduler to answer

# progress(rows, bytes, files): rows read, and bytes and files finished, since the last call
Progress = Callable[[int, int, int], None]


@dataclass(frozen=True)
class DatasetRun:
    """A dataset's fingerprint and the files it was made from."""

    fingerprint: DatasetFingerprint
    sources: tuple[SourceFile, ...]
    total_rows: int | None = None


def fingerprint_dataset(paths: Sequence[str], *, schema_json: Mapping[str, Any] | None = None,
                        format: str | None = None, keys: Sequence[str] = (),
                        exclude: Sequence[str] = (), workers: int | None = None,
                        cluster: str | None = None, cluster_timeout: float = CLUSTER_TIMEOUT,
                        progress: Progress | None = None,
                        on_plan: Callable[[FingerprintPlan], None] | None = None,
                        set_heap_aside: bool = False) -> DatasetRun:
    """Fingerprint the files, folders and globs named, and list the files with their SHA-256.

    With `set_heap_aside` (the command line, whose process ends with its output), every object
    alive once the compiled kernels are loaded moves to the garbage collector's permanent
    generation (gc.freeze), as CPython's gc documentation advises before a fork: then neither
    the forked workers nor this process's later collections walk the loaded libraries' hundred
    thousand objects again (each full collection took 60-75 ms). The caller calls gc.unfreeze
    when it is done."""
    if workers is not None and workers < 1:
        raise UserError("give at least 1 worker", place="--workers")
    if workers is not None and cluster is not None:
        raise UserError("choose local workers or a cluster, not both", place="--cluster")
    plan = plan_fingerprint(paths, schema_json, format, keys, exclude)
    if on_plan is not None:
        on_plan(plan)
    tally = Tally(plan, progress)
    if cluster is not None:
        from registry.datasets.cluster import run_on_cluster

        if set_heap_aside:
            gc.freeze()  # this process only sends the jobs and merges what comes back
        results = run_on_cluster(cluster, plan, cluster_timeout, tally)
    elif workers is None or workers == 1 or len(plan.jobs) == 1:
        results = run_here(plan, tally, threads=workers is None, set_heap_aside=set_heap_aside)
    else:
        results = run_on_processes(plan, workers, tally, set_heap_aside=set_heap_aside)
    return assemble(plan, results)


def assemble(plan: FingerprintPlan, results: Sequence[JobResult]) -> DatasetRun:
    """Merge the jobs' fingerprints in job order (the order fixes the rounding of the moments)."""
    settings = plan.settings
    whole = empty_fingerprint(plan.record, settings.keys, settings.exclude)
    digests: dict[int, str] = {}
    for job, result in zip(plan.jobs, results, strict=True):
        whole = merge_fingerprints(whole, result.fingerprint)
        if result.sha256 is not None:
            digests[job.file] = result.sha256
    if whole.rows == 0:
        raise EmptyDataset("the files hold no records", place=plan.place)
    sources = tuple(SourceFile(f.relative_path, f.size, digests[index])
                    for index, f in enumerate(plan.files))
    return DatasetRun(whole, sources, plan.total_rows)


class Tally:
    """Turns finished jobs into progress: rows, bytes, and files whose every job is done."""

    def __init__(self, plan: FingerprintPlan, progress: Progress | None) -> None:
        self.progress = progress
        self.jobs_left = [0] * len(plan.files)
        for job in plan.jobs:
            self.jobs_left[job.file] += 1

    def rows(self, rows: int) -> None:
        if self.progress is not None:
            self.progress(rows, 0, 0)

    def finished(self, job: Job, rows: int) -> None:
        self.jobs_left[job.file] -= 1
        if self.progress is not None:
            self.progress(rows, job.bytes, int(self.jobs_left[job.file] == 0))


def run_here(plan: FingerprintPlan, tally: Tally, threads: bool,
             set_heap_aside: bool = False) -> list[JobResult]:
    if set_heap_aside:
        import registry.datasets.warm_start  # noqa: F401 - the kernels, as run_on_processes does
        gc.freeze()
    results = []
    for job in plan.jobs:
        results.append(run_job(job, plan.settings, threads, tally.rows))
        tally.finished(job, 0)  # its rows were counted batch by batch
    return results


def run_on_processes(plan: FingerprintPlan, workers: int, tally: Tally,
                     set_heap_aside: bool = False) -> list[JobResult]:
    """This process and workers - 1 child processes, each on one thread: the children take
    jobs from the front of the list, this process from the back, until they meet.

    Loading the kernels comes first, in this process alone, so the children start with them;
    meanwhile a helper process on the other core takes the SHA-256 of as many files as it can,
    which their jobs then need not take."""
    helper = DigestHelper(plan, _start_method())
    try:
        import registry.datasets.warm_start  # noqa: F401 - the kernels, loaded once for all
    finally:
        digests = helper.stop()
    if set_heap_aside:
        gc.freeze()
    plan = replace(plan, jobs=tuple(replace(job, hashes_file=False) if job.file in digests
                                    else job for job in plan.jobs))
    results = _run_on_processes(plan, workers, tally)
    return [JobResult(result.fingerprint, digests[job.file]) if job.file in digests else result
            for job, result in zip(plan.jobs, results, strict=True)]


def _run_on_processes(plan: FingerprintPlan, workers: int, tally: Tally) -> list[JobResult]:
    children = workers - 1
    pool = ProcessPoolExecutor(max_workers=children, mp_context=_start_method(),
                               initializer=_start_worker)
    pending = deque(range(len(plan.jobs)))
    futures: dict[Future, int] = {}
    results: list[JobResult | None] = [None] * len(plan.jobs)

    def feed() -> None:
        # a job queued behind each running one, and always one left for this process
        while len(pending) > 1 and len(futures) < 2 * children:
            index = pending.popleft()
            futures[pool.submit(run_job, plan.jobs[index], plan.settings)] = index

    def collect(block: bool) -> None:
        done, _ = wait(futures, timeout=None if block else 0, return_when=FIRST_COMPLETED)
        for future in done:
            index = futures.pop(future)
            result = future.result()  # raises the job's error, as it was raised
            results[index] = result
            tally.finished(plan.jobs[index], result.fingerprint.rows)

    try:
        feed()
        while pending:
            index = pending.pop()
            results[index] = run_job(plan.jobs[index], plan.settings, False, tally.rows)
            tally.finished(plan.jobs[index], 0)  # its rows were counted batch by batch
            collect(block=False)
            feed()
        while futures:
            collect(block=True)
    except BrokenProcessPool:
        raise UserError("a worker process stopped before its work was done (out of memory, or "
                        "killed); try fewer workers", place="--workers") from None
    finally:
        pool.shutdown(wait=True, cancel_futures=True)
    return results  # type: ignore[return-value]


def _start_method() -> multiprocessing.context.BaseContext:
    """Fork when this process runs one thread (the command line): the children start at once,
    with the kernels already loaded. A process running other threads (a server, a test
    runner, a Dask client) spawns fresh interpreters instead, as a fork copies the locks
    those threads may hold."""
    if threading.active_count() == 1 and "fork" in multiprocessing.get_all_start_methods():
        return multiprocessing.get_context("fork")
    return multiprocessing.get_context("spawn")


def _start_worker() -> None:
    import registry.datasets.warm_start  # noqa: F401 - loads the compiled kernels up front
