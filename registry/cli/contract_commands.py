"""Commands on contracts: `feed` (the stream a model reads), `consumer` (declared readers of a
model's output), `model set-feed`, and `impact` (what changes if a version enters a stage)."""

from __future__ import annotations

import click

from registry.cli.catalogue_commands import _client, read_text
from registry.cli.output import emit, json_option
from registry.errors import UserError


def _fail_unless(passed: bool) -> None:
    if not passed:
        click.get_current_context().exit(1)


# --- feed ----------------------------------------------------------------------------------

@click.group()
def feed() -> None:
    """Feeds as contracts: numbered writer schemas and a retention window."""


def _render_feed(d: dict) -> str:
    current = f"v{d['current_version']}" if d.get("current_version") else "no schema yet"
    lines = [f"feed {d['feed']}  {current}  keeps records {d['retain_days']} day(s)"]
    if d.get("description"):
        lines.append(f"  {d['description']}")
    if d.get("built_from"):
        lines.append(f"  built from: {', '.join(d['built_from'])}")
    if d.get("in_flight"):
        lines.append(f"  in flight: {', '.join(f'v{n}' for n in d['in_flight'])}")
    for version in d.get("versions", []):
        lines.append(f"  v{version['feed_version']}  {version['published_at'][:19]}  by "
                     f"{version['published_by']}  {version['fingerprint'][:12]}"
                     + (f"  {version['note']}" if version["note"] else ""))
    readers = d.get("readers", [])
    lines.append("  read by: " + (", ".join(f"{r['model']} v{r['version']} ({r['stage']})"
                                           for r in readers) or "no version holding a stage"))
    return "\n".join(lines)


@feed.command("create")
@click.argument("name")
@click.option("--description", default="", help="What the feed carries and who writes it.")
@click.option("--retain-days", type=int, default=7, show_default=True,
              help="How many days records stay in flight (queued) after their schema is "
                   "superseded.")
@click.option("--built-from", "built_from", multiple=True, metavar="DATASET",
              help="A registered dataset the feed's records are made from (repeatable).")
@json_option
def feed_create(name: str, description: str, retain_days: int, built_from, as_json: bool) -> None:
    """Create the feed NAME (no schema yet: publish one next)."""
    found = _client().create_feed(name, description=description, retain_days=retain_days,
                                  built_from=built_from)
    emit(found, as_json, lambda d: f"created {_render_feed(d)}")


def _live_text(live: dict) -> str:
    if live["counted"] == "every record":
        return f"every one of its {live['rows']} rows would fail ({live['status']})"
    count = "an unknown number of" if live["occurrences"] is None else live["occurrences"]
    return (f"{live['counted']} occurs in {count} of {live['rows']} rows "
            f"({live['status']})")


def _render_verdict(d: dict, refused: str = "REFUSED") -> str:
    lines = [("PASSES" if d["passed"] else refused) + f": {d['summary']}"]
    for holder in d["holders"]:
        mark = "reads" if holder["reads"] else "CANNOT READ"
        kind = "exclusive" if holder["exclusive"] else "shared"
        lines.append(f"  {holder['model']} v{holder['version']}  {holder['stage']} ({kind})  "
                     f"{mark}")
        for problem in holder["problems"]:
            lines.append(f"    {problem['path']}: {problem['message']}")
            live = problem.get("live")
            if live:
                lines.append(f"      live sample {live['dataset']}: {_live_text(live)}")
    return "\n".join(lines)


@feed.command("publish")
@click.argument("name")
@click.argument("schema_path", metavar="SCHEMA.avsc", type=click.Path(dir_okay=False))
@click.option("--note", default="", help="What changed, for the readers.")
@click.option("--waive", "waive", is_flag=True,
              help="Publish even though a holder of an exclusive stage cannot read it "
                   "(approvers only; needs --reason).")
@click.option("--reason", default=None, metavar="TEXT", help="Why the refusal is waived.")
@json_option
def feed_publish(name: str, schema_path: str, note: str, waive: bool, reason: str | None,
                 as_json: bool) -> None:
    """Publish the feed's next writer schema, if every holder of an exclusive stage reads it."""
    if waive and not (reason or "").strip():
        raise UserError("a waiver needs a reason: add --reason TEXT", place="--waive")
    if reason is not None and not waive:
        raise UserError("--reason goes with --waive", place="--reason")
    text = read_text(schema_path, what="SCHEMA")
    outcome = _client().publish_feed_schema(name, text, note=note,
                                            waiver_reason=reason if waive else None,
                                            place=schema_path)

    def render(d: dict) -> str:
        if d["refused"]:
            return _render_verdict(d["check"])
        return d["summary"] + ("\n" + _render_verdict(d["check"]) if d.get("check") else "")

    emit(outcome, as_json, render)
    _fail_unless(not outcome.refused)


