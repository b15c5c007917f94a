"""The ways a dataset file can be wrong, each a user error naming the row and column at fault."""

from __future__ import annotations

from registry.errors import UserError


class DatasetFileError(UserError):
    """The file is missing, unreadable, truncated or not in the format it claims."""

    kind = "dataset-file"


class ValueNotParsing(UserError):
    """A value does not parse under the schema (a word in an int column, an unknown symbol)."""

    kind = "dataset-value"


class ColumnsNotMatching(UserError):
    """The file's columns are not the schema's fields."""

    kind = "dataset-columns"


class EmptyDataset(UserError):
    """The file holds no records, so there is nothing to fingerprint."""

    kind = "dataset-empty"


def cell(row: int, column: str) -> str:
    """The place of one value: rows count records from 1, not counting a CSV header."""
    return f"row {row}, column {column}"
