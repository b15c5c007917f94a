"""Streaming readers: Avro object container files, Parquet and CSV, read in bounded batches.

Each reader yields Arrow record batches shaped by the dataset's record type (types.py), so the
digest, profile and sketch code never sees which format the records came from. A part (i, n)
reads every n-th row group, Avro block or CSV batch starting at the i-th, for partitioned runs.
"""

from __future__ import annotations

import csv
import datetime
import json
import os
from collections.abc import Callable, Collection, Iterable, Iterator, Mapping
from dataclasses import dataclass
from functools import cached_property, partial
from typing import IO, Any, cast

import fastavro
import fastavro.schema
import numpy as np
import pyarrow as pa
import pyarrow.compute as pc
import pyarrow.csv as pacsv
import pyarrow.parquet as pq

from registry.datasets.errors import (
    ColumnsNotMatching,
    DatasetFileError,
    EmptyDataset,
    ValueNotParsing,
    cell,
)
from registry.datasets.types import RecordType, ValueType, record_type, schema_from_arrow
from registry.errors import UserError

BATCH_ROWS = 65536
BATCH_BYTES = 4 << 20
AVRO_CONVERT_ROWS = 2048
CSV_BLOCK_BYTES = 1 << 22
FORMATS = ("avro", "parquet", "csv")
Part = tuple[int, int]


@dataclass(frozen=True)
class Source:
    """A file, the format it is read as, and the record type its records are read under."""

    path: str
    format: str
    record: RecordType
    total_rows: int | None = None  # known up front for Parquet only
    # Fields a `key=value/` folder gives every record of the file, already typed; the file
    # itself holds the other fields (file_record).
    partition: tuple[tuple[str, Any], ...] = ()
    threads: bool = True  # may the reader decode on threads of its own (Parquet)
    # Text and enum columns that stay dictionary-encoded as Parquet stores them (checked and
    # counted by their dictionary): for readers that only profile them, never the content digest,
    # and for columns of few distinct values (a column of ids would build a dictionary as long).
    dictionaries: tuple[str, ...] = ()

    @property
    def schema_json(self) -> Mapping[str, Any]:
        return self.record.schema_json

    @cached_property
    def file_record(self) -> RecordType:
        if not self.partition:
            return self.record
        return record_type(without_fields(self.record.schema_json, dict(self.partition)))


def without_fields(schema_json: Mapping[str, Any], names) -> dict[str, Any]:
    """The record schema less some top-level fields."""
    return {**schema_json, "fields": [f for f in schema_json["fields"] if f["name"] not in names]}


def open_source(path: str, schema_json: Mapping[str, Any] | None = None,
                format: str | None = None,
                partition: tuple[tuple[str, Any], ...] = ()) -> Source:
    """Check the file exists and is not empty, choose its format and its record type.

    With a partition, the schema (required then) holds the partition's fields too."""
    if partition:
        assert schema_json is not None  # a partitioned file is always read with a schema
        source = open_source(path, without_fields(schema_json, dict(partition)), format)
        return Source(path, source.format, record_type(schema_json), source.total_rows,
                      partition)
    if not os.path.isfile(path):
        raise DatasetFileError("no such file", place=path)
    if os.path.getsize(path) == 0:
        raise EmptyDataset("the file is empty", place=path)
    chosen = format or guess_format(path)
    if chosen not in FORMATS:
        raise UserError(f"unknown format {chosen!r}; use one of {', '.join(FORMATS)}",
                        place="--format")
    if chosen == "avro":
        schema = schema_json if schema_json is not None else _avro_writer_schema(path)
        return Source(path, chosen, record_type(schema))
    if chosen == "parquet":
        metadata = _parquet_file(path).metadata
        schema = schema_json if schema_json is not None else schema_from_arrow(
            _parquet_file(path).schema_arrow)
        return Source(path, chosen, record_type(schema), metadata.num_rows)
    if schema_json is None:
        raise UserError("a CSV file needs an Avro schema to type its columns", place="--schema")
    return Source(path, chosen, record_type(schema_json))


