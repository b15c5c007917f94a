"""Fingerprints of datasets: content digest, schema fingerprint, profile and overlap sketches.

A fingerprint is built batch by batch and partitions merge by `merge_fingerprints`, so one
process, a Dask cluster and a fingerprint loaded back from JSON all meet in the same value.
"""

from __future__ import annotations

import hashlib
import json
import os
import queue
import threading
from collections import deque
from collections.abc import Callable, Iterable, Iterator, Mapping, Sequence
from concurrent.futures import Future
from dataclasses import dataclass, field, replace
from typing import Any

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc
from fastavro.schema import to_parsing_canonical_form

from registry.datasets import hashing
from registry.datasets.numeric_columns import is_plain_number_column
from registry.datasets.profile import ColumnProfile, empty_profile, merge_profiles, profile_of
from registry.datasets.readers import Part, Source, read_batches
from registry.datasets.sketch import (
    DEFAULT_K,
    BottomKSketch,
    add_hashes,
    empty_sketch,
    merge_sketches,
)
from registry.datasets.types import NUMERIC, RecordType, ValueType, value_type_of
from registry.errors import UserError
from registry.thread_pools import shared_pool

DIGEST_MODULUS = 1 << 128


def schema_fingerprint(schema_json: Mapping[str, Any]) -> str:
    """SHA-256 of the Avro Parsing Canonical Form (Avro specification, Schema Fingerprints)."""
    canonical = to_parsing_canonical_form(dict(schema_json))
    return hashlib.sha256(canonical.encode("utf-8")).hexdigest()


def digest_hex(value: int) -> str:
    return f"{value % DIGEST_MODULUS:032x}"


@dataclass(frozen=True)
class DatasetFingerprint:
    """What a dataset holds, in a form that merges across partitions and survives JSON."""

    rows: int
    content_digest: str
    schema_fingerprint: str
    profile: Mapping[str, ColumnProfile]
    sketch: BottomKSketch
    feature_digest: str  # the digest of records without the key and excluded columns
    feature_sketch: BottomKSketch
    key_digest: str | None
    keys: tuple[str, ...] = ()
    excluded: tuple[str, ...] = ()
    schema_json: Mapping[str, Any] = field(default_factory=dict)

    def to_dict(self) -> dict[str, Any]:
        return {
            "rows": self.rows,
            "content_digest": self.content_digest,
            "schema_fingerprint": self.schema_fingerprint,
            "profile": {name: column.to_dict() for name, column in self.profile.items()},
            "sketch": self.sketch.to_dict(),
            "feature_digest": self.feature_digest,
            "feature_sketch": self.feature_sketch.to_dict(),
            "key_digest": self.key_digest,
            "keys": list(self.keys),
            "excluded": list(self.excluded),
            "schema": dict(self.schema_json),
        }

    @classmethod
    def from_dict(cls, data: Mapping[str, Any]) -> DatasetFingerprint:
        try:
            return cls(
                rows=int(data["rows"]), content_digest=str(data["content_digest"]),
                schema_fingerprint=str(data["schema_fingerprint"]),
                profile={name: ColumnProfile.from_dict(column)
                         for name, column in data["profile"].items()},
                sketch=BottomKSketch.from_dict(data["sketch"]),
                feature_digest=str(data.get("feature_digest", data["content_digest"])),
                feature_sketch=BottomKSketch.from_dict(data.get("feature_sketch",
                                                                data["sketch"])),
                key_digest=data.get("key_digest"), keys=tuple(data.get("keys", ())),
                excluded=tuple(data.get("excluded", ())), schema_json=data.get("schema", {}))
        except (KeyError, TypeError, ValueError) as error:
            raise UserError(f"not a dataset fingerprint ({error!r})") from error


def empty_fingerprint(record: RecordType, keys: Sequence[str] = (),
                      exclude: Sequence[str] = (), k: int = DEFAULT_K) -> DatasetFingerprint:
    return DatasetFingerprint(
        rows=0, content_digest=digest_hex(0),
        schema_fingerprint=schema_fingerprint(record.schema_json),
        profile={name: empty_profile(value_type) for name, value_type in record.fields},
        sketch=empty_sketch(k), feature_digest=digest_hex(0), feature_sketch=empty_sketch(k),
        key_digest=digest_hex(0) if keys else None, keys=tuple(keys), excluded=tuple(exclude),
        schema_json=dict(record.schema_json))