@feed.command("check")
@click.argument("name")
@click.argument("schema_path", metavar="NEW_SCHEMA.avsc", type=click.Path(dir_okay=False))
@json_option
def feed_check(name: str, schema_path: str, as_json: bool) -> None:
    """Who could not read NEW_SCHEMA if it were published: every version holding a stage that
    reads the feed, exclusive stages first. Changes nothing."""
    text = read_text(schema_path, what="NEW_SCHEMA")
    verdict = _client().check_feed_schema(name, text, place=schema_path)
    emit(verdict, as_json, lambda d: _render_verdict(d, "WOULD BE REFUSED"))
    _fail_unless(verdict.passed)


@feed.command("show")
@click.argument("name")
@json_option
def feed_show(name: str, as_json: bool) -> None:
    """A feed with every published schema, which are in flight, and who reads it."""
    emit(_client().show_feed(name), as_json, _render_feed)


@feed.command("list")
@json_option
def feed_list(as_json: bool) -> None:
    """Every feed with its current schema version."""
    emit(_client().list_feeds(), as_json,
         lambda d: "\n".join(_render_feed(f) for f in d["feeds"]) or "no feeds")


@click.command("set-feed")
@click.argument("model_name", metavar="MODEL")
@click.argument("feed_name", metavar="FEED")
@json_option
def model_set_feed(model_name: str, feed_name: str, as_json: bool) -> None:
    """Declare that MODEL reads FEED (a version's manifest may name its own `feed`)."""
    outcome = _client().set_model_feed(model_name, feed_name)
    emit(outcome, as_json, lambda d: f"{d['model']} reads feed {d['feed']}"
                                     + ("" if d["changed"] else " (unchanged)"))


# --- consumer ------------------------------------------------------------------------------

@click.group()
def consumer() -> None:
    """Declared readers of a model's output, with numbered reader schemas."""


def _render_consumer(d: dict) -> str:
    owner = f"  owner {d['owner']}" if d.get("owner") else ""
    return (f"consumer {d['consumer']} reads {d['model']} with reader schema "
            f"v{d['schema_version']}{owner}")


@consumer.command("add")
@click.argument("name")
@click.option("--reads", "model_name", required=True, metavar="MODEL",
              help="The model whose output it reads.")
@click.option("--schema", "schema_path", required=True, type=click.Path(dir_okay=False),
              metavar="READER.avsc", help="The Avro schema it reads the output with.")
@click.option("--owner", default="", metavar="TEXT", help="Who runs it.")
@json_option
def consumer_add(name: str, model_name: str, schema_path: str, owner: str, as_json: bool) -> None:
    """Declare the consumer NAME of a model's output."""
    text = read_text(schema_path, what="--schema")
    found = _client().add_consumer(name, model_name, text, owner=owner, place=schema_path)
    emit(found, as_json, lambda d: f"declared {_render_consumer(d)}")


@consumer.command("update")
@click.argument("name")
@click.option("--schema", "schema_path", required=True, type=click.Path(dir_okay=False),
              metavar="READER.avsc", help="Its new reader schema.")
@click.option("--note", default="", help="What changed.")
@json_option
def consumer_update(name: str, schema_path: str, note: str, as_json: bool) -> None:
    """Record the consumer's next reader schema."""
    text = read_text(schema_path, what="--schema")
    found = _client().update_consumer(name, text, note=note, place=schema_path)
    emit(found, as_json, lambda d: (_render_consumer(d) if d["changed"] else d["summary"]))


@consumer.command("remove")
@click.argument("name")
@json_option
def consumer_remove(name: str, as_json: bool) -> None:
    """Remove a declared consumer (the audit log keeps what it was)."""
    found = _client().remove_consumer(name)
    emit(found, as_json, lambda d: f"removed consumer {d['consumer']} of {d['model']}")


