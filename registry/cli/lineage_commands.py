"""Commands on lineage: `lineage NODE --up|--down`, and `recall` for the dataset group."""

from __future__ import annotations

import json
import re

import click

from registry.cli.catalogue_commands import _client
from registry.cli.output import emit, json_option
from registry.errors import UserError
from registry.service.lineage import MAX_DEPTH

_VERSION_NODE = re.compile(r"model/([^/]+)/version/([0-9]+)")


def shown(node_id: str) -> str:
    """A node as text prints it: versions as everywhere else (`main-burst-risk v2`)."""
    match = _VERSION_NODE.fullmatch(node_id)
    return f"{match.group(1)} v{match.group(2)}" if match else node_id


def _render_graph(graph: dict) -> str:
    way = {"up": "upstream of", "down": "downstream of", "both": "around"}[graph["direction"]]
    depth_limit = graph.get("depth")
    lines = [f"{way} {shown(graph['root'])}" + (f" (depth {depth_limit})" if depth_limit is not None
                                         else "")]
    for node in graph["nodes"]:
        if node["id"] == graph["root"]:
            continue
        marks = [word for word, on in (
            ("RECALLED", node["recalled"]), ("flagged", node["flagged"] and not node["recalled"]),
            ("formerly", node["kind"] == "stage" and not node.get("current", True))) if on]
        depth = f"{node['depth']:>3}  " if node.get("depth") is not None else "  "
        lines.append(f"  {depth}{shown(node['id'])}" + (f"  [{', '.join(marks)}]" if marks else ""))
    if len(lines) == 1:
        lines.append("  nothing")
    if graph["edges"]:
        lines.append("edges:")
        lines.extend(f"  {shown(e['source'])}  {e['relation']}  {shown(e['target'])}"
                     for e in graph["edges"])
    return "\n".join(lines)


@click.command()
@click.argument("node")
@click.option("--up", "walk_up", is_flag=True, help="What went into NODE.")
@click.option("--down", "walk_down", is_flag=True, help="What came of NODE (both: the two ways).")
@click.option("--depth", type=click.IntRange(0, MAX_DEPTH), default=None,
              help="Follow at most this many edges (default: all).")
@click.option("--format", "output_format", type=click.Choice(["text", "json", "prov-json"]),
              default=None, help="text (default), json, or W3C PROV-JSON.")
@json_option
def lineage(node: str, walk_up: bool, walk_down: bool, depth: int | None,
            output_format: str | None, as_json: bool) -> None:
    """The lineage of NODE: dataset/NAME (or NAME), MODEL@N, model/M/version/N, model/M/stage/S."""
    if not (walk_up or walk_down):
        raise UserError("say which way to walk: --up (what went in), --down (what came of it) "
                        "or both", place="--up/--down")
    direction = "both" if walk_up and walk_down else "up" if walk_up else "down"
    if as_json and output_format not in (None, "json"):
        raise UserError(f"--json and --format {output_format} ask for different documents; "
                        "give one of them", place="--format")
    output_format = output_format or ("json" if as_json else "text")
    document = _client().lineage(node, direction, depth=depth,
                                 output_format="prov-json" if output_format == "prov-json"
                                 else "json")
    if output_format == "prov-json":
        click.echo(json.dumps(document.to_json(), indent=2, sort_keys=True))
    else:
        emit(document, output_format == "json", _render_graph)


def _render_recall(outcome: dict) -> str:
    lines = [f"recalled {outcome['dataset']}: {outcome['reason']}"]
    if outcome["downstream_datasets"]:
        lines.append("downstream datasets, flagged:")
        lines.extend(f"  {name}" for name in outcome["downstream_datasets"])
    if outcome["downstream_versions"]:
        lines.append("downstream versions, flagged and blocked from promotion:")
        for v in outcome["downstream_versions"]:
            held = f"  [{', '.join(v['stages'])}]" if v["stages"] else ""
            lines.append(f"  {v['model']} v{v['version']}{held}")
    if outcome.get("flagged_feeds"):
        lines.append("feeds built from it, flagged: " + ", ".join(outcome["flagged_feeds"]))
        for v in outcome.get("feed_readers", []):
            held = f"  [{', '.join(v['stages'])}]" if v["stages"] else ""
            lines.append(f"  read by {v['model']} v{v['version']}{held}")
    if outcome.get("flagged_consumers"):
        lines.append("consumers downstream, flagged: " + ", ".join(outcome["flagged_consumers"]))
    if outcome["holding_stages"]:
        lines.append("act on these now (they hold a stage):")
        lines.extend(f"  {s['model']} v{s['version']} in {s['stage']}"
                     for s in outcome["holding_stages"])
    else:
        lines.append("no flagged version holds a stage")
    return "\n".join(lines)


@click.command("recall")
@click.argument("name")
@click.option("--reason", required=True, help="Why the dataset is bad: what someone must know.")
@json_option
def recall_command(name: str, reason: str, as_json: bool) -> None:
    """Recall dataset NAME: flag everything downstream and block it from promotion."""
    emit(_client().recall(name, reason), as_json, _render_recall)
