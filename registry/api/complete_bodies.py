"""Request bodies that arrive whole or not at all.

A WSGI server such as gunicorn hands the application a body cut short by a client that hangs up
(fewer bytes than its Content-Length announced) as if it had simply ended, and raises its own
parse errors for malformed chunked framing. Wrapped here, either becomes a 400 problem document
before any use case runs, so nothing half-sent is ever written.
"""

from __future__ import annotations

import io
from collections.abc import Callable, Iterable
from typing import Any

from werkzeug.exceptions import BadRequest


class IncompleteBody(BadRequest):
    """The body ended before its Content-Length, or its framing could not be read."""


class CompleteBodyStream(io.RawIOBase):
    """Reads the server's input stream, insisting on exactly `expected` bytes when it is known."""

    def __init__(self, stream: Any, expected: int | None) -> None:
        self._stream = stream
        self._expected = expected
        self._received = 0

    def readable(self) -> bool:
        return True

    def readinto(self, buffer: Any) -> int:
        wanted = len(buffer)
        if self._expected is not None:
            wanted = min(wanted, self._expected - self._received)
            if wanted <= 0:
                return 0
        try:
            data = self._stream.read(wanted)
        except BadRequest:
            raise
        except Exception as error:  # the server's own framing errors (chunk sizes, hang-ups)
            raise IncompleteBody(f"the body could not be read: {_first_line(error)}") from None
        if not data and self._expected is not None and self._received < self._expected:
            raise IncompleteBody(f"the body ended after {self._received} of the "
                                 f"{self._expected} bytes its Content-Length announced")
        buffer[:len(data)] = data
        self._received += len(data)
        return len(data)


def _first_line(error: Exception) -> str:
    text = str(error).strip().splitlines()
    return f"{type(error).__name__}: {text[0]}" if text else type(error).__name__


class CompleteBodies:
    """WSGI middleware: the application's input stream is a CompleteBodyStream."""

    def __init__(self, application: Callable[..., Iterable[bytes]]) -> None:
        self.application = application

    def __call__(self, environ: dict[str, Any], start_response: Callable[..., Any]
                 ) -> Iterable[bytes]:
        stream = environ.get("wsgi.input")
        if stream is not None:
            try:
                expected = int(environ["CONTENT_LENGTH"]) if environ.get("CONTENT_LENGTH") else None
            except ValueError:
                expected = None  # werkzeug refuses a malformed Content-Length itself
            environ["wsgi.input"] = io.BufferedReader(CompleteBodyStream(stream, expected))
        return self.application(environ, start_response)
