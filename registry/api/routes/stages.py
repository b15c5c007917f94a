"""Moving versions between stages (check, promote, approve, roll back, retire), gate reports,
and the hot path: which version holds a stage now."""

from __future__ import annotations

import json

from flask import Response, g

from registry.api.bodies import NAME, TEXT, WAIVERS, json_body, strict_object
from registry.api.context import cached_reads, catalogue
from registry.api.rendering import json_response, path_name
from registry.api.routing import route
from registry.api.waiting import WAIT_PARAMETER, answer_when_changed, unchanged, wait_seconds
from registry.service import gatekeeping, stages

CHECK_BODY = strict_object({"stage": NAME, "waivers": WAIVERS}, ("stage",))
PROMOTE_BODY = strict_object({"stage": NAME, "waivers": WAIVERS,
                              "expect_holder": {"type": ["integer", "null"], "minimum": 1}},
                             ("stage",))
APPROVE_BODY = strict_object({"stage": NAME, "note": TEXT}, ("stage",))
ROLLBACK_BODY = strict_object({"waivers": WAIVERS})
RETIRE_BODY = strict_object({"reason": TEXT})
VERSION_PATH = "/models/<model>/versions/<number:version>"


def _waivers(body: dict) -> list[gatekeeping.Waiver]:
    given = body.get("waivers", [])
    return gatekeeping.parse_waivers([(w["gate"], w["reason"]) for w in given], g.actor)


@route(VERSION_PATH + "/check", "POST", summary="Run the gates of a stage as a dry run: "
       "nothing changes", tag="stages", body=CHECK_BODY, is_read=True)
def check_version(model: str, version: int):
    body = json_body(CHECK_BODY)
    outcome = stages.check(catalogue(), path_name(model, "model"), version,
                           path_name(body["stage"], "stage"), g.actor,
                           gatekeeping.parse_waivers(
                               [(w["gate"], w["reason"]) for w in body.get("waivers", [])],
                               g.actor))
    return json_response({**outcome.report, "would_move": outcome.report["passed"]})


@route(VERSION_PATH + "/promote", "POST", action="stage.promote",
       summary="Move a version into a stage if its gates allow (guarded stages and waivers need "
       "an approver)", tag="stages",
       body=PROMOTE_BODY)
def promote_version(model: str, version: int):
    body = json_body(PROMOTE_BODY)
    stage = path_name(body["stage"], "stage")
    expected = None
    if "expect_holder" in body:
        holder = body["expect_holder"]
        expected = stages.HolderSnapshot(stage, () if holder is None else (holder,))
    outcome = stages.promote(catalogue(), path_name(model, "model"), version, stage, g.actor,
                             _waivers(body), expected)
    return json_response(outcome)


@route(VERSION_PATH + "/approve", "POST", action="version.approve",
       summary="Record an approval of a version for a stage (never by its author)", tag="stages",
       body=APPROVE_BODY)
def approve_version(model: str, version: int):
    body = json_body(APPROVE_BODY)
    return json_response(stages.approve(catalogue(), path_name(model, "model"), version,
                                        path_name(body["stage"], "stage"), g.actor,
                                        body.get("note", "")))


@route(VERSION_PATH + "/retire", "POST", action="version.retire",
       summary="Take a version out of service", tag="stages", body=RETIRE_BODY,
       body_required=False)
def retire_version(model: str, version: int):
    body = json_body(RETIRE_BODY, required=False)
    return json_response(stages.retire(catalogue(), path_name(model, "model"), version, g.actor,
                                       body.get("reason", "")))


@route("/models/<model>/stages/<stage>/rollback", "POST", action="stage.rollback",
       summary="Give an exclusive stage back to the version its holder displaced", tag="stages",
       body=ROLLBACK_BODY, body_required=False)
def rollback_stage(model: str, stage: str):
    body = json_body(ROLLBACK_BODY, required=False)
    outcome = stages.rollback(catalogue(), path_name(model, "model"), path_name(stage, "stage"),
                              g.actor, _waivers(body))
    return json_response(outcome)


@route("/models/<model>/stages/<stage>", "GET", summary="The version holding a stage now "
       "(what a scoring service polls; send If-None-Match with the last ETag, and ?wait=SECONDS "
       "to be answered as soon as the holder changes)", tag="stages",
       query=(WAIT_PARAMETER,),
       responses={200: "OK", 304: "Not Modified: the holder is unchanged", 400: "Bad wait",
                  503: "Too many requests already wait in this process (see Retry-After)"})
def stage_holding(model: str, stage: str):
    seconds = wait_seconds()
    reads = cached_reads()
    holder = answer_when_changed(lambda at: reads.stage_holder(model, stage, at),
                                 lambda found: found.tag, seconds)
    if isinstance(holder, Response):
        return holder
    etag = f'"{holder.tag}"'
    headers = {"ETag": etag, "Cache-Control": "no-cache"}
    if unchanged(holder.tag):
        return Response(status=304, headers=headers)
    # Plain json.dumps: this is the hot path, and the document is already plain data.
    return Response(json.dumps(holder.to_dict()), status=200, headers=headers,
                    mimetype="application/json")


@route("/reports/<number:report_id>", "GET", summary="One stored gate report", tag="stages")
def gate_report(report_id: int):
    return json_response(stages.find_report(catalogue(), report_id))
