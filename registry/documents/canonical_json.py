"""Canonical JSON: one byte sequence per JSON value, so a document's digest ignores formatting.

The rules are those of RFC 8785 (JSON Canonicalization Scheme): no insignificant whitespace,
object members sorted by their names' UTF-16 code units, strings in UTF-8 with only the escapes
JSON requires, and numbers as their IEEE 754 double written the ECMAScript way (shortest digits
that read back the same double; 1.0, 1 and 1e0 are all "1"). One deliberate exception: an integer
literal that fits a signed 64-bit long keeps its exact digits, so PFA long values beyond 2^53 are
not rounded to a double. docs/document-digest.md states the rules with test vectors.

The reader streams: it tokenises the bytes with regular expressions, writes each container's
canonical text once into a rope of chunks and decodes no values into Python objects, so a
50 MB document costs the input plus about one canonical copy. Runs of numbers inside an array
are handled a few thousand at a time by C-level conversions.
"""

from __future__ import annotations

import gc
import hashlib
import itertools
import json
import re
from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass, field
from json.decoder import scanstring  # type: ignore[attr-defined]  # C scanner, not in typeshed
from json.encoder import encode_basestring
from typing import cast

from registry.errors import UserError


class MalformedJson(UserError):
    """Bytes that are not one well-formed JSON value (RFC 8259), or that repeat an object key."""


Path = tuple[str | int, ...]
Pattern = tuple[str, ...]  # object keys, "*" matching any key

_WHITESPACE = rb"[ \t\n\r]*"
_NUMBER = rb"-?(?:0|[1-9][0-9]*)(?:\.[0-9]+)?(?:[eE][+-]?[0-9]+)?"
# RFC 8259 section 7: unescaped control characters are not allowed inside a string.
_STRING = rb'"[^"\\\x00-\x1f]*(?:\\(?:["\\/bfnrt]|u[0-9a-fA-F]{4})[^"\\\x00-\x1f]*)*"'
_RUN_LENGTH = 4096  # numbers converted per batch; bounds the temporary lists

# The pattern matches the empty string too, so this match never fails.
_skip_whitespace = cast(Callable[[bytes, int], re.Match[bytes]], re.compile(_WHITESPACE).match)
_WHITESPACE_BYTES = frozenset(b" \t\n\r")
_match_string = re.compile(_STRING).match
_match_number = re.compile(_NUMBER).match
_match_run = re.compile(_WHITESPACE + _NUMBER + _WHITESPACE
                        + rb"(?:," + _WHITESPACE + _NUMBER + _WHITESPACE
                        + rb"){0,%d}" % (_RUN_LENGTH - 1)).match
_long_integer_in_run = re.compile(rb"(?:^|,)[ \t\n\r]*-?[0-9]{16,}[ \t\n\r]*(?:,|$)").search

_LONG_MIN, _LONG_MAX = -(2**63), 2**63 - 1
_SMALL = 1 << 16  # containers smaller than this are joined into one bytes object


@dataclass(frozen=True)
class MeasuredValue:
    """Where a value selected by a pattern sits in the input, and its canonical size."""

    path: Path
    start: int  # byte offsets of the value in the input
    end: int
    size: int  # bytes of its canonical form
    items: int | None  # elements of an array, members of an object, None for a scalar
    kind: str  # "object", "array", "string", "number", "true", "false" or "null"


@dataclass(frozen=True)
class CanonicalDigest:
    """SHA-256 of a value's canonical form, its size, and the values the caller asked about."""

    sha256: str
    size: int
    measured: dict[Path, MeasuredValue] = field(default_factory=dict)


def canonical_json(data: bytes) -> bytes:
    """The canonical form of the JSON value in `data`."""
    rope, _ = _canonicalise(data, ())
    return rope if isinstance(rope, bytes) else b"".join(rope)


