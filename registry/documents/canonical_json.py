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
from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field
from json.decoder import scanstring
from json.encoder import encode_basestring

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

_skip_whitespace = re.compile(_WHITESPACE).match
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
        self.general: list[tuple[bytes, bytes, bytes | list[bytes]]] | None = None
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
    depths = {len(pattern) for pattern in patterns}

    def selected(path: Path) -> bool:
        # Patterns name object members only; array elements are never measured.
        if len(path) not in depths or any(isinstance(part, int) for part in path):
            return False
        return any(len(pattern) == len(path) and all(
            want == "*" or want == got for want, got in zip(pattern, path, strict=True))
            for pattern in patterns)

    def fail(message: str, offset: int) -> MalformedJson:
        return MalformedJson(f"not valid JSON: {message}", place=_position(data, offset))

    measured: dict[Path, MeasuredValue] = {}
    stack: list[_Frame] = []
    result: list[bytes | list[bytes]] = []
    length = len(data)
    position = 3 if data.startswith(b"\xef\xbb\xbf") else 0  # a UTF-8 byte order mark is allowed

    def child_path() -> Path:
        if not stack:
            return ()
        top = stack[-1]
        return (*top.path, top.key[1] if top.is_object and top.key else top.count)

    def deliver(value: bytes | list[bytes], size: int) -> None:
        """Hand a finished value (one bytes object, or a rope of chunks) to its container."""
        if not stack:
            result.append(value)
            return
        top = stack[-1]
        if top.is_object:
            assert top.key is not None
            key_text, key, is_plain = top.key
            if top.general is None and is_plain:
                if isinstance(value, bytes):
                    top.entries.append(key_text + b":" + value)
                else:
                    top.entries.append(key_text + b":")  # a value never ends in ":"
                    top.ropes[key_text] = value
            else:
                if top.general is None:
                    top.general = _general_members(top)
                top.general.append((_utf16(key), key_text, value))
            top.size += len(key_text) + 1 + size
            top.key = None
        else:
            if top.count:
                top.pending += b","
                top.size += 1
            if isinstance(value, bytes):
                top.pending += value
                if len(top.pending) >= _SMALL:
                    top.chunks.append(bytes(top.pending))
                    top.pending.clear()
            else:
                if top.pending:
                    top.chunks.append(bytes(top.pending))
                    top.pending.clear()
                top.chunks.extend(value)
            top.size += size
        top.count += 1

    def finish_scalar(value: bytes, start: int, end: int, kind: str) -> None:
        if patterns:
            path = child_path()
            if selected(path):
                measured[path] = MeasuredValue(path, start, end, len(value), None, kind)
        deliver(value, len(value))

    def close(frame: _Frame, end: int) -> None:
        pieces: list[bytes] = []
        buffer = bytearray()
        if frame.is_object:
            buffer += b"{"
            duplicate = _sort_members(frame)
            if duplicate is not None:
                raise fail(f"the member name {duplicate!r} appears twice in this object",
                           frame.start)
            members = frame.general if frame.general is not None else frame.entries
            for index, member in enumerate(members):
                if index:
                    buffer += b","
                if isinstance(member, tuple):
                    key_text, value = member[1], member[2]
                    buffer += key_text
                    buffer += b":"
                elif member[-1:] == b":":
                    buffer += member
                    value = frame.ropes[member[:-1]]
                else:
                    buffer += member
                    continue
                if isinstance(value, bytes):
                    buffer += value
                else:
                    pieces.append(bytes(buffer))
                    buffer.clear()
                    pieces.extend(value)
            buffer += b"}"
            size = frame.size + 2 + max(frame.count - 1, 0)
        else:
            buffer += b"["
            pieces.append(bytes(buffer))
            buffer.clear()
            pieces.extend(frame.chunks)
            if frame.pending:
                pieces.append(bytes(frame.pending))
            buffer += b"]"
            size = frame.size + 2
        pieces.append(bytes(buffer))
        frame.entries = []
        frame.ropes = {}
        frame.general = None
        frame.chunks.clear()
        value: bytes | list[bytes] = b"".join(pieces) if size < _SMALL else pieces
        if frame.measured:
            measured[frame.path] = MeasuredValue(frame.path, frame.start, end, size,
                                                 frame.count,
                                                 "object" if frame.is_object else "array")
        deliver(value, size)

    # States: expecting a value; after a value (a comma or a close); an object key; a colon.
    VALUE, AFTER, KEY, COLON = 0, 1, 2, 3
    state = VALUE
    while True:
        if position < length and data[position] in _WHITESPACE_BYTES:
            position = _skip_whitespace(data, position).end()
        if position >= length:
            break
        byte = data[position]
        if state == VALUE:
            if byte == 0x7B or byte == 0x5B:  # { or [
                if len(stack) >= MAX_NESTING:
                    raise fail(f"values nest deeper than {MAX_NESTING:,} levels", position)
                path = child_path() if patterns else ()  # paths matter only to patterns
                frame = _Frame(byte == 0x7B, path, position,
                               bool(patterns) and selected(path))
                stack.append(frame)
                position += 1
                state = KEY if frame.is_object else VALUE
                if not frame.is_object:
                    position = _skip_whitespace(data, position).end()
                    if position < length and data[position] == 0x5D:  # empty array
                        stack.pop()
                        close(frame, position + 1)
                        position += 1
                        state = AFTER
                    else:
                        position, taken = _number_run(data, position, frame)
                        state = AFTER if taken else VALUE
                continue
            if byte == 0x22:  # "
                match = _match_string(data, position)
                if match is None:
                    raise fail("unterminated or invalid string", position)
                try:
                    canonical, _ = _string(match.group())
                except _BadString:
                    raise fail("a string that is not valid Unicode", position) from None
                finish_scalar(canonical, position, match.end(), "string")
                position = match.end()
                state = AFTER
                continue
            if byte == 0x2D or 0x30 <= byte <= 0x39:  # - or a digit
                match = _match_number(data, position)
                if match is None:
                    raise fail("invalid number", position)
                try:
                    text = _number_text(match.group()).encode("ascii")
                except _NumberTooLarge:
                    shown = match.group().decode()
                    shown = shown if len(shown) <= 24 else f"{shown[:20]}..."
                    raise fail(f"number {shown} is too large for a double", position) from None
                finish_scalar(text, position, match.end(), "number")
                position = match.end()
                state = AFTER
                continue
            for literal in (b"true", b"false", b"null"):
                if data.startswith(literal, position):
                    finish_scalar(literal, position, position + len(literal),
                                  literal.decode("ascii"))
                    position += len(literal)
                    state = AFTER
                    break
            else:
                raise fail("expected a value", position)
            continue
        if state == AFTER:
            if not stack:
                raise fail("more data after the JSON value", position)
            top = stack[-1]
            if byte == 0x2C:  # ,
                position += 1
                if top.is_object:
                    state = KEY
                else:
                    position, taken = _number_run(data, position, top)
                    state = AFTER if taken else VALUE
                continue
            closer = 0x7D if top.is_object else 0x5D
            if byte == closer:
                stack.pop()
                close(top, position + 1)
                position += 1
                state = AFTER
                continue
            expected = "',' or '}'" if top.is_object else "',' or ']'"
            raise fail(f"expected {expected}", position)
        if state == KEY:
            top = stack[-1]
            if byte == 0x7D and top.key is None and top.count == 0:
                stack.pop()
                close(top, position + 1)
                position += 1
                state = AFTER
                continue
            if byte != 0x22:
                raise fail("expected a member name in double quotes", position)
            match = _match_string(data, position)
            if match is None:
                raise fail("unterminated or invalid string", position)
            try:
                key_text, key = _string(match.group())
            except _BadString:
                raise fail("a member name that is not valid Unicode", position) from None
            top.key = (key_text, key, _PLAIN_NAME(key_text) is not None)
            position = match.end()
            state = COLON
            continue
        if state == COLON:
            if byte != 0x3A:
                raise fail("expected ':'", position)
            position += 1
            state = VALUE
            continue
    if stack:
        raise fail("the document ends inside an array or object", length)
    if not result:
        raise fail("no JSON value", position)
    return result[0], measured


# A quoted name of ASCII characters above '"' and without a backslash: its canonical text,
# compared bytewise, orders as RFC 8785 orders names (UTF-16 code units, a prefix first, since
# the closing quote is below every character allowed in the name).
_PLAIN_NAME = re.compile(rb'"[\x23-\x5b\x5d-\x7e]*"').fullmatch


def _utf16(name: str) -> bytes:
    """RFC 8785 section 3.2.3: names sort by UTF-16 code units, as big-endian UTF-16 bytes do."""
    return name.encode("utf-16-be", "surrogatepass")


def _general_members(frame: _Frame) -> list[tuple[bytes, bytes, bytes | list[bytes]]]:
    """Turn an object's plain-name members into (sort key, quoted name, value) triples."""
    general: list[tuple[bytes, bytes, bytes | list[bytes]]] = []
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
