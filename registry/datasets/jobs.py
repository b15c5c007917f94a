"""One job of a fingerprint: the fingerprint of one file or share of one, and the file's SHA-256.

A plain function of plain values, so it runs the same in this process, in a local worker
process or on a Dask worker.
"""

from __future__ import annotations

import hashlib
from collections.abc import Callable
from dataclasses import dataclass

from registry.datasets.allocation import reuse_large_blocks
from registry.datasets.errors import DatasetFileError, EmptyDataset
from registry.datasets.fingerprint import DatasetFingerprint, empty_fingerprint, fingerprint_source
from registry.datasets.plan import Job, JobSettings, located
from registry.datasets.readers import open_source
from registry.datasets.types import record_type
from registry.errors import LockkeeperError
from registry.thread_pools import shared_pool


@dataclass(frozen=True)
class JobResult:
    fingerprint: DatasetFingerprint
    sha256: str | None  # the whole file's, from the first job of each file


def run_job(job: Job, settings: JobSettings, threads: bool = False,
            progress: Callable[[int], None] | None = None) -> JobResult:
    """Fingerprint the job's share of its file; `threads` lets it use a second core."""
    reuse_large_blocks()  # here, in a worker process or on a cluster's worker alike
    # With threads, the file's SHA-256 is taken on a thread beside the fingerprint (hashlib
    # lets go of the GIL); a worker on one thread takes it first, its core being busy anyway.
    hashing = (shared_pool("file-sha256").submit(file_sha256, job.path)
               if job.hashes_file and threads else None)
    try:
        digest = file_sha256(job.path) if job.hashes_file and hashing is None else None
        try:
            source = open_source(job.path, settings.schema_json, job.format, job.partition)
            fingerprint = fingerprint_source(source, settings.keys, settings.exclude, progress,
                                             part=job.part, threads=threads)
        except EmptyDataset:
            if not settings.names_files:
                raise
            # one file of several may hold no records; the dataset as a whole may not
            fingerprint = empty_fingerprint(record_type(settings.schema_json), settings.keys,
                                            settings.exclude)
        if hashing is not None:
            digest = hashing.result()  # a file that cannot be read raises here, located below
    except LockkeeperError as error:
        if settings.names_files:
            located(error, job.path, job.relative_path)
        raise
    return JobResult(fingerprint, digest)


# Read and hash in large pieces: both calls let go of the GIL, and each piece needs it back
# once. hashlib.file_digest reads 256 KiB at a time, so a file hashed on a thread beside one
# that holds the GIL (loading the kernels) waited a switch interval (5 ms) per 256 KiB.
# 2 MiB: 21 of the benchmark's 40 files hashed during the kernel load (9 before); 8 MiB hashed
# 25 but put a worker's peak memory past four row groups. (Those digests now come from a helper
# process, file_digests.py, which hashed 38 to 40 of them in that time on a busy machine.)
HASH_PIECE = 2 * 1024 * 1024


def file_sha256(path: str) -> str:
    try:
        digest = hashlib.sha256()
        piece = bytearray(HASH_PIECE)
        view = memoryview(piece)
        with open(path, "rb", buffering=0) as handle:
            while read := handle.readinto(piece):
                digest.update(view[:read])
        return digest.hexdigest()
    except OSError as error:
        raise DatasetFileError(f"the file cannot be read ({error.strerror})",
                               place=path) from None