def canonical_digest(data: bytes, *, measure: Sequence[Pattern] = ()) -> CanonicalDigest:
    """Digest the canonical form of `data` without keeping it, measuring the values `measure` names.

    A pattern such as ("cells", "*", "init") selects values by the object keys on their path.
    """
    rope, measured = _canonicalise(data, tuple(measure))
    hasher = hashlib.sha256()
    size = 0
    chunks: Iterable[bytes] = (rope,) if isinstance(rope, bytes) else rope
    for chunk in chunks:
        hasher.update(chunk)
        size += len(chunk)
    return CanonicalDigest(sha256=hasher.hexdigest(), size=size, measured=measured)


def canonical_dumps(value: object) -> bytes:
    """The canonical form of an already decoded JSON value (dicts, lists, str, int, float ...)."""
    return canonical_json(json.dumps(value, ensure_ascii=False, allow_nan=False).encode("utf-8"))


# --- numbers -------------------------------------------------------------------------------


def format_double(value: float) -> str:
    """ECMAScript Number::toString for a finite double (RFC 8785 section 3.2.2.3)."""
    if value == 0:
        return "0"  # also -0
    text = repr(value)  # Python's repr is the shortest digit string that reads back the same
    sign = ""
    if text[0] == "-":
        sign, text = "-", text[1:]
    mantissa, _, exponent_text = text.partition("e")
    whole, _, fraction = mantissa.partition(".")
    digits = whole + fraction
    point = len(whole) + (int(exponent_text) if exponent_text else 0)
    significant = digits.lstrip("0")
    point -= len(digits) - len(significant)
    digits = significant.rstrip("0")
    count = len(digits)
    if count <= point <= 21:
        body = digits + "0" * (point - count)
    elif 0 < point <= 21:
        body = f"{digits[:point]}.{digits[point:]}"
    elif -6 < point <= 0:
        body = "0." + "0" * -point + digits
    else:
        exponent = point - 1
        body = digits[0] + (f".{digits[1:]}" if count > 1 else "") + \
            f"e{'+' if exponent >= 0 else '-'}{abs(exponent)}"
    return sign + body


class _NumberTooLarge(Exception):
    pass


def _number_text(token: bytes) -> str:
    """Canonical text of one JSON number token."""
    if b"." not in token and b"e" not in token and b"E" not in token:
        if len(token) > 400:  # beyond any double (and Python's limit on integer digits)
            raise _NumberTooLarge
        integer = int(token)
        if _LONG_MIN <= integer <= _LONG_MAX:
            return str(integer)
        try:
            value = float(integer)
        except OverflowError:
            raise _NumberTooLarge from None
    else:
        value = float(token)
    if value in (float("inf"), float("-inf")):
        raise _NumberTooLarge
    text = repr(value)
    if "e" in text:
        return format_double(value)
    # Without an exponent, repr and ECMAScript write the same digits, but for a trailing ".0".
    if text.endswith(".0"):
        text = text[:-2]
    return "0" if text == "-0" else text


def _run_text(run: bytes) -> bytes:
    """Canonical text of a comma-separated run of JSON numbers, commas kept."""
    parts = run.split(b",")
    if max(map(len, parts)) > 400:
        return ",".join(map(_number_text, parts)).encode("ascii")  # names the culprit
    if b"." not in run and b"e" not in run and b"E" not in run:
        integers = list(map(int, parts))
        if _LONG_MIN <= min(integers) and max(integers) <= _LONG_MAX:
            return ",".join(map(str, integers)).encode("ascii")
    elif not _long_integer_in_run(run):
        text = "," + ",".join(map(repr, map(float, parts))) + ","
        if "e" not in text and "n" not in text:  # no exponent, no inf: repr and ECMAScript agree
            text = text.replace(".0,", ",").replace(",-0,", ",0,").replace(",-0,", ",0,")
            return text[1:-1].encode("ascii")
    return ",".join(map(_number_text, parts)).encode("ascii")


# --- strings -------------------------------------------------------------------------------


class _BadString(Exception):
    pass


