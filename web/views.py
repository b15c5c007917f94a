"""The routes of the lineage browser: parse the request, call one page query, render it."""

from __future__ import annotations

import re

from flask import Response, abort, current_app, render_template, request

from registry.errors import UserError
from registry.names import NAME_PATTERN
from registry.service import queries, releases
from registry.service.lineage import normalise_node
from registry.service.queries.catalogue import DATASET_STATES, MODEL_STATES
from registry.store.page_reads import EventFilter
from web import blueprint, charts, graphics, timeline

# Deep enough that a source dataset's graph reaches the stages its versions hold:
# extract -> training set -> version -> stage.
DEFAULT_DEPTH = 4
PAGE_DEPTH_LIMIT = 8
MAX_DRAWN_NODES = 250  # beyond this a drawing helps nobody; the page lists the nodes instead
_NUMBER = re.compile(r"^[0-9]{1,9}$")
_ACTION = re.compile(r"^[a-z]{1,20}\.[a-z-]{1,20}$")
_DIGEST = re.compile(r"^[0-9a-f]{64}$")


def _catalogue():
    return current_app.extensions["lockkeeper"].catalogue()


def _name(value: str, what: str) -> str:
    """A name in a path that cannot exist is a page that does not exist."""
    if not NAME_PATTERN.fullmatch(value) or ".." in value:
        abort(404, description=f"no {what} named {value!r}")
    return value


def _query_number(name: str, *, low: int, high: int, default: int | None = None) -> int | None:
    values = request.args.getlist(name)
    if not values:
        return default
    if len(values) > 1 or not _NUMBER.fullmatch(values[0]) or not low <= int(values[0]) <= high:
        abort(400, description=f"the query parameter {name!r} must be one whole number "
                               f"from {low} to {high}")
    return int(values[0])


def _query_text(name: str, *, pattern: re.Pattern | None = None, default: str | None = None,
                limit: int = 300, choices: tuple[str, ...] | None = None) -> str | None:
    values = request.args.getlist(name)
    if not values:
        return default
    value = values[0]
    if (len(values) > 1 or len(value) > limit or "\x00" in value
            or (pattern and value and not pattern.fullmatch(value))
            or (choices is not None and value not in choices)):
        abort(400, description=f"the query parameter {name!r} is malformed")
    return value


@blueprint.app_template_global("picture_of")
def picture_of(distribution):
    return charts.picture(distribution)


@blueprint.route("/")
def catalogue():
    page = queries.catalogue_page(
        _catalogue(), name=_query_text("name", default="", limit=100) or "",
        model_state=_query_text("models", default="", choices=MODEL_STATES) or "",
        dataset_state=_query_text("datasets", default="", choices=DATASET_STATES) or "")
    return render_template("catalogue.html", page=page, model_states=MODEL_STATES,
                           dataset_states=DATASET_STATES)


@blueprint.route("/events")
def events():
    chosen = EventFilter(
        model=_query_text("model", pattern=NAME_PATTERN, default="") or "",
        dataset=_query_text("dataset", pattern=NAME_PATTERN, default="") or "",
        person=_query_text("person", pattern=NAME_PATTERN, default="") or "",
        action=_query_text("action", pattern=_ACTION, default="") or "")
    number = _query_number("page", low=1, high=10**6, default=1) or 1
    return render_template("events.html", page=queries.events_page(_catalogue(), chosen, number))


@blueprint.route("/models/<name>")
def model(name: str):
    page = queries.model_page(_catalogue(), _name(name, "model"))
    # A link to one report (a timeline mark, a refusal) names it, so it is drawn unfolded.
    opened = _query_number("report", low=1, high=10**9, default=None)
    return render_template("model.html", page=page, drawing=timeline.draw(page.timeline),
                           opened=opened)


@blueprint.route("/models/<name>/versions/<int:number>")
def version(name: str, number: int):
    page = queries.version_page(_catalogue(), _name(name, "model"), number)
    return render_template("version.html", page=page,
                           releases=releases.releases_of_version(_catalogue(), page.model,
                                                                 page.number))


@blueprint.route("/models/<name>/versions/<int:number>/impact")
def version_impact(name: str, number: int):
    from registry.service.impact import impact_of, ladder_of
    from web.impact import interval_chart

    name = _name(name, "model")
    ladder = ladder_of(_catalogue(), name)
    stage = _query_text("stage", pattern=NAME_PATTERN, default=ladder[-1])
    if stage not in ladder:
        abort(404, description=f"{name} has no stage {stage!r}")
    found = impact_of(_catalogue(), name, number, stage)
    return render_template("impact.html", impact=found, ladder=ladder,
                           chart=interval_chart(found["metrics"], found["slices"]))
@blueprint.route("/models/<name>/releases/<digest>.json")
def release_download(name: str, digest: str):
    """One release statement's envelope, byte for byte, as a download."""
    if not _DIGEST.fullmatch(digest):
        abort(404, description=f"no release statement {digest!r}")
    release = releases.release_by_digest(_catalogue(), _name(name, "model"), digest)
    file_name = f"{release.model}-v{release.version}-{release.stage}-{release.move}.release.json"
    return Response(release.envelope, mimetype=releases.ENVELOPE_MEDIA_TYPE,
                    headers={"Content-Disposition": f'attachment; filename="{file_name}"',
                             "ETag": f'"{release.digest}"'})


@blueprint.route("/models/<name>/compare")
def compare(name: str):
    name = _name(name, "model")
    a = _query_number("a", low=1, high=10**9 - 1)
    b = _query_number("b", low=1, high=10**9 - 1)
    if a is None or b is None:
        abort(400, description="choose two versions: /models/NAME/compare?a=N&b=M")
    return render_template("compare.html", page=queries.compare_page(_catalogue(), name, a, b))


@blueprint.route("/lineage")
def lineage():
    node = _query_text("node")
    if node is None:
        abort(400, description="say which node: /lineage?node=dataset/NAME")
    direction = _query_text("direction", choices=("up", "down", "both"), default="both")
    depth = _query_number("depth", low=0, high=PAGE_DEPTH_LIMIT, default=DEFAULT_DEPTH)
    try:
        normalise_node(node)
    except UserError as error:
        abort(400, description=error.one_line())
    page = queries.lineage_page(_catalogue(), node, direction or "both", depth)
    drawing = (graphics.layout(page.graph, page.held)
               if len(page.graph.nodes) <= MAX_DRAWN_NODES else None)
    return render_template("lineage.html", graph=page.graph, held=page.held, drawing=drawing,
                           direction=direction, depth=depth, depth_limit=PAGE_DEPTH_LIMIT,
                           drawn_limit=MAX_DRAWN_NODES)


@blueprint.route("/datasets/<name>")
def dataset(name: str):
    name = _name(name, "dataset")
    against = _query_text("against", pattern=NAME_PATTERN)
    if against == "":
        against = None
    page = queries.dataset_page(_catalogue(), name, against)
    return render_template("dataset.html", page=page)
