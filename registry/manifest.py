"""The version manifest: a TOML file that says what a registered version is made of.

Format (docs/manifest.md): flat keys, paths relative to the manifest file.
"""

from __future__ import annotations

import tomllib
from dataclasses import dataclass, field

from registry.errors import UserError

KNOWN_KEYS = {
    "description", "code_revision", "author", "input_schema", "output_schema", "features",
    "trained_on", "evaluated_on", "parent_version", "feed",
}


class ManifestError(UserError):
    kind = "bad-manifest"


@dataclass(frozen=True)
class Manifest:
    input_schema: str | None
    output_schema: str | None = None
    features: str | None = None
    description: str = ""
    code_revision: str = ""
    author: str = ""
    trained_on: tuple[str, ...] = ()
    evaluated_on: tuple[str, ...] = ()
    parent_version: int | None = None
    feed: str | None = None  # the feed the version reads, when not its model's
    inline_features: dict | None = field(default=None, compare=False)


def _string(table: dict, key: str, source: str) -> str:
    value = table.get(key, "")
    if not isinstance(value, str):
        raise ManifestError(f"`{key}` must be a string", place=f"{source}: {key}")
    return value


def _names(table: dict, key: str, source: str) -> tuple[str, ...]:
    value = table.get(key, [])
    if isinstance(value, str):
        value = [value]
    if not isinstance(value, list) or not all(isinstance(v, str) and v for v in value):
        raise ManifestError(f"`{key}` must be a list of dataset names", place=f"{source}: {key}")
    return tuple(value)


def parse_manifest(text: str, *, source: str = "manifest") -> Manifest:
    """Parse and check a manifest; a schema for the input is required unless the document
    carries its own (a PFA document), which the registration use case checks."""
    try:
        table = tomllib.loads(text)
    except tomllib.TOMLDecodeError as error:
        raise ManifestError(f"not valid TOML: {error}", place=source) from None
    inline_features = (table.pop("features", None) if isinstance(table.get("features"), dict)
                       else None)
    unknown = sorted(set(table) - KNOWN_KEYS)
    if unknown:
        raise ManifestError(f"unknown key(s) {', '.join(unknown)}; known keys are "
                            f"{', '.join(sorted(KNOWN_KEYS))}", place=source)
    parent = table.get("parent_version")
    if parent is not None and (not isinstance(parent, int) or isinstance(parent, bool)
                               or parent < 1):
        raise ManifestError("`parent_version` must be a positive version number",
                            place=f"{source}: parent_version")
    return Manifest(
        input_schema=_string(table, "input_schema", source) or None,
        output_schema=_string(table, "output_schema", source) or None,
        features=_string(table, "features", source) or None,
        description=_string(table, "description", source),
        code_revision=_string(table, "code_revision", source),
        author=_string(table, "author", source),
        trained_on=_names(table, "trained_on", source),
        evaluated_on=_names(table, "evaluated_on", source),
        parent_version=parent,
        feed=_string(table, "feed", source) or None,
        inline_features=inline_features,
    )