def _string(token: bytes) -> tuple[bytes, str]:
    """Canonical bytes and decoded text of a JSON string token."""
    if token.isascii() and b"\\" not in token:
        return token, token[1:-1].decode("ascii")
    try:
        text = scanstring(token.decode("utf-8"), 1)[0]
        return encode_basestring(text).encode("utf-8"), text
    except (UnicodeError, ValueError):  # invalid UTF-8, or an escaped lone surrogate
        raise _BadString from None


# --- the streaming walk --------------------------------------------------------------------


# A member of an object once names need the general order: (UTF-16 sort key, quoted name, value).
_Member = tuple[bytes, bytes, bytes | list[bytes]]


class _Frame:
    """An open array or object and the canonical text of what it holds so far."""

    __slots__ = ("is_object", "chunks", "pending", "size", "count", "entries", "ropes",
                 "general", "key", "path", "start", "measured")

    def __init__(self, is_object: bool, path: Path, start: int, measured: bool) -> None:
        self.is_object = is_object
        self.chunks: list[bytes] = []
        self.pending = bytearray()
        self.size = 0
        self.count = 0
        # Members of an object whose names are plain ASCII (see _PLAIN_NAME) are kept as their
        # canonical text "name":value, which sorts bytewise in RFC 8785 order: one bytes object
        # per member. Rope values are kept aside, under their quoted name.
        self.entries: list[bytes] = []
        self.ropes: dict[bytes, list[bytes]] = {}
        # Once any other name appears: (UTF-16 sort key, quoted name, value) per member.
        self.general: list[_Member] | None = None
        self.key: tuple[bytes, str, bool] | None = None  # quoted name, name, is plain
        self.path = path
        self.start = start
        self.measured = measured


def _position(data: bytes, offset: int) -> str:
    line = data.count(b"\n", 0, offset) + 1
    column = offset - (data.rfind(b"\n", 0, offset) + 1) + 1
    return f"line {line}, column {column}"


def _canonicalise(data: bytes, patterns: tuple[Pattern, ...]
                  ) -> tuple[bytes | list[bytes], dict[Path, MeasuredValue]]:
    if not isinstance(data, (bytes, bytearray)):
        raise TypeError("canonical JSON reads bytes")
    # The walk makes millions of small objects and no reference cycles; the cyclic collector
    # would only rescan the growing rope again and again.
    collecting = gc.isenabled()
    gc.disable()
    try:
        return _walk(data, patterns)
    finally:
        if collecting:
            gc.enable()


# Deeper documents cannot be decoded by Python's JSON reader anyway (one recursion per level),
# and copying paths and ropes level by level would take time with the square of the depth.
MAX_NESTING = 1_000


def _walk(data: bytes, patterns: tuple[Pattern, ...]
          ) -> tuple[bytes | list[bytes], dict[Path, MeasuredValue]]:
    return _Walk(data, patterns).run()


# The states of the walk: expecting a value; after a value (a comma or a close); an object's
# member name; the colon after it.
_VALUE, _AFTER, _KEY, _COLON = 0, 1, 2, 3
_LITERALS = (b"true", b"false", b"null")


