"""The small error family every layer raises and every shell renders.

A user error is bad input (CLI exit 2, HTTP 4xx); a refusal is a negative verdict (exit 1);
a conflict is a concurrent change that lost a race (exit 3, HTTP 409). Each carries the place at
fault (a schema path, a file row and column, a gate name) so a person can act on it.
"""

from __future__ import annotations


class LockkeeperError(Exception):
    """Base of every error a user can cause or meet; never a programming error."""

    exit_code: int = 2
    http_status: int = 400
    kind: str = "bad-input"  # stable slug, used as the RFC 9457 problem `type`

    def __init__(self, message: str, *, place: str | None = None) -> None:
        super().__init__(message)
        self.message = message
        self.place = place

    def where(self) -> str | None:
        """The place as a person reads it (a schema error adds the file it came from)."""
        return self.place

    def one_line(self) -> str:
        """The message as one line, prefixed by its place when it has one."""
        text = " ".join(self.message.split())
        where = self.where()
        return f"{where}: {text}" if where else text


class UserError(LockkeeperError):
    """The input is wrong: a file, a value, a name, an option."""


class NotFound(UserError):
    """A named thing (model, version, dataset, stage) does not exist."""

    http_status = 404
    kind = "not-found"


class StageNotHeld(NotFound):
    """The model and stage exist, but no version holds the stage now."""

    kind = "stage-not-held"


class AlreadyExists(UserError):
    """A name that must be unique is already taken."""

    http_status = 409
    kind = "already-exists"


class Unprocessable(UserError):
    """The input parsed, but its content is not acceptable (an invalid schema, say)."""

    http_status = 422
    kind = "invalid-content"


class Forbidden(UserError):
    """The actor lacks the role this action needs."""

    http_status = 403
    kind = "forbidden"


class Refusal(LockkeeperError):
    """A negative verdict: incompatible schemas, a gate that refused."""

    exit_code = 1
    http_status = 422
    kind = "refused"


class Conflict(LockkeeperError):
    """A concurrent change got there first; retrying may succeed."""

    exit_code = 3
    http_status = 409
    kind = "conflict"


class CatalogueUnavailable(UserError):
    """The catalogue cannot be opened: a bad URL, an unreachable server, a read-only file."""

    http_status = 503
    kind = "catalogue-unavailable"


class Unauthenticated(LockkeeperError):
    """No token, or one the catalogue does not accept (unknown, expired, revoked)."""

    http_status = 401
    kind = "unauthenticated"
