"""Argument types every command shares: versions written `2`, `v2` or `MODEL@2`, and choices
that suggest the nearest value when mistyped."""

from __future__ import annotations

import functools
import re
from collections.abc import Callable
from typing import Any

import click

from registry.errors import UserError
from registry.suggest import did_you_mean

_NUMBER = re.compile(r"[vV]?([0-9]{1,9})")


def parse_version_number(text: str, *, place: str = "VERSION") -> int:
    """`2` or `v2` as 2; anything else is a user error saying what is accepted."""
    match = _NUMBER.fullmatch(text.strip())
    if match is None or int(match.group(1)) < 1:
        raise UserError(f"not a version number: {text!r}; write 2, v2 or MODEL@2", place=place)
    return int(match.group(1))


def split_model_optional_version(model: str, version: str | None) -> tuple[str, int | None]:
    """As split_model_version, for commands where the version may be left out (a stage names
    the version instead)."""
    if "@" not in model and version is None:
        return model, None
    return split_model_version(model, version)


def split_model_version(model: str, version: str | None) -> tuple[str, int]:
    """MODEL and VERSION from `MODEL VERSION`, `MODEL vN` or `MODEL@N`."""
    name, at, number = model.partition("@")
    if at:
        if version is not None:
            raise UserError(f"the version is given twice ({model} and {version}); give it once",
                            place="VERSION")
        return name, parse_version_number(number, place="MODEL@N")
    if version is None:
        raise UserError(f"which version of {model}? write `{model} 2` or `{model}@2`",
                        place="VERSION")
    return name, parse_version_number(version)


def model_version_arguments(function: Callable[..., Any]) -> Callable[..., Any]:
    """`MODEL VERSION`, `MODEL vN` or `MODEL@N`: the command gets `model_name` and `version`
    (an int). Put it where the two click.argument decorators would go."""

    @functools.wraps(function)  # carries the click parameters declared so far
    def joined(*args: Any, model_name: str, version: str | None, **kwargs: Any) -> Any:
        model_name, number = split_model_version(model_name, version)
        return function(*args, model_name=model_name, version=number, **kwargs)

    joined = click.argument("version", metavar="[VERSION]", required=False)(joined)
    return click.argument("model_name", metavar="MODEL[@N]")(joined)


class SuggestingChoice(click.Choice):
    """A choice whose error names the nearest allowed value: "did you mean publisher?"."""

    def convert(self, value: Any, param: click.Parameter | None, ctx: click.Context | None
                ) -> Any:
        if value in self.choices:
            return value
        allowed = ", ".join(map(str, self.choices))
        self.fail(f"{value!r} is not one of {allowed}{did_you_mean(str(value), self.choices)}",
                  param, ctx)


class FilePath(click.ParamType):
    """A path that must name a regular, non-empty file: a missing, empty or folder path is the
    same one-line error as everywhere else (registry.cli.files), not click's own wording."""

    name = "file"

    def __init__(self, what: str) -> None:
        self.what = what

    def convert(self, value: Any, param: click.Parameter | None, ctx: click.Context | None
                ) -> str:
        from registry.cli.files import require_file

        require_file(value, self.what)
        return str(value)
