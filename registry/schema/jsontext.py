"""Decode JSON text for schemas, reporting bad JSON by line and column, at any nesting depth.

The standard decoder recurses once per nesting level; deeply nested schemas (a record in a
record, 500 levels deep, is 1,500 JSON levels) fall back to an iterative decoder.
"""

from __future__ import annotations

import json
import re
from json.decoder import scanstring  # type: ignore[attr-defined]  # C scanner, not in typeshed
from typing import Any

from registry.schema.errors import SchemaError

_WHITESPACE = re.compile(r"[ \t\n\r]*")
_NUMBER = re.compile(r"-?(?:0|[1-9]\d*)(\.\d+)?([eE][-+]?\d+)?")
_LITERALS = {"true": True, "false": False, "null": None, "NaN": float("nan"),
             "Infinity": float("inf"), "-Infinity": float("-inf")}


def _error(message: str, source: str, text: str, position: int) -> SchemaError:
    line = text.count("\n", 0, position) + 1
    column = position - (text.rfind("\n", 0, position) + 1) + 1
    return SchemaError(f"invalid JSON: {message}", place=f"line {line}, column {column}",
                       source=source, line=line, column=column)


def decode(text: str, source: str = "") -> Any:
    """The JSON value of `text`; SchemaError naming line and column when it is not JSON."""
    try:
        return json.loads(text)
    except json.JSONDecodeError as error:
        raise _error(error.msg, source, text, error.pos) from None
    except RecursionError:
        return _decode_iteratively(text, source)


class _Bad(Exception):
    def __init__(self, message: str, position: int) -> None:
        super().__init__(message)
        self.message = message
        self.position = position


def _decode_iteratively(text: str, source: str) -> Any:
    try:
        return _Decoder(text).run()
    except _Bad as bad:
        raise _error(bad.message, source, text, bad.position) from None


class _Decoder:
    """A JSON decoder with an explicit stack of open containers."""

    def __init__(self, text: str) -> None:
        self.text = text
        self.pos = 0

    def skip(self) -> None:
        # The pattern matches the empty string too, so the match never fails.
        self.pos = _WHITESPACE.match(self.text, self.pos).end()  # type: ignore[union-attr]

    def scalar(self) -> Any:
        text, pos = self.text, self.pos
        if pos >= len(text):
            raise _Bad("Expecting value", pos)
        char = text[pos]
        if char == '"':
            try:
                value, self.pos = scanstring(text, pos + 1, True)
            except json.JSONDecodeError as error:
                raise _Bad(error.msg, error.pos) from None
            return value
        for literal, value in _LITERALS.items():
            if text.startswith(literal, pos):
                self.pos = pos + len(literal)
                return value
        match = _NUMBER.match(text, pos)
        if match is None:
            raise _Bad("Expecting value", pos)
        self.pos = match.end()
        number = match.group(0)
        return float(number) if match.group(1) or match.group(2) else int(number)

    def run(self) -> Any:
        text = self.text
        # Stack entries: [container, pending key or None]
        stack: list[list[Any]] = []
        while True:
            self.skip()
            if self.pos >= len(text):
                raise _Bad("Expecting value", self.pos)
            char = text[self.pos]
            if char == "{":
                self.pos += 1
                self.skip()
                container: Any = {}
                if text.startswith("}", self.pos):
                    self.pos += 1
                    value: Any = container
                else:
                    stack.append([container, self._key()])
                    continue
            elif char == "[":
                self.pos += 1
                self.skip()
                container = []
                if text.startswith("]", self.pos):
                    self.pos += 1
                    value = container
                else:
                    stack.append([container, None])
                    continue
            else:
                value = self.scalar()
            # A value is complete: attach it, closing as many containers as end here.
            while True:
                if not stack:
                    self.skip()
                    if self.pos != len(text):
                        raise _Bad("Extra data", self.pos)
                    return value
                top = stack[-1]
                if isinstance(top[0], dict):
                    top[0][top[1]] = value
                else:
                    top[0].append(value)
                self.skip()
                closer = "}" if isinstance(top[0], dict) else "]"
                if text.startswith(",", self.pos):
                    self.pos += 1
                    if isinstance(top[0], dict):
                        self.skip()
                        top[1] = self._key()
                    break
                if text.startswith(closer, self.pos):
                    self.pos += 1
                    value = stack.pop()[0]
                    continue
                raise _Bad(f"Expecting ',' delimiter or '{closer}'", self.pos)

    def _key(self) -> str:
        if not self.text.startswith('"', self.pos):
            raise _Bad("Expecting property name enclosed in double quotes", self.pos)
        key = self.scalar()
        self.skip()
        if not self.text.startswith(":", self.pos):
            raise _Bad("Expecting ':' delimiter", self.pos)
        self.pos += 1
        return key
