"""The error an invalid schema raises: an unprocessable input with a JSON pointer to the fault."""

from __future__ import annotations

from registry.errors import Unprocessable


class SchemaError(Unprocessable):
    """A schema that is not valid JSON or breaks a rule of the Avro specification.

    `place` is a JSON pointer into the schema document (``/fields/3/type``; ``/`` for the whole
    schema). For text that is not JSON it is ``line 4, column 17``, with `line` and `column` set.
    `source` names the file or document the schema came from, when known; `one_line` puts it
    before the place.
    """

    kind = "invalid-schema"
    place: str  # always set: "/" when no narrower place is given

    def __init__(self, message: str, *, place: str | None = None, source: str = "",
                 line: int | None = None, column: int | None = None) -> None:
        super().__init__(message, place=place if place else "/")
        self.source = source
        self.line = line
        self.column = column

    def with_source(self, source: str) -> SchemaError:
        """The same error, naming the file or document it came from."""
        return SchemaError(self.message, place=self.place, source=source, line=self.line,
                           column=self.column)

    def where(self) -> str:
        return f"{self.source} {self.place}" if self.source else self.place
