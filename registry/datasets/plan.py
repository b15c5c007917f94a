"""The plan of a fingerprint: the dataset's record type and the jobs that read its files.

The jobs depend only on the files (one per file; a large Parquet file one per share of its row
groups), never on how many workers run them, and their fingerprints merge in job order: so one
process, local workers and a Dask cluster give the same fingerprint to the bit.
"""

from __future__ import annotations

import json
import math
from collections.abc import Mapping, Sequence
from contextlib import contextmanager
from dataclasses import dataclass
from typing import Any
from urllib.parse import unquote

from fastavro.schema import to_parsing_canonical_form

from registry.datasets.errors import ColumnsNotMatching
from registry.datasets.locations import DataFile, find_data_files
from registry.datasets.partition_values import partition_value
from registry.datasets.readers import Part, guess_format, open_source
from registry.datasets.types import RecordType, record_type
from registry.errors import LockkeeperError, UserError

JOB_ROWS = 1 << 20  # a Parquet file is split into jobs of about this many rows (whole groups)


@dataclass(frozen=True)
class Job:
    """One file, or every n-th row group of one Parquet file."""

    file: int  # index of the file in the plan
    path: str
    relative_path: str
    format: str
    partition: tuple[tuple[str, Any], ...]
    part: Part
    hashes_file: bool  # the first job of each file also takes the file's SHA-256
    bytes: int  # this job's share of the file's bytes, for progress


@dataclass(frozen=True)
class JobSettings:
    """What every job of one fingerprint shares."""

    schema_json: Mapping[str, Any]
    keys: tuple[str, ...] = ()
    exclude: tuple[str, ...] = ()
    names_files: bool = False  # places of errors start with the file's path in the dataset


@dataclass(frozen=True)
class FingerprintPlan:
    record: RecordType
    files: tuple[DataFile, ...]
    jobs: tuple[Job, ...]
    settings: JobSettings
    total_rows: int | None  # known when every file says how many records it holds (Parquet)
    place: str  # the arguments, for errors about the dataset as a whole

    @property
    def total_bytes(self) -> int:
        return sum(f.size for f in self.files)


@contextmanager
def naming(data_file: DataFile, names_files: bool):
    """Errors about one file of several name that file first."""
    try:
        yield
    except LockkeeperError as error:
        if names_files:
            located(error, data_file.path, data_file.relative_path)
        raise


def located(error: LockkeeperError, path: str, relative_path: str) -> LockkeeperError:
    if error.place in (None, "", path):
        error.place = relative_path
    elif not relative_path.startswith(error.place) and not error.place.startswith(relative_path):
        error.place = f"{relative_path}, {error.place}"
    return error