def add_batch(fingerprint: DatasetFingerprint, batch: pa.RecordBatch,
              record: RecordType) -> DatasetFingerprint:
    """The fingerprint of the records seen so far plus this batch."""
    leave_out = set(fingerprint.keys) | set(fingerprint.excluded)
    rows = batch.num_rows
    feature_sums = [np.zeros(rows, np.uint64), np.zeros(rows, np.uint64)]
    # the left-out columns' sums; empty (and never read) when no column is left out
    rest_sums = [np.zeros(rows, np.uint64), np.zeros(rows, np.uint64)] if leave_out else []
    profiles = {}
    for name in record.names:
        array, value_type = batch.column(name), record.field(name)
        sums = rest_sums if name in leave_out else feature_sums
        if value_type.avro in NUMERIC and is_plain_number_column(array):
            # the kernels hash and profile a numeric column in the same passes
            profile = profile_of(array, value_type, hashing.hash_target(value_type, name, *sums))
        else:
            if value_type.avro in ("string", "enum") and not pa.types.is_dictionary(array.type):
                array = pc.dictionary_encode(array)  # hash and count each distinct value once
            c0, c1 = hashing.contributions(array, value_type, name)
            sums[0] += c0
            sums[1] += c1
            profile = profile_of(array, value_type)
        profiles[name] = merge_profiles(fingerprint.profile[name], profile)
    if leave_out:
        full = hashing.finish_records(feature_sums[0] + rest_sums[0],
                                      feature_sums[1] + rest_sums[1])
        features = hashing.finish_records(*feature_sums)
    else:
        full = features = hashing.finish_records(*feature_sums)
    content = int(fingerprint.content_digest, 16) + full[2]
    feature = int(fingerprint.feature_digest, 16) + features[2] if leave_out else content
    key_digest = fingerprint.key_digest
    if fingerprint.keys:
        assert key_digest is not None  # a fingerprint with keys has a key digest
        key_digest = digest_hex(int(key_digest, 16) + hashing.digest_of_lanes(
            *_key_hashes(batch, record, fingerprint.keys)))
    sketch = add_hashes(fingerprint.sketch, full[1])
    feature_sketch = add_hashes(fingerprint.feature_sketch, features[1]) if leave_out else sketch
    return replace(fingerprint, rows=fingerprint.rows + rows,
                   content_digest=digest_hex(content), feature_digest=digest_hex(feature),
                   key_digest=key_digest,
                   profile=profiles,
                   sketch=sketch, feature_sketch=feature_sketch)


_WORKERS = min(2, os.cpu_count() or 1)


def _key_hashes(batch: pa.RecordBatch, record: RecordType,
                keys: Sequence[str]) -> tuple[np.ndarray, np.ndarray]:
    if len(keys) == 1:
        return hashing.key_lanes(batch.column(keys[0]), record.field(keys[0]))
    return hashing.record_lanes(batch, record, tuple(keys))


def merge_fingerprints(a: DatasetFingerprint, b: DatasetFingerprint) -> DatasetFingerprint:
    """The fingerprint of the union (as multisets) of two partitions' records."""
    if (a.schema_fingerprint, a.keys, a.excluded) != (b.schema_fingerprint, b.keys, b.excluded):
        raise UserError("only fingerprints of one schema with the same key and excluded "
                        "columns merge")
    key_digest = None
    if a.key_digest is not None:
        assert b.key_digest is not None  # the same keys, so both have a key digest
        key_digest = digest_hex(int(a.key_digest, 16) + int(b.key_digest, 16))
    return replace(
        a, rows=a.rows + b.rows,
        content_digest=digest_hex(int(a.content_digest, 16) + int(b.content_digest, 16)),
        feature_digest=digest_hex(int(a.feature_digest, 16) + int(b.feature_digest, 16)),
        key_digest=key_digest,
        profile={name: merge_profiles(column, b.profile[name])
                 for name, column in a.profile.items()},
        sketch=merge_sketches(a.sketch, b.sketch),
        feature_sketch=merge_sketches(a.feature_sketch, b.feature_sketch))


def check_columns(record: RecordType, keys: Sequence[str], exclude: Sequence[str]) -> None:
    for option, names in (("--key", keys), ("--exclude", exclude)):
        for name in names:
            if name not in record.names:
                raise UserError(f"the schema has no field {name!r}", place=f"{option} {name}")


def fingerprint_batches(batches: Iterable[pa.RecordBatch], record: RecordType,
                        keys: Sequence[str] = (), exclude: Sequence[str] = (),
                        progress: Callable[[int], None] | None = None,
                        threads: bool = True) -> DatasetFingerprint:
    """The fingerprint of the batches, merged in their order. Without threads, everything runs
    on the caller's thread (a worker process of --workers uses one core)."""
    check_columns(record, keys, exclude)
    empty = empty_fingerprint(record, keys, exclude)
    fingerprint = empty
    if not threads:
        for batch in batches:
            fingerprint = merge_fingerprints(fingerprint, add_batch(empty, batch, record))
            if progress is not None:
                progress(batch.num_rows)
        return fingerprint
    # Batches are independent and numpy lets go of the GIL, so batches are fingerprinted on two
    # threads and merged here in file order (which keeps the result the same on every run).
    pending: deque[tuple[int, Future]] = deque()

    def merge_oldest() -> None:
        nonlocal fingerprint
        rows, future = pending.popleft()
        fingerprint = merge_fingerprints(fingerprint, future.result())
        if progress is not None:
            progress(rows)

    for batch in batches:
        pending.append((batch.num_rows, shared_pool("fingerprint", _WORKERS).submit(
            add_batch, empty, batch, record)))
        while len(pending) > _WORKERS:
            merge_oldest()
    while pending:
        merge_oldest()
    return fingerprint


