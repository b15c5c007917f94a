"""Fingerprint jobs on an existing Dask cluster (dask.distributed, the optional `dask` extra).

The scheduler runs the same jobs as local workers; their fingerprints come back here and merge
in job order, so the result is the one this machine computes, to the bit. The workers need
lockkeeper installed (the dataset code is imported there, not shipped).
"""

from __future__ import annotations

from typing import TYPE_CHECKING

from registry.datasets.jobs import JobResult, run_job
from registry.errors import UserError

if TYPE_CHECKING:
    from registry.datasets.plan import FingerprintPlan
    from registry.datasets.workers import Tally


def connect(address: str, timeout: float):
    """A client of the scheduler at the address, or a one-line error within `timeout` seconds."""
    try:
        import distributed
    except ImportError:
        raise UserError("a cluster needs Dask: pip install 'lockkeeper[dask]'",
                        place="--cluster") from None
    try:
        return distributed.Client(address, timeout=timeout, set_as_default=False)
    except (OSError, TimeoutError, ValueError) as error:
        reason = " ".join(str(error).split())[:200] or type(error).__name__
        raise UserError(f"no Dask scheduler answered at {address} within {timeout:g} s "
                        f"({reason})", place="--cluster") from None


def run_on_cluster(address: str, plan: FingerprintPlan, timeout: float,
                   tally: Tally) -> list[JobResult]:
    import distributed

    with connect(address, timeout) as client:
        futures = client.map(run_job, plan.jobs, settings=plan.settings, pure=False)
        index = {future.key: number for number, future in enumerate(futures)}
        try:
            for future in distributed.as_completed(futures, loop=client.loop):
                result = future.result()  # raises the job's error, as it was raised
                number = index[future.key]
                tally.finished(plan.jobs[number], result.fingerprint.rows)
            return client.gather(futures)
        finally:
            client.cancel(futures)