def plan_fingerprint(arguments: Sequence[str], schema_json: Mapping[str, Any] | None = None,
                     format: str | None = None, keys: Sequence[str] = (),
                     exclude: Sequence[str] = ()) -> FingerprintPlan:
    """Find the files, settle the schema every file is read under, and split the work."""
    from registry.datasets.fingerprint import check_columns

    found = find_data_files(arguments, any_extension=format is not None)
    files, names_files = found.files, found.gathered
    formats = []
    for data_file in files:
        with naming(data_file, names_files):
            formats.append(format or guess_format(data_file.path))
    keys_of_partition = _partition_keys(files)
    if schema_json is None:
        schema_json = _schema_the_files_share(files, formats, keys_of_partition, names_files)
    record = record_type(schema_json)
    check_columns(record, keys, exclude)
    settings = JobSettings(dict(schema_json), tuple(keys), tuple(exclude), names_files)
    jobs: list[Job] = []
    total_rows: int | None = 0
    for index, (data_file, file_format) in enumerate(zip(files, formats, strict=True)):
        with naming(data_file, names_files):
            partition = _typed_partition(data_file, record)
            source = open_source(data_file.path, schema_json, file_format, partition)
            parts = _parts(source.path) if file_format == "parquet" else 1
        total_rows = None if total_rows is None or source.total_rows is None else \
            total_rows + source.total_rows
        for part in range(parts):
            jobs.append(Job(index, data_file.path, data_file.relative_path, file_format,
                            partition, (part, parts), part == 0, data_file.size // parts))
    return FingerprintPlan(record, files, tuple(jobs), settings, total_rows, " ".join(arguments))


def _parts(path: str) -> int:
    import pyarrow.parquet as pq

    metadata = pq.ParquetFile(path).metadata
    return max(1, min(metadata.num_row_groups, math.ceil(metadata.num_rows / JOB_ROWS)))


def _partition_keys(files: Sequence[DataFile]) -> tuple[str, ...]:
    """Every file must sit under the same partition keys, in the same order."""
    first = files[0]
    wanted = tuple(key for key, _ in first.partition)
    for data_file in files[1:]:
        keys = tuple(key for key, _ in data_file.partition)
        if keys != wanted:
            raise UserError(f"the files sit under different partition folders: "
                            f"{first.relative_path!r} under {list(wanted) or 'none'}, "
                            f"{data_file.relative_path!r} under {list(keys) or 'none'}",
                            place=data_file.relative_path)
    return wanted


def _typed_partition(data_file: DataFile, record: RecordType) -> tuple[tuple[str, Any], ...]:
    typed = []
    for key, text in data_file.partition:
        folder = _folder_of(data_file, key)
        if key not in record.names:
            raise UserError(f"the schema has no field {key!r} for the partition folder",
                            place=folder)
        typed.append((key, partition_value(text, record.field(key), key, folder)))
    return tuple(typed)


def _folder_of(data_file: DataFile, key: str) -> str:
    """The dataset-relative path of the `key=...` folder a file sits in."""
    segments = data_file.relative_path.split("/")
    for index, segment in enumerate(segments[:-1]):
        if unquote(segment.partition("=")[0]) == key:
            return "/".join(segments[:index + 1])
    return data_file.relative_path


def _schema_the_files_share(files: Sequence[DataFile], formats: Sequence[str],
                            partition_keys: Sequence[str], names_files: bool) -> dict[str, Any]:
    """Without --schema, every file's own schema must be the first file's; the partition
    keys the files lack join it as strings."""
    schemas = []
    for data_file, file_format in zip(files, formats, strict=True):
        with naming(data_file, names_files):
            schemas.append(dict(open_source(data_file.path, None, file_format).schema_json))
    first = schemas[0]
    for data_file, schema in zip(files[1:], schemas[1:], strict=True):
        _check_agreement(files[0], first, data_file, schema)
    names = {field["name"] for field in first["fields"]}
    added = [{"name": key, "type": "string"} for key in partition_keys if key not in names]
    return {**first, "fields": [*first["fields"], *added]} if added else first


def _check_agreement(first_file: DataFile, first: Mapping[str, Any], other_file: DataFile,
                     other: Mapping[str, Any]) -> None:
    if _canonical(first) == _canonical(other):
        return
    a, b = _field_types(first), _field_types(other)
    both = f"{first_file.relative_path!r} and {other_file.relative_path!r}"
    for name in [*a, *(n for n in b if n not in a)]:
        if name not in b or name not in a:
            holder, lacker = (first_file, other_file) if name in a else (other_file, first_file)
            raise ColumnsNotMatching(
                f"the schemas of {both} disagree: field {name!r} is in "
                f"{holder.relative_path!r} but not in {lacker.relative_path!r}",
                place=f"{other_file.relative_path}, field {name}")
        if a[name] != b[name]:
            raise ColumnsNotMatching(
                f"the schemas of {both} disagree on field {name!r}: {a[name]} in the first, "
                f"{b[name]} in the second", place=f"{other_file.relative_path}, field {name}")
    raise ColumnsNotMatching(f"the schemas of {both} disagree (their names or field order)",
                             place=other_file.relative_path)


def _canonical(schema: Mapping[str, Any]) -> str:
    try:
        return to_parsing_canonical_form(dict(schema))
    except Exception:  # fastavro raises several kinds for a schema it cannot read
        return repr(sorted(schema.items()))


def _field_types(schema: Mapping[str, Any]) -> dict[str, str]:
    return {field["name"]: json.dumps(field["type"], sort_keys=True)
            for field in schema["fields"]}