class _Walk:
    """One pass over a document's bytes: a state machine with one method per state.

    Each state method takes the byte at `position` (never whitespace) and returns the next
    position and state; finished values travel up the stack of open containers.
    """

    def __init__(self, data: bytes, patterns: tuple[Pattern, ...]) -> None:
        self.data = data
        self.patterns = patterns
        self.depths = {len(pattern) for pattern in patterns}
        self.measured: dict[Path, MeasuredValue] = {}
        self.stack: list[_Frame] = []
        self.result: list[bytes | list[bytes]] = []

    def run(self) -> tuple[bytes | list[bytes], dict[Path, MeasuredValue]]:
        data = self.data
        length = len(data)
        # A UTF-8 byte order mark is allowed.
        position = 3 if data.startswith(b"\xef\xbb\xbf") else 0
        steps = (self._value, self._after, self._key, self._colon)
        state = _VALUE
        while True:
            if position < length and data[position] in _WHITESPACE_BYTES:
                position = _skip_whitespace(data, position).end()
            if position >= length:
                break
            position, state = steps[state](data[position], position)
        if self.stack:
            raise self.fail("the document ends inside an array or object", length)
        if not self.result:
            raise self.fail("no JSON value", position)
        return self.result[0], self.measured

    def fail(self, message: str, offset: int) -> MalformedJson:
        return MalformedJson(f"not valid JSON: {message}", place=_position(self.data, offset))

    def selected(self, path: Path) -> bool:
        # Patterns name object members only; array elements are never measured.
        if len(path) not in self.depths or any(isinstance(part, int) for part in path):
            return False
        return any(len(pattern) == len(path) and all(
            want == "*" or want == got for want, got in zip(pattern, path, strict=True))
            for pattern in self.patterns)

    def child_path(self) -> Path:
        if not self.stack:
            return ()
        top = self.stack[-1]
        return (*top.path, top.key[1] if top.is_object and top.key else top.count)

    # --- the states ----------------------------------------------------------------------

    def _value(self, byte: int, position: int) -> tuple[int, int]:
        if byte == 0x7B or byte == 0x5B:  # { or [
            return self._open(byte == 0x7B, position)
        if byte == 0x22:  # "
            return self._string_value(position)
        if byte == 0x2D or 0x30 <= byte <= 0x39:  # - or a digit
            return self._number_value(position)
        for literal in _LITERALS:
            if self.data.startswith(literal, position):
                end = position + len(literal)
                self._scalar(literal, position, end, literal.decode("ascii"))
                return end, _AFTER
        raise self.fail("expected a value", position)

    def _open(self, is_object: bool, position: int) -> tuple[int, int]:
        if len(self.stack) >= MAX_NESTING:
            raise self.fail(f"values nest deeper than {MAX_NESTING:,} levels", position)
        path = self.child_path() if self.patterns else ()  # paths matter only to patterns
        frame = _Frame(is_object, path, position, bool(self.patterns) and self.selected(path))
        self.stack.append(frame)
        position += 1
        if is_object:
            return position, _KEY
        data = self.data
        position = _skip_whitespace(data, position).end()
        if position < len(data) and data[position] == 0x5D:  # empty array
            self.stack.pop()
            self._close(frame, position + 1)
            return position + 1, _AFTER
        position, taken = _number_run(data, position, frame)
        return position, _AFTER if taken else _VALUE

    def _string_at(self, position: int, what: str) -> tuple[int, bytes, str]:
        """The end, canonical bytes and text of the string token at `position`."""
        match = _match_string(self.data, position)
        if match is None:
            raise self.fail("unterminated or invalid string", position)
        try:
            canonical, text = _string(match.group())
        except _BadString:
            raise self.fail(f"{what} that is not valid Unicode", position) from None
        return match.end(), canonical, text

    def _string_value(self, position: int) -> tuple[int, int]:
        end, canonical, _ = self._string_at(position, "a string")
        self._scalar(canonical, position, end, "string")
        return end, _AFTER

    def _number_value(self, position: int) -> tuple[int, int]:
        match = _match_number(self.data, position)
        if match is None:
            raise self.fail("invalid number", position)
        try:
            text = _number_text(match.group()).encode("ascii")
        except _NumberTooLarge:
            shown = match.group().decode()
            shown = shown if len(shown) <= 24 else f"{shown[:20]}..."
            raise self.fail(f"number {shown} is too large for a double", position) from None
        self._scalar(text, position, match.end(), "number")
        return match.end(), _AFTER

    def _after(self, byte: int, position: int) -> tuple[int, int]:
        if not self.stack:
            raise self.fail("more data after the JSON value", position)
        top = self.stack[-1]
        if byte == 0x2C:  # ,
            position += 1
            if top.is_object:
                return position, _KEY
            position, taken = _number_run(self.data, position, top)
            return position, _AFTER if taken else _VALUE
        if byte == (0x7D if top.is_object else 0x5D):
            self.stack.pop()
            self._close(top, position + 1)
            return position + 1, _AFTER
        expected = "',' or '}'" if top.is_object else "',' or ']'"
        raise self.fail(f"expected {expected}", position)

    def _key(self, byte: int, position: int) -> tuple[int, int]:
        top = self.stack[-1]
        if byte == 0x7D and top.key is None and top.count == 0:  # an empty object
            self.stack.pop()
            self._close(top, position + 1)
            return position + 1, _AFTER
        if byte != 0x22:
            raise self.fail("expected a member name in double quotes", position)
        end, key_text, key = self._string_at(position, "a member name")
        top.key = (key_text, key, _PLAIN_NAME(key_text) is not None)
        return end, _COLON

    def _colon(self, byte: int, position: int) -> tuple[int, int]:
        if byte != 0x3A:
            raise self.fail("expected ':'", position)
        return position + 1, _VALUE

    # --- finished values -----------------------------------------------------------------

    def _scalar(self, value: bytes, start: int, end: int, kind: str) -> None:
        if self.patterns:
            path = self.child_path()
            if self.selected(path):
                self.measured[path] = MeasuredValue(path, start, end, len(value), None, kind)
        self._deliver(value, len(value))

    def _deliver(self, value: bytes | list[bytes], size: int) -> None:
        """Hand a finished value (one bytes object, or a rope of chunks) to its container."""
        if not self.stack:
            self.result.append(value)
            return
        top = self.stack[-1]
        if top.is_object:
            _add_member(top, value, size)
        else:
            _add_element(top, value, size)
        top.count += 1

    def _close(self, frame: _Frame, end: int) -> None:
        if frame.is_object:
            duplicate = _sort_members(frame)
            if duplicate is not None:
                raise self.fail(f"the member name {duplicate!r} appears twice in this object",
                                frame.start)
            pieces, size = _object_pieces(frame)
        else:
            pieces, size = _array_pieces(frame)
        frame.entries = []
        frame.ropes = {}
        frame.general = None
        frame.chunks.clear()
        value: bytes | list[bytes] = b"".join(pieces) if size < _SMALL else pieces
        if frame.measured:
            self.measured[frame.path] = MeasuredValue(frame.path, frame.start, end, size,
                                                      frame.count,
                                                      "object" if frame.is_object else "array")
        self._deliver(value, size)


