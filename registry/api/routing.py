"""The API blueprint and the one decorator every route uses: path, method, the use case's action
and the metadata the OpenAPI document is built from, so the routes and the document cannot drift
apart. The decorator authenticates (who is calling) and nothing more: whether that caller may
act is decided by the use case, through registry.service.authorisation."""

from __future__ import annotations

import functools
from collections.abc import Callable
from dataclasses import dataclass, field
from typing import Any

from flask import Blueprint, g
from flask.blueprints import BlueprintSetupState
from werkzeug.routing import IntegerConverter

from registry.api.auth import authenticate
from registry.api.bodies import refuse_oversize_body
from registry.api.problems import install_problem_handlers

API_PREFIX = "/api/v1"

# Ids and version numbers fit a 32-bit column on every database; a larger number in a path
# is no such thing (404), never a database error.
LARGEST_NUMBER = 2**31 - 1


class NumberConverter(IntegerConverter):
    def __init__(self, url_map, *args, **kwargs) -> None:
        super().__init__(url_map, min=0, max=LARGEST_NUMBER)


api = Blueprint("api", __name__, url_prefix=API_PREFIX)


def _add_number_converter(state: BlueprintSetupState) -> None:
    state.app.url_map.converters.setdefault("number", NumberConverter)


# Recorded before any route, so the converter exists when the app binds the rules.
api.record_once(_add_number_converter)
install_problem_handlers(api)
api.before_request(refuse_oversize_body)


@dataclass(frozen=True)
class Operation:
    """One route: `rule` in Flask syntax under /api/v1, the action of the service's
    authorisation table it performs (None for reads), whether it needs no token at all
    (`public`), and what the OpenAPI document says about it."""

    rule: str
    method: str
    operation_id: str
    summary: str
    tag: str
    action: str | None = None
    public: bool = False
    body: dict[str, Any] | None = None        # JSON Schema of a JSON body
    form: dict[str, Any] | None = None        # JSON Schema of a multipart/form-data body
    body_required: bool = True
    query: tuple[dict[str, Any], ...] = ()    # OpenAPI parameter objects for the query string
    responses: dict[int, str] = field(default_factory=dict)
    response_schema: dict[str, Any] | None = None
    is_read: bool = True


OPERATIONS: list[Operation] = []


def route(rule: str, method: str, *, summary: str, tag: str,
          action: str | None = None, public: bool = False,
          body: dict[str, Any] | None = None,
          form: dict[str, Any] | None = None, body_required: bool = True,
          query: tuple[dict[str, Any], ...] = (), responses: dict[int, str] | None = None,
          response_schema: dict[str, Any] | None = None,
          is_read: bool | None = None) -> Callable[[Callable[..., Any]], Callable[..., Any]]:
    """Register a view on the API blueprint; the view finds the acting user in `g.actor`."""
    def decorate(view: Callable[..., Any]) -> Callable[..., Any]:
        operation = Operation(rule=rule, method=method, operation_id=view.__name__,
                              summary=summary, tag=tag, action=action, public=public,
                              body=body, form=form,
                              body_required=body_required, query=query,
                              responses=dict(responses or {200: "OK"}),
                              response_schema=response_schema,
                              is_read=is_read if is_read is not None else action is None)

        @functools.wraps(view)
        def guarded(**arguments: Any) -> Any:
            g.actor = None if operation.public else authenticate(is_read=operation.is_read)
            return view(**arguments)

        OPERATIONS.append(operation)
        api.add_url_rule(rule, endpoint=view.__name__, view_func=guarded, methods=[method])
        return view

    return decorate