def guess_format(path: str) -> str:
    extension = os.path.splitext(path)[1].lower()
    if extension in (".avro",):
        return "avro"
    if extension in (".parquet", ".pq"):
        return "parquet"
    if extension in (".csv",):
        return "csv"
    with open(path, "rb") as handle:
        magic = handle.read(4)
    if magic == b"Obj\x01":
        return "avro"
    if magic == b"PAR1":
        return "parquet"
    return "csv"


def read_batches(source: Source, part: Part = (0, 1),
                 batch_rows: int = BATCH_ROWS) -> Iterator[tuple[int, pa.RecordBatch]]:
    """Yield (number of rows before the batch, batch); raises EmptyDataset when nothing is read."""
    readers = {"avro": _avro_batches, "parquet": _parquet_batches, "csv": _csv_batches}
    seen = False
    for first_row, batch in readers[source.format](source, part, batch_rows):
        if batch.num_rows:
            seen = True
            yield first_row, with_partition(batch, source)
    if not seen and part == (0, 1):
        raise EmptyDataset("the file holds no records", place=source.path)


def with_partition(batch: pa.RecordBatch, source: Source) -> pa.RecordBatch:
    """The batch with the partition's fields added, in the record's field order."""
    if not source.partition:
        return batch
    values = dict(source.partition)
    columns = [pa.repeat(  # type: ignore[call-overload]  # any scalar repeats; stubs list some
                   pa.scalar(values[name], type=value_type.arrow_type()), batch.num_rows)
               if name in values else batch.column(name)
               for name, value_type in source.record.fields]
    return pa.RecordBatch.from_arrays(columns, schema=source.record.arrow_schema())


# --- Avro ------------------------------------------------------------------------------------

class _ReadsNoFurtherThanTheEnd:
    """A file handle whose reads never ask for more than the file holds: fastavro reads a
    length from the file and then asks for that many bytes, which a damaged or hostile header
    could set to gigabytes."""

    def __init__(self, handle) -> None:
        self._handle = handle
        self._size = os.fstat(handle.fileno()).st_size

    def read(self, size: int = -1) -> bytes:
        left = max(self._size - self._handle.tell(), 0)
        return self._handle.read(left if size is None or size < 0 else min(size, left))

    def __getattr__(self, name: str) -> Any:
        return getattr(self._handle, name)


def _bounded(handle: IO[bytes]) -> IO[bytes]:
    """`handle` with its reads bounded by the file's end; every other call goes to `handle`."""
    return cast(IO[bytes], _ReadsNoFurtherThanTheEnd(handle))


def _avro_writer_schema(path: str) -> dict[str, Any]:
    try:
        with open(path, "rb") as handle:
            return json.loads(fastavro.reader(_bounded(handle))
                              .metadata["avro.schema"])
    except Exception as error:  # fastavro reports a bad header in several ways
        raise DatasetFileError(f"not an Avro container file or its header is damaged ({error})",
                               place=path) from error


def _avro_batches(source: Source, part: Part, batch_rows: int):
    make_batch = _AvroBatchMaker(source.file_record)
    reader_schema = _avro_reader_schema(source)
    converters = _logical_converters(source.file_record.schema_json)
    rows_read = 0
    pending: list[dict] = []
    converted: list[pa.RecordBatch] = []
    converted_rows = 0
    pending_start = 0
    with open(source.path, "rb") as handle:
        try:
            blocks = fastavro.block_reader(_bounded(handle), reader_schema)
        except fastavro.read.SchemaResolutionError as error:
            raise ColumnsNotMatching(f"the file's records cannot be read with the given "
                                     f"schema ({error})", place=source.path) from error
        except Exception as error:
            raise DatasetFileError(f"not an Avro container file or its header is damaged "
                                   f"({error})", place=source.path) from error
        index = 0
        while True:
            try:
                block = next(blocks)
            except StopIteration:
                break
            except fastavro.read.SchemaResolutionError as error:
                raise ColumnsNotMatching(f"the file's records cannot be read with the given "
                                         f"schema ({error})", place=source.path) from error
            except Exception as error:  # a truncated or damaged block
                raise DatasetFileError(f"the Avro file is truncated or damaged ({error})",
                                       place=f"row {rows_read + 1}") from error
            mine = index % part[1] == part[0]
            index += 1
            if not mine:
                rows_read += block.num_records
                continue
            if not pending and not converted:
                pending_start = rows_read
            try:
                # the file's schema is a record, so every decoded datum is a dict
                pending.extend(cast(Iterable[dict], block))
            except fastavro.read.SchemaResolutionError as error:
                raise ColumnsNotMatching(f"the file's records cannot be read with the given "
                                         f"schema ({error})", place=source.path) from error
            except Exception as error:
                raise DatasetFileError(f"the Avro file is truncated or damaged ({error})",
                                       place=f"row {rows_read + 1}") from error
            rows_read += block.num_records
            # Decoded records become Arrow a few thousand at a time: freed soon, their memory
            # is reused while still in cache, which makes decoding itself faster.
            if len(pending) >= AVRO_CONVERT_ROWS:
                converted.append(_records_to_batch(pending, make_batch, converters))
                converted_rows += len(pending)
                pending = []
            if converted_rows >= batch_rows:
                yield pending_start, _concatenated(converted)
                converted, converted_rows = [], 0
    if pending:
        converted.append(_records_to_batch(pending, make_batch, converters))
    if converted:
        yield pending_start, _concatenated(converted)



