"""Feeds as contracts: create a feed, publish numbered writer schemas, check a proposed one
against every version that holds a stage and reads the feed, and declare the feed a model reads.

Publishing runs the same check as `feed check` and refuses a schema that a holder of an exclusive
stage cannot read, unless an approver waives the refusal with a reason (recorded in the audit
log). The verdicts are Avro Schema Resolution's, from registry.schema.
"""

from __future__ import annotations

import json
from collections.abc import Sequence
from datetime import UTC, datetime
from typing import Any

from registry import schema as avro
from registry.errors import AlreadyExists, NotFound, UserError
from registry.gates.feed_contract import HolderReading, judge_feed_schema
from registry.names import check_name
from registry.node_ids import contract_id, model_id
from registry.service import evidence_sources as sources
from registry.service.actors import Actor
from registry.service.authorisation import authorise
from registry.service.models import find_model
from registry.store import tables as t
from registry.store.catalogue import Catalogue
from registry.store.unit_of_work import UnitOfWork, utc_now

DEFAULT_RETAIN_DAYS = 7
LONGEST_RETAIN_DAYS = 3650


def check_retain_days(value: Any) -> int:
    """A retention window is a positive whole number of days."""
    whole = isinstance(value, int) and not isinstance(value, bool)
    if not whole or not 1 <= value <= LONGEST_RETAIN_DAYS:
        raise UserError(f"the retention must be a whole number of days from 1 to "
                        f"{LONGEST_RETAIN_DAYS}, not {value!r}", place="--retain-days")
    return value


def read_schema(text: str, *, place: str) -> tuple[avro.Schema, str, str]:
    """Parse a schema (an invalid one is a user error naming its place); return it with its
    normalised JSON and the SHA-256 fingerprint of its Parsing Canonical Form."""
    parsed = avro.load(text, source=place)
    normalised = json.dumps(json.loads(text), sort_keys=True, separators=(",", ":"))
    return parsed, normalised, avro.fingerprint(parsed).sha256


def find_feed(uow: UnitOfWork, name: str, *, place: str = "feed") -> t.Feed:
    check_name(name, what="feed")
    feed = uow.feeds.named(name)
    if feed is None:
        raise NotFound(f"unknown feed {name!r}; create it with `lockkeeper feed create`",
                       place=place)
    return feed


def _iso(moment: datetime) -> str:
    return (moment if moment.tzinfo else moment.replace(tzinfo=UTC)).isoformat()


def _schema_entry(schema: t.FeedSchema, flying: set[int]) -> dict[str, Any]:
    return {"feed_version": schema.number, "fingerprint": schema.fingerprint,
            "note": schema.note, "published_at": _iso(schema.published_at),
            "published_by": schema.published_by, "in_flight": schema.number in flying,
            "schema": json.loads(schema.schema_json)}


def _describe(uow: UnitOfWork, feed: t.Feed, *, with_schemas: bool) -> dict[str, Any]:
    schemas = uow.feeds.schemas(feed)
    flying = {s.number for s in sources.in_flight(schemas, feed.retain_days, datetime.now(UTC))}
    readers = sorted({(h.model, h.version, h.stage) for h in uow.feeds.reading_holders(feed)})
    document = {"feed": feed.name, "description": feed.description,
                "retain_days": feed.retain_days, "created_at": _iso(feed.created_at),
                "created_by": feed.created_by, "built_from": uow.feeds.source_names(feed),
                "current_version": schemas[-1].number if schemas else None,
                "in_flight": sorted(flying),
                "readers": [{"model": m, "version": v, "stage": s} for m, v, s in readers]}
    if with_schemas:
        document["versions"] = [_schema_entry(s, flying) for s in schemas]
    return document


def create_feed(catalogue: Catalogue, name: str, actor: Actor, *, description: str = "",
                retain_days: int = DEFAULT_RETAIN_DAYS, built_from: Sequence[str] = ()
                ) -> dict[str, Any]:
    """A new feed with no schema yet; `built_from` names the datasets its records come from."""
    check_name(name, what="feed")
    retain_days = check_retain_days(retain_days)
    with UnitOfWork(catalogue) as uow:
        authorise(uow, actor, "feed.create")
        if uow.feeds.named(name) is not None:
            raise AlreadyExists(f"a feed named {name!r} already exists", place="feed")
        datasets = []
        for dataset_name in built_from:
            dataset = uow.feeds.dataset_named(dataset_name)
            if dataset is None:
                raise NotFound(f"unknown dataset {dataset_name!r} named as a source of the feed",
                               place="--built-from")
            datasets.append(dataset)
        feed = uow.feeds.add(t.Feed(name=name, description=description, retain_days=retain_days,
                                    created_at=utc_now(), created_by=actor.name))
        uow.feeds.add_sources(feed, datasets)
        uow.audit.append(actor.name, "feed.create", contract_id("feed", name),
                         {"description": description, "retain_days": retain_days,
                          "built_from": sorted(d.name for d in datasets)})
        document = _describe(uow, feed, with_schemas=False)
        uow.commit()
        return document


def show_feed(catalogue: Catalogue, name: str) -> dict[str, Any]:
    with UnitOfWork(catalogue, write=False) as uow:
        return _describe(uow, find_feed(uow, name), with_schemas=True)


def list_feeds(catalogue: Catalogue) -> dict[str, Any]:
    with UnitOfWork(catalogue, write=False) as uow:
        return {"feeds": [_describe(uow, feed, with_schemas=False) for feed in uow.feeds.every()]}