@consumer.command("list")
@json_option
def consumer_list(as_json: bool) -> None:
    """Every declared consumer with the model it reads and its current reader schema."""
    found = _client().list_consumers()
    emit(found, as_json, lambda d: "\n".join(_render_consumer(c) for c in d["consumers"])
         or "no consumers declared")


@consumer.command("check")
@click.argument("name")
@click.argument("schema_path", metavar="NEW_READER.avsc", type=click.Path(dir_okay=False))
@json_option
def consumer_check(name: str, schema_path: str, as_json: bool) -> None:
    """The versions in each stage whose output NEW_READER could not read. Changes nothing."""
    text = read_text(schema_path, what="NEW_READER")
    verdict = _client().check_consumer_schema(name, text, place=schema_path)

    def render(d: dict) -> str:
        lines = [("PASSES" if d["passed"] else "BREAKS") + f": {d['summary']}"]
        for stage in d["stages"]:
            for version in stage["versions"]:
                mark = "reads" if version["reads"] else "CANNOT READ"
                lines.append(f"  {stage['stage']}  v{version['version']}  {mark}")
                lines.extend(f"    {p['path']}: {p['message']}" for p in version["problems"])
        return "\n".join(lines)

    emit(verdict, as_json, render)
    _fail_unless(verdict.passed)


# --- impact --------------------------------------------------------------------------------

def render_impact(d: dict) -> str:
    incumbent = f"v{d['incumbent']}" if d["incumbent"] else "no version"
    lines = [f"what changes if {d['model']} v{d['version']} goes to {d['stage']} "
             f"(now {incumbent})"]
    lines.append("feeds:")
    lines += [f"  {f['feed']} v{f['feed_version']}: "
              + ("reads" if f["compatible"] else "CANNOT READ")
              + "".join(f"\n    {p['path']}: {p['message']}" for p in f["problems"])
              for f in d["feeds"]] or ["  no declared feed"]
    lines.append("consumers:")
    lines += [f"  {c['consumer']} (reader v{c['schema_version']}): "
              + ("reads" if c["compatible"] else "CANNOT READ")
              + "".join(f"\n    {p['path']}: {p['message']}" for p in c["problems"])
              for c in d["consumers"]] or ["  no declared consumer"]
    lines.append("features:")
    lines += [f"  {f['field']}: {f['message']} ({f['classification']})"
              for f in d["features"]] or ["  no change of meaning"]
    lines.append("metrics:")
    lines += [f"  {m['metric']}: {m['difference']:+.4f} [{m['ci_low']:+.4f}, {m['ci_high']:+.4f}]"
              f" {m['moves']}" for m in d["metrics"]] or ["  nothing compared"]
    lines.append("slices that move:")
    lines += [f"  {s['column']}={s['value']} {s['metric']}: {s['difference']:+.4f} "
              f"[{s['ci_low']:+.4f}, {s['ci_high']:+.4f}] {s['moves']}"
              for s in d["slices"]] or ["  none"]
    lines.append("datasets newly relied on:")
    lines += [f"  {x['dataset']} ({x['relation']})" + (" RECALLED" if x["recalled"] else "")
              for x in d["datasets"]] or ["  none"]
    return "\n".join(lines)


def model_and_version(model_name: str, version: str | None) -> tuple[str, int]:
    """MODEL N, MODEL vN or MODEL@N (DESIGN.md: how a version is named)."""
    if "@" in model_name:
        if version is not None:
            raise UserError("name the version once: MODEL@N or MODEL N", place="VERSION")
        model_name, version = model_name.split("@", 1)
    text = (version or "").removeprefix("v")
    if not text.isdigit() or not 1 <= int(text) < 2**31:
        raise UserError(f"not a version number: {version!r}; use N, vN or MODEL@N",
                        place="VERSION")
    return model_name, int(text)


@click.command()
@click.argument("model_name", metavar="MODEL")
@click.argument("version", required=False)
@click.option("--to", "stage", required=True, help="The stage the version would enter.")
@json_option
def impact(model_name: str, version: str | None, stage: str, as_json: bool) -> None:
    """What changes if VERSION enters STAGE: feeds, consumers, features, metrics, slices and
    datasets. Changes nothing. VERSION is N or vN; MODEL@N names both."""
    model_name, number = model_and_version(model_name, version)
    emit(_client().impact(model_name, number, stage), as_json, render_impact)