def _concatenated(batches: list[pa.RecordBatch]) -> pa.RecordBatch:
    """The batches' rows, in order, as one batch."""
    return pa.concat_batches(batches)  # type: ignore[attr-defined]  # not in pyarrow's stubs


def _avro_reader_schema(source: Source) -> dict[str, Any] | None:
    """The reader schema to hand fastavro, or None when the writer's serves as it is: fastavro
    decodes about three times faster without schema resolution."""
    wanted = dict(source.file_record.schema_json)
    writer = _avro_writer_schema(source.path)
    if wanted == writer:
        return None
    try:
        same = (fastavro.schema.to_parsing_canonical_form(wanted)
                == fastavro.schema.to_parsing_canonical_form(writer))
    except Exception:  # fastavro raises several kinds for a schema it cannot read
        same = False
    return None if same else wanted


class _AvroBatchMaker:
    """Turns decoded Avro records into an Arrow batch: pyarrow converts the records in one call,
    except unions of several types, whose branches are told apart here value by value."""

    def __init__(self, record: RecordType) -> None:
        self.record = record
        self.unions = [(n, t) for n, t in record.fields if t.avro == "union"]
        self.struct = pa.struct([pa.field(n, t.arrow_type()) for n, t in record.fields
                                 if t.avro != "union"])

    def __call__(self, records: list[dict]) -> pa.RecordBatch:
        plain = cast(pa.StructArray, pa.array(records, type=self.struct))
        columns = {name: plain.field(name) for name in self.struct.names}
        for name, value_type in self.unions:
            columns[name] = union_array([r[name] for r in records], value_type)
        return pa.RecordBatch.from_arrays([columns[n] for n in self.record.names],
                                          schema=self.record.arrow_schema())


def union_array(values: list[Any], value_type: ValueType) -> pa.UnionArray:
    """A dense union array: code 0 for null, then the first branch each value fits."""
    codes = np.fromiter((_branch_of(v, value_type.branches) for v in values), dtype=np.int8,
                        count=len(values))
    children: list[pa.Array] = [pa.nulls(int(np.count_nonzero(codes == 0)))]
    offsets = np.zeros(len(values), np.int32)
    offsets[codes == 0] = np.arange(int(np.count_nonzero(codes == 0)))
    for code, branch in enumerate(value_type.branches, start=1):
        chosen = np.flatnonzero(codes == code)
        offsets[chosen] = np.arange(len(chosen))
        children.append(pa.array([values[i] for i in chosen], type=branch.arrow_type()))
    union_type = cast(pa.UnionType, value_type.arrow_type())
    return pa.UnionArray.from_dense(
        pa.array(codes, type=pa.int8()), pa.array(offsets, type=pa.int32()), children,
        field_names=[f.name for f in union_type],
        type_codes=list(range(len(children))))  # type: ignore[arg-type]  # a list of ints works


def _branch_of(value: Any, branches: tuple[ValueType, ...]) -> int:
    """The type code of the first branch a decoded value belongs to (0 for null)."""
    if value is None:
        return 0
    for code, branch in enumerate(branches, start=1):
        if _fits(value, branch):
            return code
    raise ValueNotParsing(f"{value!r} fits no branch of the union")