def _readings(uow: UnitOfWork, feed: t.Feed, proposed: avro.Schema) -> list[HolderReading]:
    """Every version reading the feed and holding a stage, resolving the proposed schema."""
    holders = uow.feeds.reading_holders(feed)
    samples = uow.feeds.live_samples({h.model_id for h in holders})
    profiles = {line_id: sources.sample_profile(uow, sample)
                for line_id, sample in samples.items()}
    # One resolution per distinct reader schema; each parsed schema is dropped as soon as it is
    # resolved, so a thousand of them never sit in memory together.
    verdicts: dict[str, avro.Resolution] = {}
    readings = []
    for holder in holders:
        resolution = verdicts.get(holder.input_schema_json)
        if resolution is None:
            reader = avro.parse(json.loads(holder.input_schema_json))
            resolution = verdicts[holder.input_schema_json] = avro.resolve(reader, proposed)
        readings.append(HolderReading(
            model=holder.model, version=holder.version, stage=holder.stage,
            is_exclusive=holder.is_exclusive, compatible=resolution.compatible,
            problems=sources.problems_of(resolution), notes=sources.notes_of(resolution),
            live_sample=profiles.get(holder.model_id)))
    return readings


def check_feed_schema(catalogue: Catalogue, name: str, schema_text: str,
                      place: str = "NEW_SCHEMA") -> dict[str, Any]:
    """Who could not read `schema_text` if the feed's producer published it; changes nothing."""
    proposed, _, fingerprint = read_schema(schema_text, place=place)
    with UnitOfWork(catalogue, write=False) as uow:
        feed = find_feed(uow, name)
        same = uow.feeds.schema_with_fingerprint(feed, fingerprint)
        number = uow.feeds.next_schema_number(feed)
        verdict = judge_feed_schema(feed.name, number, _readings(uow, feed, proposed))
        return {**verdict, "fingerprint": fingerprint,
                "identical_to": same.number if same is not None else None}


def publish_feed_schema(catalogue: Catalogue, name: str, schema_text: str, actor: Actor, *,
                        note: str = "", waiver_reason: str | None = None,
                        place: str = "SCHEMA") -> dict[str, Any]:
    """Publish the feed's next writer schema, numbered and immutable, if every holder of an
    exclusive stage reads it, or an approver waives the refusal with a reason. Publishing the
    schema that is already current changes nothing and says so."""
    proposed, normalised, fingerprint = read_schema(schema_text, place=place)
    if waiver_reason is not None and not waiver_reason.strip():
        raise UserError("a waiver needs a reason a person can act on", place="--reason")
    with UnitOfWork(catalogue) as uow:
        # The approver who waives a refusal publishes; otherwise the feed's publisher does.
        authorise(uow, actor, "feed.waive" if waiver_reason is not None else "feed.publish",
                  place="--waive" if waiver_reason is not None else "role")
        feed = find_feed(uow, name)
        schemas = uow.feeds.schemas(feed)
        if schemas and schemas[-1].fingerprint == fingerprint:
            current = schemas[-1]
            return {"feed": feed.name, "feed_version": current.number, "published": False,
                    "refused": False, "fingerprint": fingerprint,
                    "summary": f"identical to {feed.name} v{current.number}, the current "
                               "schema: nothing was published", "check": None, "waiver": None}
        number = uow.feeds.next_schema_number(feed)
        verdict = judge_feed_schema(feed.name, number, _readings(uow, feed, proposed))
        waiver = None
        if waiver_reason is not None:
            waiver = {"approver": actor.name, "reason": waiver_reason.strip(),
                      "used": not verdict["passed"]}
        publish = verdict["passed"] or waiver is not None
        subject = contract_id("feed", feed.name)
        if not publish:
            uow.audit.append(actor.name, "feed.refuse", subject,
                             {"feed_version": number, "fingerprint": fingerprint,
                              "summary": verdict["summary"], "blocking": verdict["blocking"]})
            uow.commit()
            return {"feed": feed.name, "feed_version": None, "published": False,
                    "refused": True, "fingerprint": fingerprint,
                    "summary": f"REFUSED: {verdict['summary']}", "check": verdict,
                    "waiver": None}
        uow.feeds.add_schema(t.FeedSchema(feed_id=feed.id, number=number, schema_json=normalised,
                                          fingerprint=fingerprint, note=note,
                                          published_at=utc_now(), published_by=actor.name))
        uow.audit.append(actor.name, "feed.publish", subject,
                         {"feed_version": number, "fingerprint": fingerprint, "note": note,
                          "passed": verdict["passed"], "blocking": verdict["blocking"],
                          "waiver": waiver})
        uow.commit()
        summary = f"published {feed.name} v{number}"
        if not verdict["passed"]:
            summary += f" with a waiver by {actor.name}: {verdict['summary']}"
        return {"feed": feed.name, "feed_version": number, "published": True, "refused": False,
                "fingerprint": fingerprint, "summary": summary, "check": verdict,
                "waiver": waiver}


def set_model_feed(catalogue: Catalogue, model: str, feed_name: str, actor: Actor
                   ) -> dict[str, Any]:
    """Declare the feed a model reads (a version's manifest may still name its own)."""
    with UnitOfWork(catalogue) as uow:
        authorise(uow, actor, "model.set-feed")
        line = find_model(uow, model)
        feed = find_feed(uow, feed_name)
        before = uow.feeds.of_model(line)
        if before is None or before.id != feed.id:
            uow.feeds.set_for_model(line, feed)
            uow.audit.append(actor.name, "model.set-feed", model_id(line.name),
                             {"feed": feed.name,
                              "previous_feed": before.name if before is not None else None})
        uow.commit()
        return {"model": line.name, "feed": feed.name,
                "changed": before is None or before.id != feed.id}
