"""The error an invalid schema raises: an unprocessable input with a JSON pointer to the fault."""

from __future__ import annotations

from registry.errors import Unprocessable


class SchemaError(Unprocessable):
    """A schema that is not valid JSON or breaks a rule of the Avro specification.

    `place` is a JSON pointer into the schema document (``/fields/3/type``); for text that is not
    JSON at all it names the line and column (``line 4, column 17``), prefixed by the source.
    """

    kind = "invalid-schema"

    def __init__(self, message: str, *, place: str | None = None) -> None:
        super().__init__(message, place=place if place else "/")