def fingerprint_source(source: Source, keys: Sequence[str] = (), exclude: Sequence[str] = (),
                       progress: Callable[[int], None] | None = None,
                       part: Part = (0, 1), threads: bool = True) -> DatasetFingerprint:
    batches: Iterator[pa.RecordBatch] = (
        batch for _, batch in read_batches(replace(source, threads=threads), part))
    if threads:
        batches = read_ahead(batches)
    return fingerprint_batches(batches, source.record, keys, exclude, progress, threads)


def read_ahead(batches: Iterator[pa.RecordBatch], depth: int = 2) -> Iterator[pa.RecordBatch]:
    """Decode the next batches on a thread of their own while this one is being hashed.

    At most `depth` batches wait, so memory stays bounded; an error while reading is raised
    here, in the caller's thread."""
    waiting: queue.Queue = queue.Queue(maxsize=depth)
    finished = object()
    stop = threading.Event()

    def produce() -> None:
        try:
            for batch in batches:
                if stop.is_set():
                    return
                waiting.put(batch)
            waiting.put(finished)
        except BaseException as error:  # handed over to the consuming thread
            waiting.put(error)

    worker = threading.Thread(target=produce, name="read-ahead", daemon=True)
    worker.start()
    try:
        while True:
            item = waiting.get()
            if item is finished:
                return
            if isinstance(item, BaseException):
                raise item
            yield item
    finally:
        stop.set()
        while worker.is_alive():  # let a producer blocked on a full queue finish
            try:
                waiting.get_nowait()
            except queue.Empty:
                worker.join(timeout=0.01)


def fingerprint_file(path: str, *, schema_json: Mapping[str, Any] | None,
                     format: str | None = None, keys: Sequence[str] = (),
                     exclude: Sequence[str] = (),
                     progress: Callable[[int], None] | None = None) -> DatasetFingerprint:
    """Fingerprint one Avro, Parquet or CSV file read under the schema (the file's own for
    Avro and Parquet when none is given), streaming in bounded batches; a folder or a glob
    too (see registry.datasets.workers.fingerprint_dataset)."""
    from registry.datasets.workers import fingerprint_dataset

    def on_rows(rows: int, _bytes: int = 0, _files: int = 0) -> None:
        if progress is not None and rows:
            progress(rows)

    return fingerprint_dataset([path], schema_json=schema_json, format=format, keys=keys,
                               exclude=exclude, progress=on_rows).fingerprint


def key_set_digest(values: Any, avro_type: Any | None = None) -> str:
    """The digest of a set of key values, equal to a fingerprint's key_digest for those keys.

    The values' Avro type is taken from the array (strings, integers, floats) unless given."""
    array = values if isinstance(values, (pa.Array, pa.ChunkedArray)) else pa.array(
        np.asarray(values) if not isinstance(values, list) else values)
    if isinstance(array, pa.ChunkedArray):
        array = array.combine_chunks()
    value_type = value_type_of(avro_type, "/") if avro_type is not None else _arrow_avro(array)
    if value_type.avro in ("int", "long"):
        array = array.cast(pa.int64())
    elif value_type.avro in ("float", "double"):
        array = array.cast(pa.float64())
    if array.null_count:
        value_type = replace(value_type, nullable=True)
    return digest_hex(hashing.digest_of_lanes(*hashing.key_lanes(array, value_type)))


def _arrow_avro(array: pa.Array) -> ValueType:
    kind = array.type
    if pa.types.is_dictionary(kind):
        kind = kind.value_type
    if pa.types.is_integer(kind):
        return ValueType("long")
    if pa.types.is_floating(kind):
        return ValueType("double")
    if pa.types.is_boolean(kind):
        return ValueType("boolean")
    if pa.types.is_string(kind) or pa.types.is_large_string(kind):
        return ValueType("string")
    if pa.types.is_binary(kind) or pa.types.is_large_binary(kind):
        return ValueType("bytes")
    raise UserError(f"key values of type {kind} cannot be digested")


def load_fingerprint(path: str) -> DatasetFingerprint:
    """A fingerprint saved as JSON by `dataset fingerprint --json`."""
    with open(path, encoding="utf-8") as handle:
        try:
            return DatasetFingerprint.from_dict(json.load(handle))
        except json.JSONDecodeError as error:
            raise UserError(f"not a JSON fingerprint ({error})", place=path) from error


__all__ = ["DatasetFingerprint", "fingerprint_file", "fingerprint_batches", "fingerprint_source",
           "merge_fingerprints", "key_set_digest", "schema_fingerprint", "load_fingerprint"]
