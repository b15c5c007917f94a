"""The SHA-256 of a plan's files, taken by a helper process while this one loads the kernels.

Loading the kernels holds the GIL for most of a second. A thread hashing beside it got the GIL
back once per piece after waiting a switch interval, and hashed about half the files in that
time; a process of its own hashes on the other core undisturbed. The helper starts before the
load (with nothing of it to copy) and is gone before the workers start, so they still fork from
a process running one thread.
"""

from __future__ import annotations

import multiprocessing
from multiprocessing.connection import Connection
from multiprocessing.synchronize import Event

from registry.datasets.jobs import file_sha256
from registry.datasets.plan import FingerprintPlan
from registry.errors import LockkeeperError


class DigestHelper:
    """Hashes the plan's files from the last (the first job of this process) back, until
    stopped; `stop` hands back the digests taken, by file index."""

    def __init__(self, plan: FingerprintPlan, context: multiprocessing.context.BaseContext):
        self._stopping = context.Event()
        self._receiver, sender = context.Pipe(duplex=False)
        paths = [data_file.path for data_file in plan.files]
        self._process = context.Process(  # type: ignore[attr-defined]  # every context has it
            target=digest_until_stopped, args=(paths, sender, self._stopping),
            name="file-digests", daemon=True)
        self._process.start()
        sender.close()  # the helper holds the other end: its exit ends the pipe

    def stop(self) -> dict[int, str]:
        """The digests taken so far, once the file being hashed is done."""
        self._stopping.set()
        try:
            digests: dict[int, str] = self._receiver.recv()
        except EOFError:  # the helper did not finish (killed): the jobs hash their files
            digests = {}
        finally:
            self._receiver.close()
            self._process.join()
        return digests


def digest_until_stopped(paths: list[str], sender: Connection, stopping: Event) -> None:
    """A file that does not read is left to its job, which reports it as ever."""
    digests = {}
    for index in reversed(range(len(paths))):
        if stopping.is_set():
            break
        try:
            digests[index] = file_sha256(paths[index])
        except LockkeeperError:
            continue
    sender.send(digests)
    sender.close()