def _fits(value: Any, branch: ValueType) -> bool:
    kind = branch.avro
    if isinstance(value, bool):
        return kind == "boolean"
    if isinstance(value, int):
        return kind in ("int", "long")
    if isinstance(value, float):
        return kind in ("float", "double")
    if isinstance(value, str):
        return kind == "string" or (kind == "enum" and value in branch.symbols)
    if isinstance(value, bytes):
        return kind in ("bytes", "fixed")
    if isinstance(value, dict):
        return kind == "map" or (kind == "record" and set(value) == {n for n, _ in branch.fields})
    if isinstance(value, list):
        return kind == "array"
    return False


def _records_to_batch(records: list[dict], make_batch: _AvroBatchMaker,
                      converters: Mapping[str, Callable[[Any], Any]]) -> pa.RecordBatch:
    if converters:
        records = [{**r, **{n: convert(r[n]) for n, convert in converters.items()}}
                   for r in records]
    return make_batch(records)


_EPOCH_DATE = datetime.date(1970, 1, 1)
_EPOCH = datetime.datetime(1970, 1, 1, tzinfo=datetime.UTC)


def _since_epoch(value: datetime.datetime, unit: int) -> int:
    if value.tzinfo is None:  # local-timestamp-*: no zone, counted on the same clock
        value = value.replace(tzinfo=datetime.UTC)
    delta = value - _EPOCH
    return (delta.days * 86_400 + delta.seconds) * unit + delta.microseconds * unit // 10**6


def _time_of_day(value: datetime.time, unit: int) -> int:
    seconds = value.hour * 3600 + value.minute * 60 + value.second
    return seconds * unit + value.microsecond * unit // 10**6