def _add_member(frame: _Frame, value: bytes | list[bytes], size: int) -> None:
    assert frame.key is not None
    key_text, key, is_plain = frame.key
    if frame.general is None and is_plain:
        if isinstance(value, bytes):
            frame.entries.append(key_text + b":" + value)
        else:
            frame.entries.append(key_text + b":")  # a value never ends in ":"
            frame.ropes[key_text] = value
    else:
        if frame.general is None:
            frame.general = _general_members(frame)
        frame.general.append((_utf16(key), key_text, value))
    frame.size += len(key_text) + 1 + size
    frame.key = None


def _add_element(frame: _Frame, value: bytes | list[bytes], size: int) -> None:
    if frame.count:
        frame.pending += b","
        frame.size += 1
    if isinstance(value, bytes):
        frame.pending += value
        if len(frame.pending) >= _SMALL:
            frame.chunks.append(bytes(frame.pending))
            frame.pending.clear()
    else:
        if frame.pending:
            frame.chunks.append(bytes(frame.pending))
            frame.pending.clear()
        frame.chunks.extend(value)
    frame.size += size


def _object_pieces(frame: _Frame) -> tuple[list[bytes], int]:
    """The canonical text of a closed object with sorted members, and its size."""
    pieces: list[bytes] = []
    buffer = bytearray(b"{")
    members: Sequence[_Member | bytes] = (
        frame.general if frame.general is not None else frame.entries)
    for index, member in enumerate(members):
        if index:
            buffer += b","
        value: bytes | list[bytes]
        if not isinstance(member, bytes):  # (sort key, quoted name, value)
            _, key_text, value = member
            buffer += key_text
            buffer += b":"
        elif member[-1:] == b":":  # a plain name whose value is a rope kept aside
            buffer += member
            value = frame.ropes[member[:-1]]
        else:  # "name":value in one piece
            buffer += member
            continue
        if isinstance(value, bytes):
            buffer += value
        else:
            pieces.append(bytes(buffer))
            buffer.clear()
            pieces.extend(value)
    buffer += b"}"
    pieces.append(bytes(buffer))
    return pieces, frame.size + 2 + max(frame.count - 1, 0)


