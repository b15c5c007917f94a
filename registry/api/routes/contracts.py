"""Feeds and consumers as contracts, the feed a model reads, and the impact of a move.

Schemas travel as the Avro schema itself (a JSON object, array or string, what an .avsc file
holds). The routes only authenticate; the use cases ask the one authorisation rule.
"""

from __future__ import annotations

import json

from flask import g, request

from registry.api.bodies import NAME, TEXT, json_body, strict_object
from registry.api.context import catalogue
from registry.api.problems import ApiError
from registry.api.rendering import json_response, path_name
from registry.api.routing import route
from registry.service import consumers, feeds
from registry.service.impact import impact_of

RETAIN_DAYS = {"type": "integer", "minimum": 1, "maximum": feeds.LONGEST_RETAIN_DAYS}
CREATE_FEED_BODY = strict_object({"name": NAME, "description": TEXT, "retain_days": RETAIN_DAYS,
                                  "built_from": {"type": "array", "items": NAME}}, ("name",))
PUBLISH_BODY = strict_object({"schema": {}, "note": TEXT, "waiver_reason": TEXT}, ("schema",))
SCHEMA_BODY = strict_object({"schema": {}}, ("schema",))
SET_FEED_BODY = strict_object({"feed": NAME}, ("feed",))
ADD_CONSUMER_BODY = strict_object({"name": NAME, "model": NAME, "owner": TEXT, "schema": {}},
                                  ("name", "model", "schema"))
UPDATE_CONSUMER_BODY = strict_object({"schema": {}, "note": TEXT}, ("schema",))
IMPACT_QUERY = ({"name": "stage", "in": "query", "required": True,
                 "schema": {"type": "string", "maxLength": 100}},)


def _schema_text(body: dict) -> str:
    return json.dumps(body["schema"])


@route("/feeds", "GET", summary="Every feed with its current schema version", tag="contracts")
def list_feeds():
    return json_response(feeds.list_feeds(catalogue()))


@route("/feeds", "POST", action="feed.create",
       summary="Create a feed (publisher)", tag="contracts",
       body=CREATE_FEED_BODY, responses={201: "Created"})
def create_feed():
    body = json_body(CREATE_FEED_BODY)
    found = feeds.create_feed(catalogue(), body["name"], g.actor,
                              description=body.get("description", ""),
                              retain_days=body.get("retain_days", feeds.DEFAULT_RETAIN_DAYS),
                              built_from=body.get("built_from", []))
    return json_response(found, 201, {"Location": f"/api/v1/feeds/{found['feed']}"})


@route("/feeds/<feed>", "GET", summary="A feed: every published schema, which are in flight, "
       "and who reads it", tag="contracts")
def show_feed(feed: str):
    return json_response(feeds.show_feed(catalogue(), path_name(feed, "feed")))


@route("/feeds/<feed>/schemas", "POST", action="feed.publish",
       summary="Publish the feed's next writer "
       "schema; refused (`refused`: true, nothing published) when a holder of an exclusive "
       "stage cannot read it, unless an approver gives `waiver_reason`", tag="contracts",
       body=PUBLISH_BODY)
def publish_feed_schema(feed: str):
    body = json_body(PUBLISH_BODY)
    return json_response(feeds.publish_feed_schema(
        catalogue(), path_name(feed, "feed"), _schema_text(body), g.actor,
        note=body.get("note", ""), waiver_reason=body.get("waiver_reason"), place="schema"))


@route("/feeds/<feed>/check", "POST", summary="Who could not read a proposed writer schema "
       "of the feed; changes nothing", tag="contracts", body=SCHEMA_BODY, is_read=True)
def check_feed_schema(feed: str):
    body = json_body(SCHEMA_BODY)
    return json_response(feeds.check_feed_schema(catalogue(), path_name(feed, "feed"),
                                                 _schema_text(body), place="schema"))


@route("/models/<model>/feed", "PUT", action="model.set-feed",
       summary="Declare the feed a model reads",
       tag="contracts", body=SET_FEED_BODY)
def set_model_feed(model: str):
    body = json_body(SET_FEED_BODY)
    return json_response(feeds.set_model_feed(catalogue(), path_name(model, "model"),
                                              path_name(body["feed"], "feed"), g.actor))


@route("/consumers", "GET", summary="Every declared consumer and its current reader schema",
       tag="contracts")
def list_consumers():
    return json_response(consumers.list_consumers(catalogue()))


@route("/consumers", "POST", action="consumer.add",
       summary="Declare a consumer of a model's output "
       "(publisher)", tag="contracts", body=ADD_CONSUMER_BODY, responses={201: "Created"})
def add_consumer():
    body = json_body(ADD_CONSUMER_BODY)
    found = consumers.add_consumer(catalogue(), body["name"], body["model"], _schema_text(body),
                                   g.actor, owner=body.get("owner", ""), place="schema")
    return json_response(found, 201, {"Location": f"/api/v1/consumers/{found['consumer']}"})


@route("/consumers/<consumer>", "GET", summary="A consumer and its reader schemas",
       tag="contracts")
def show_consumer(consumer: str):
    return json_response(consumers.show_consumer(catalogue(), path_name(consumer, "consumer")))


@route("/consumers/<consumer>", "DELETE", action="consumer.remove",
       summary="Remove a declared consumer",
       tag="contracts")
def remove_consumer(consumer: str):
    return json_response(consumers.remove_consumer(catalogue(), path_name(consumer, "consumer"),
                                                   g.actor))


@route("/consumers/<consumer>/schemas", "POST", action="consumer.update",
       summary="Record a consumer's "
       "next reader schema", tag="contracts", body=UPDATE_CONSUMER_BODY)
def update_consumer(consumer: str):
    body = json_body(UPDATE_CONSUMER_BODY)
    return json_response(consumers.update_consumer(
        catalogue(), path_name(consumer, "consumer"), _schema_text(body), g.actor,
        note=body.get("note", ""), place="schema"))


@route("/consumers/<consumer>/check", "POST", summary="The versions in each stage whose output "
       "a proposed reader schema could not read; changes nothing", tag="contracts",
       body=SCHEMA_BODY, is_read=True)
def check_consumer_schema(consumer: str):
    body = json_body(SCHEMA_BODY)
    return json_response(consumers.check_consumer_schema(
        catalogue(), path_name(consumer, "consumer"), _schema_text(body), place="schema"))


@route("/models/<model>/versions/<number:version>/impact", "GET", summary="What changes if "
       "the version enters a stage: feeds, consumers, features, metrics, slices, datasets",
       tag="contracts", query=IMPACT_QUERY)
def version_impact(model: str, version: int):
    unknown = sorted(set(request.args) - {"stage"})
    if unknown:
        raise ApiError(f"unknown query parameter(s) {', '.join(unknown)}; this operation takes "
                       "stage", kind="unknown-fields", status=400, place=unknown[0])
    stage = request.args.get("stage", "")
    return json_response(impact_of(catalogue(), path_name(model, "model"), version,
                                   path_name(stage, "stage")))
