"""Release statements for the serving side: the current one of a stage, and any one by its
digest (the download link of the version page)."""

from __future__ import annotations

from flask import Response, request

from registry.api.context import catalogue
from registry.api.rendering import json_response, path_name
from registry.api.routing import route
from registry.service import releases


def envelope_response(release: releases.Release, *, immutable: bool) -> Response:
    headers = {"ETag": f'"{release.digest}"',
               "Content-Disposition": f'attachment; filename="{release.model}-v'
                                      f'{release.version}-{release.stage}-{release.move}'
                                      '.release.json"',
               "Cache-Control": "private, max-age=31536000, immutable" if immutable
               else "no-cache"}
    if request.if_none_match.contains_weak(release.digest):
        return Response(status=304, headers=headers)
    return Response(release.envelope, status=200, headers=headers,
                    mimetype=releases.ENVELOPE_MEDIA_TYPE)


@route("/models/<model>/stages/<stage>/release", "GET", summary="The current release statement "
       "of a stage: a DSSE envelope around an in-toto statement (ETag: SHA-256 of the envelope)",
       tag="releases", responses={200: "The envelope", 304: "Not Modified",
                                  404: "Nobody holds the stage, or its holder has no statement"})
def stage_release(model: str, stage: str):
    release = releases.current_release(catalogue(), path_name(model, "model"),
                                       path_name(stage, "stage"))
    return envelope_response(release, immutable=False)


@route("/models/<model>/versions/<number:version>/releases", "GET", summary="Every release "
       "statement about a version, oldest first (without the envelopes)", tag="releases")
def version_releases(model: str, version: int):
    found = releases.releases_of_version(catalogue(), path_name(model, "model"), version)
    return json_response({"model": model, "version": version,
                          "releases": [r.summary() for r in found]})


@route("/models/<model>/releases/<digest>", "GET", summary="One release statement by the "
       "SHA-256 of its envelope", tag="releases")
def release_by_digest(model: str, digest: str):
    release = releases.release_by_digest(catalogue(), path_name(model, "model"),
                                         path_name(digest, "statement"))
    return envelope_response(release, immutable=True)