def _array_pieces(frame: _Frame) -> tuple[list[bytes], int]:
    """The canonical text of a closed array, and its size."""
    pieces = [b"[", *frame.chunks]
    if frame.pending:
        pieces.append(bytes(frame.pending))
    pieces.append(b"]")
    return pieces, frame.size + 2


# A quoted name of ASCII characters above '"' and without a backslash: its canonical text,
# compared bytewise, orders as RFC 8785 orders names (UTF-16 code units, a prefix first, since
# the closing quote is below every character allowed in the name).
_PLAIN_NAME = re.compile(rb'"[\x23-\x5b\x5d-\x7e]*"').fullmatch


def _utf16(name: str) -> bytes:
    """RFC 8785 section 3.2.3: names sort by UTF-16 code units, as big-endian UTF-16 bytes do."""
    return name.encode("utf-16-be", "surrogatepass")


def _general_members(frame: _Frame) -> list[_Member]:
    """Turn an object's plain-name members into (sort key, quoted name, value) triples."""
    general: list[_Member] = []
    for entry in frame.entries:
        cut = entry.index(b'"', 1) + 1  # a plain name holds no quote, so this closes it
        key_text, rest = entry[:cut], entry[cut + 1:]
        value = rest if rest else frame.ropes[key_text]
        general.append((_utf16(key_text[1:-1].decode("ascii")), key_text, value))
    frame.entries = []
    frame.ropes = {}
    return general


def _sort_members(frame: _Frame) -> str | None:
    """Sort an object's members in place; return a member name that appears twice, if any."""
    if frame.general is not None:
        frame.general.sort(key=lambda member: member[0])
        for before, after in itertools.pairwise(frame.general):
            if before[0] == after[0]:
                return after[1][1:-1].decode("utf-8")
        return None
    entries = frame.entries
    entries.sort()
    for index in range(1, len(entries)):
        previous = entries[index - 1]
        name_and_colon = previous[:previous.index(b'"', 1) + 2]
        if entries[index].startswith(name_and_colon):
            return name_and_colon[1:-2].decode("ascii")
    return None


def _number_run(data: bytes, position: int, frame: _Frame) -> tuple[int, bool]:
    """At an array element, convert a run of plain numbers in batches.

    Returns the new position and whether any number was taken. A run that is not followed by a
    comma or the end of the array (say "1.5e") is left to the main loop, which reports it.
    """
    taken = False
    length = len(data)
    while True:
        match = _match_run(data, position)
        if match is None:
            return position, taken
        after = _skip_whitespace(data, match.end()).end()
        if after < length and data[after] not in (0x2C, 0x5D):
            return position, taken
        try:
            text = _run_text(match.group())
        except (_NumberTooLarge, OverflowError):
            return position, taken  # converted one by one, the culprit is named
        if frame.count:
            frame.pending += b","
            frame.size += 1
        frame.pending += text
        frame.size += len(text)
        frame.count += text.count(b",") + 1
        if len(frame.pending) >= _SMALL:
            frame.chunks.append(bytes(frame.pending))
            frame.pending.clear()
        taken = True
        if after >= length or data[after] == 0x5D or _match_run(data, after + 1) is None:
            return after, True  # at the closing bracket, or at a comma the main loop takes
        position = after + 1