def _decimal_bytes(value: Any, scale: int, size: int | None) -> bytes:
    unscaled = int(value.scaleb(scale))
    length = size or max(1, (unscaled.bit_length() + 8) // 8)
    return unscaled.to_bytes(length, "big", signed=True)


def _logical_converters(schema_json: Mapping[str, Any]) -> dict[str, Callable[[Any], Any]]:
    """fastavro turns logical types into dates, times, decimals and UUIDs; these turn the
    top-level fields back into the underlying values the canonical encoding hashes (Avro
    specification, Logical Types)."""
    converters = {}
    for field in schema_json.get("fields", []):
        kind = field["type"]
        if isinstance(kind, list):
            kind = next((b for b in kind if b != "null"), None)
        if not isinstance(kind, dict) or "logicalType" not in kind:
            continue
        logical = kind["logicalType"]
        by_logical: dict[str, Callable[[Any], Any]] = {
            "date": lambda v: (v - _EPOCH_DATE).days,
            "time-millis": lambda v: _time_of_day(v, 1000),
            "time-micros": lambda v: _time_of_day(v, 10**6),
            "timestamp-millis": lambda v: _since_epoch(v, 1000),
            "timestamp-micros": lambda v: _since_epoch(v, 10**6),
            "local-timestamp-millis": lambda v: _since_epoch(v, 1000),
            "local-timestamp-micros": lambda v: _since_epoch(v, 10**6),
            "uuid": str,
        }
        convert: Callable[[Any], Any] | None = by_logical.get(logical)
        if logical == "decimal":
            convert = partial(_decimal_bytes, scale=int(kind.get("scale", 0)),
                              size=kind.get("size"))
        if convert is not None:
            converters[field["name"]] = _unless_plain(convert)
    return converters


def _unless_plain(convert: Callable[[Any], Any]) -> Callable[[Any], Any]:
    """Convert a logical value, passing nulls and values already plain through."""
    def converted(value: Any) -> Any:
        return value if value is None or isinstance(value, (int, str, bytes)) else convert(value)

    return converted


# --- Parquet ---------------------------------------------------------------------------------

def _parquet_file(path: str, read_dictionary: list[str] | None = None) -> pq.ParquetFile:
    try:
        return pq.ParquetFile(path, read_dictionary=read_dictionary)
    except (pa.ArrowException, OSError) as error:
        raise DatasetFileError(f"not a Parquet file, or truncated ({error})", place=path) from error


def _parquet_batch_rows(parquet: pq.ParquetFile, batch_rows: int) -> int:
    """Narrow records come in longer batches, up to BATCH_BYTES decoded: each batch costs a
    fixed toll of calls per column, worth paying less often when a batch is small in bytes."""
    metadata = parquet.metadata
    if metadata.num_rows == 0 or metadata.num_row_groups == 0:
        return batch_rows
    decoded = sum(metadata.row_group(g).total_byte_size for g in range(metadata.num_row_groups))
    row_bytes = max(decoded / metadata.num_rows, 1.0)
    return int(min(max(batch_rows, BATCH_BYTES // row_bytes), 4 * batch_rows))


def _parquet_batches(source: Source, part: Part, batch_rows: int):
    record = source.file_record
    parquet = _parquet_file(source.path, _dictionary_columns(source.path, source.dictionaries)
                            if source.dictionaries else None)
    present = parquet.schema_arrow.names
    columns = _check_columns(present, record)
    groups = list(range(parquet.num_row_groups))
    starts = np.concatenate([[0], np.cumsum(
        [parquet.metadata.row_group(g).num_rows for g in groups])]).astype(int)
    batch_rows = _parquet_batch_rows(parquet, batch_rows)
    for group in groups[part[0]::part[1]]:
        first_row = int(starts[group])
        try:
            batches = parquet.iter_batches(batch_size=batch_rows, row_groups=[group],
                                           columns=columns, use_threads=source.threads)
            for batch in batches:
                yield first_row, conform(batch, record, first_row, parse_text=False,
                                         dictionaries=source.dictionaries)
                first_row += batch.num_rows
        except pa.ArrowException as error:
            raise DatasetFileError(f"the Parquet file is truncated or damaged ({error})",
                                   place=f"row {first_row + 1}") from error


def _dictionary_columns(path: str, names: tuple[str, ...]) -> list[str]:
    """Those of the columns named whose Parquet column holds text."""
    stored = _parquet_file(path).schema_arrow
    return [f.name for f in stored if f.name in names and (
        pa.types.is_string(f.type) or pa.types.is_large_string(f.type))]


# --- CSV -------------------------------------------------------------------------------------

def _csv_batches(source: Source, part: Part, batch_rows: int):
    header = _csv_header(source.path)
    record = source.file_record
    _check_columns(header, record)
    for name, value_type in record.fields:
        if value_type.avro in ("bytes", "fixed", "record", "array", "map"):
            raise UserError(f"a CSV file cannot hold {value_type.avro} values; use Avro or "
                            f"Parquet", place=f"column {name}")
    options = pacsv.ConvertOptions(
        column_types={name: pa.string() for name in header}, strings_can_be_null=True,
        quoted_strings_can_be_null=False, null_values=[""])
    try:
        reader = pacsv.open_csv(
            source.path, read_options=pacsv.ReadOptions(block_size=CSV_BLOCK_BYTES,
                                                        use_threads=source.threads),
            parse_options=pacsv.ParseOptions(newlines_in_values=True), convert_options=options)
    except pa.ArrowException as error:
        raise _csv_error(source.path, error) from error
    rows_read = 0
    index = 0
    while True:
        try:
            batch = reader.read_next_batch()
        except StopIteration:
            break
        except pa.ArrowException as error:
            raise _csv_error(source.path, error) from error
        mine = index % part[1] == part[0]
        index += 1
        if mine:
            yield rows_read, conform(batch, record, rows_read, parse_text=True)
        rows_read += batch.num_rows


def _csv_header(path: str) -> list[str]:
    with open(path, newline="", encoding="utf-8-sig") as handle:  # a byte order mark is no name
        try:
            return next(csv.reader(handle))
        except StopIteration:
            raise EmptyDataset("the file is empty", place=path) from None
        except (csv.Error, UnicodeDecodeError) as error:
            raise DatasetFileError(f"the CSV header cannot be read ({error})",
                                   place="row 0") from error


def _csv_error(path: str, error: Exception) -> UserError:
    """Find the record the CSV parser stumbled on (this loop runs only after a failure)."""
    with open(path, newline="", encoding="utf-8-sig", errors="replace") as handle:
        rows = csv.reader(handle)
        width = len(next(rows, []))
        for number, row in enumerate(rows, start=1):
            if len(row) != width:
                return DatasetFileError(f"expected {width} fields, found {len(row)}",
                                        place=f"row {number}")
    return DatasetFileError(f"the CSV file cannot be parsed ({error})", place=path)


# --- shaping batches to the schema -----------------------------------------------------------

def _check_columns(present: list[str], record: RecordType) -> list[str]:
    """The file's columns must be the schema's fields; a missing field needs a default."""
    for name, value_type in record.fields:
        if value_type.avro == "union":
            raise UserError("a union of several types can be read from Avro files only",
                            place=f"column {name}")
    known = set(record.names)
    for name in present:
        if name not in known:
            raise ColumnsNotMatching(f"the file has a column {name!r} that the schema lacks",
                                     place=f"column {name}")
    for name, value_type in record.fields:
        if name not in present and not value_type.has_default:
            raise ColumnsNotMatching(f"the file has no column {name!r} and the schema gives "
                                     f"it no default", place=f"column {name}")
    return [name for name in record.names if name in present]


def conform(batch: pa.RecordBatch, record: RecordType, first_row: int,
            parse_text: bool, dictionaries: Collection[str] = ()) -> pa.RecordBatch:
    """The batch with each column typed as its field says, or an error naming the bad value.
    A dictionary-encoded text or enum column named in `dictionaries` stays so (its values are
    checked through the dictionary)."""
    columns: list[pa.Array] = []
    names = batch.schema.names
    for name, value_type in record.fields:
        if name in names:
            array = batch.column(names.index(name))
            if name in dictionaries and _is_text_dictionary(array, value_type):
                columns.append(conform_dictionary(array, value_type, name, first_row))
            else:
                columns.append(conform_column(array, value_type, name, first_row, parse_text))
        else:
            columns.append(pa.array([value_type.default] * batch.num_rows,
                                    type=value_type.arrow_type()))
    schema = record.arrow_schema()
    for index, column in enumerate(columns):
        if pa.types.is_dictionary(column.type) and schema.field(index).name in dictionaries:
            schema = schema.set(index, schema.field(index).with_type(column.type))
    return pa.RecordBatch.from_arrays(columns, schema=schema)


def _is_text_dictionary(array: pa.Array, value_type: ValueType) -> bool:
    return (value_type.avro in ("string", "enum") and pa.types.is_dictionary(array.type)
            and cast(pa.DictionaryType, array.type).value_type == pa.string())


def conform_dictionary(array: pa.Array, value_type: ValueType, name: str,
                       first_row: int) -> pa.DictionaryArray:
    """conform_column for a dictionary-encoded text column: the same checks and the same
    errors, each value checked once in the dictionary rather than once per row."""
    encoded = cast(pa.DictionaryArray, array)
    _refuse_missing(encoded, value_type, name, first_row)
    if value_type.avro == "enum" and len(encoded):
        unknown = ~_symbols_known(encoded.dictionary, value_type).to_numpy(zero_copy_only=False)
        if unknown.any():
            indices = encoded.indices.fill_null(0).to_numpy(zero_copy_only=False)
            _refuse_unknown_symbols(unknown[indices], encoded, name, first_row)
    return encoded


def _refuse_missing(array: pa.Array, value_type: ValueType, name: str, first_row: int) -> None:
    if array.null_count and not value_type.nullable:
        row = int(np.argmax(pc.is_null(array).to_numpy(zero_copy_only=False)))
        raise ValueNotParsing("a value is missing in a column that is not nullable",
                              place=cell(first_row + row + 1, name))


def _symbols_known(array: pa.Array, value_type: ValueType) -> pa.Array:
    return pc.is_in(array, value_set=pa.array(value_type.symbols, type=pa.string()))


def _refuse_unknown_symbols(bad: np.ndarray, array: pa.Array, name: str,
                            first_row: int) -> None:
    """`bad` marks the rows whose value is not a symbol; nulls (of a nullable enum) are not."""
    if array.null_count:
        bad &= pc.is_valid(array).to_numpy(zero_copy_only=False)
    if bad.any():
        row = int(np.argmax(bad))
        raise ValueNotParsing(f"{array[row].as_py()!r} is not a symbol of the enum",
                              place=cell(first_row + row + 1, name))


def conform_column(array: pa.Array, value_type: ValueType, name: str, first_row: int,
                   parse_text: bool) -> pa.Array:
    target = value_type.arrow_type()
    if pa.types.is_dictionary(array.type):
        array = cast(pa.DictionaryArray, array).dictionary_decode()
    array = _underlying(array, value_type)
    if parse_text and value_type.avro == "string" and not value_type.nullable:
        array = array.fill_null("")  # an unquoted empty field is the empty string
    if parse_text and value_type.avro == "boolean":
        array = pc.utf8_lower(array)
    fits_int = array.type in _FITTING_AVRO_INT  # no value to check against int's range
    if array.type != target:
        array = _cast(array, target, value_type, name, first_row)
    if value_type.avro == "float":
        array = array.cast(pa.float32()).cast(pa.float64())  # Avro float is binary32
    _refuse_missing(array, value_type, name, first_row)
    if value_type.avro == "int" and len(array) and not fits_int:
        values = (array.fill_null(0) if array.null_count else array).to_numpy(
            zero_copy_only=False)
        outside = (values < -(2**31)) | (values >= 2**31)
        if outside.any():
            row = int(np.argmax(outside))
            raise ValueNotParsing(f"{values[row]} does not fit an Avro int",
                                  place=cell(first_row + row + 1, name))
    if value_type.avro == "enum":
        known = _symbols_known(array, value_type)
        _refuse_unknown_symbols(~known.fill_null(True).to_numpy(zero_copy_only=False), array,
                                name, first_row)
    return array


# Arrow integer types whose every value is an Avro int (32-bit signed)
_FITTING_AVRO_INT = (pa.int8(), pa.int16(), pa.int32(), pa.uint8(), pa.uint16())

_TIME_UNITS = {"timestamp-millis": "ms", "timestamp-micros": "us", "local-timestamp-millis": "ms",
               "local-timestamp-micros": "us", "time-millis": "ms", "time-micros": "us"}


def _underlying(array: pa.Array, value_type: ValueType) -> pa.Array:
    """Parquet dates, times and timestamps as the numbers their Avro logical type counts in
    (Avro specification, Logical Types: days, or milli- or microseconds, since the epoch)."""
    kind = array.type
    if pa.types.is_date(kind):
        return array.cast(pa.date32()).cast(pa.int32())
    unit = _TIME_UNITS.get(value_type.logical, "us")
    if pa.types.is_timestamp(kind):
        return array.cast(pa.timestamp(unit, kind.tz), safe=False).cast(pa.int64())
    if pa.types.is_time(kind):
        wanted = pa.time32("ms") if unit == "ms" else pa.time64("us")  # the units _TIME_UNITS has
        return array.cast(wanted, safe=False).cast(pa.int64())
    return array


def _cast(array: pa.Array, target: pa.DataType, value_type: ValueType, name: str,
          first_row: int) -> pa.Array:
    try:
        return array.cast(target, safe=True)
    except (pa.ArrowInvalid, pa.ArrowNotImplementedError) as error:
        row = _first_failure(array, lambda part: part.cast(target, safe=True))
        if row is None:
            raise ColumnsNotMatching(f"a {array.type} column cannot be read as "
                                     f"{value_type.avro} ({error})",
                                     place=f"column {name}") from error
        shown = array[row].as_py()
        raise ValueNotParsing(f"{shown!r} is not a valid {value_type.avro}",
                              place=cell(first_row + row + 1, name)) from error


def _first_failure(array: pa.Array, attempt: Callable[[pa.Array], Any]) -> int | None:
    """Index of the first value the attempt fails on, by bisection on prefixes."""
    def fails(length: int) -> bool:
        try:
            attempt(array.slice(0, length))
            return False
        except (pa.ArrowInvalid, pa.ArrowNotImplementedError):
            return True

    if not fails(len(array)) or fails(0):
        return None
    low, high = 0, len(array)  # fails(high) is true, fails(low) is false
    while high - low > 1:
        middle = (low + high) // 2
        if fails(middle):
            high = middle
        else:
            low = middle
    return low
