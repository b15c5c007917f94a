"""Registering a version over HTTP: a multipart upload of the files `lockkeeper register` reads.

Parts (multipart/form-data; each a file or a text field):
  document       the model document (required; its file name is kept in the summary)
  manifest       the TOML manifest (required)
  input_schema, output_schema, features
                 optional: used instead of the files the manifest names
  <path>         a file the manifest names, under the exact relative path the manifest gives
                 (e.g. a part named `schemas/segment-v1.avsc`), as the CLI reads it beside the
                 manifest. Nothing is ever read from the server's disk.
A part the registration does not use is refused (unknown fields), so a typo never goes unseen.
"""

from __future__ import annotations

from pathlib import PurePosixPath

from flask import g, request

from registry.api.bodies import check_form, require_media_type
from registry.api.context import catalogue
from registry.api.problems import ApiError
from registry.api.rendering import json_response, path_name
from registry.api.routing import route
from registry.errors import UserError
from registry.manifest import parse_manifest
from registry.service import registration

BINARY = {"type": "string", "format": "binary"}
REGISTER_FORM = {
    "type": "object",
    "properties": {"document": BINARY, "manifest": BINARY, "input_schema": BINARY,
                   "output_schema": BINARY, "features": BINARY},
    "required": ["document", "manifest"],
    "additionalProperties": BINARY,
}


def _parts() -> dict[str, tuple[bytes, str | None]]:
    """Every part of the upload by name: its bytes and, for a file, its file name."""
    require_media_type("multipart/form-data")
    check_form(REGISTER_FORM)
    parts: dict[str, tuple[bytes, str | None]] = {}
    for name, upload in request.files.items(multi=True):
        if name in parts:
            raise UserError(f"the part {name!r} is given twice", place=name)
        parts[name] = (upload.read(), upload.filename)
    for name, text in request.form.items(multi=True):
        if name in parts:
            raise UserError(f"the part {name!r} is given twice", place=name)
        parts[name] = (text.encode("utf-8"), None)
    return parts


def _text(parts: dict[str, tuple[bytes, str | None]], name: str) -> str:
    try:
        return parts[name][0].decode("utf-8")
    except UnicodeDecodeError:
        raise UserError("this part is not UTF-8 text", place=name) from None


def registration_request(model: str, parts: dict[str, tuple[bytes, str | None]]
                         ) -> registration.RegistrationRequest:
    """The same request registry.cli.local.registration_request builds from files."""
    for required in ("document", "manifest"):
        if required not in parts:
            raise UserError(f"the upload has no {required!r} part", place=required)
    manifest = parse_manifest(_text(parts, "manifest"), source="manifest")
    used = {"document", "manifest"}

    def named(explicit: str, relative: str | None) -> str | None:
        for name in (explicit, relative):
            if name is not None and name in parts:
                used.add(name)
                return _text(parts, name)
        if relative is not None:
            raise UserError(f"the manifest's {explicit} names {relative!r}: send it as a part "
                            f"named {relative!r} or {explicit!r}", place=explicit)
        return None

    input_text = named("input_schema", manifest.input_schema)
    output_text = named("output_schema", manifest.output_schema)
    features_text = named("features", manifest.features)
    unused = sorted(set(parts) - used)
    if unused:
        raise ApiError(f"part(s) {', '.join(map(repr, unused))} are not used by this "
                       "registration", kind="unknown-fields", status=400, place=unused[0])
    document, filename = parts["document"]
    return registration.RegistrationRequest(
        model=model, document=document,
        document_name=PurePosixPath(filename or "document").name,
        manifest=manifest, input_schema_text=input_text, output_schema_text=output_text,
        features_text=features_text)


@route("/models/<model>/versions", "POST", action="version.register", summary="Register the next "
       "version of a model (multipart upload of document, manifest and the files it names)",
       tag="versions", form=REGISTER_FORM,
       responses={201: "Created", 200: "This registration already exists; nothing changed"})
def register_version(model: str):
    name = path_name(model, "model")
    request_ = registration_request(name, _parts())
    outcome = registration.register_version(catalogue(), request_, g.actor)
    return json_response(outcome, 201 if outcome.created else 200,
                         {"Location": f"/api/v1/models/{name}"})
