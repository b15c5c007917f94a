"""The routes of the lineage browser: parse the request, read one page's data, render it."""

from __future__ import annotations

import re
from typing import Any, overload

from flask import abort, current_app, render_template, request

from registry.errors import UserError
from registry.names import NAME_PATTERN
from registry.service import lineage as lineage_service
from registry.store.unit_of_work import UnitOfWork
from web import blueprint, comparisons, graphics, pages, schemas

DEFAULT_DEPTH = 2
PAGE_DEPTH_LIMIT = 8
MAX_DRAWN_NODES = 250  # beyond this a drawing helps nobody; the page lists the nodes instead
_NUMBER = re.compile(r"^[0-9]{1,9}$")


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


@overload
def _query_text(name: str, *, pattern: re.Pattern | None = None, default: str,
                limit: int = 300) -> str: ...


@overload
def _query_text(name: str, *, pattern: re.Pattern | None = None, default: None = None,
                limit: int = 300) -> str | None: ...


def _query_text(name: str, *, pattern: re.Pattern | None = None, default: str | None = None,
                limit: int = 300) -> str | None:
    values = request.args.getlist(name)
    if not values:
        return default
    value = values[0]
    if len(values) > 1 or len(value) > limit or (pattern and not pattern.fullmatch(value)):
        abort(400, description=f"the query parameter {name!r} is malformed")
    return value


@blueprint.app_template_filter("plain_number")
def plain_number(value: Any) -> str:
    if isinstance(value, bool) or value is None:
        return "—" if value is None else str(value)
    if isinstance(value, float):
        return f"{value:.4g}" if value == value else "NaN"
    return str(value)


@blueprint.app_template_filter("signed")
def signed(value: Any) -> str:
    if not isinstance(value, (int, float)) or isinstance(value, bool):
        return "—"
    return f"{value:+.4g}"


@blueprint.app_template_global("evidence_kind")
def evidence_kind(value: Any) -> str:
    if isinstance(value, dict):
        return "mapping"
    if isinstance(value, (list, tuple)):
        return "list"
    return "scalar"


@blueprint.route("/")
def catalogue():
    return render_template("catalogue.html", page=pages.catalogue_page(_catalogue()))


@blueprint.route("/models/<name>")
def model(name: str):
    page = pages.model_page(_catalogue(), _name(name, "model"))
    return render_template("model.html", page=page)


@blueprint.route("/models/<name>/versions/<int:number>")
def version(name: str, number: int):
    page = pages.version_page(_catalogue(), _name(name, "model"), number)
    return render_template("version.html", page=page,
                           input_tree=schemas.schema_tree(page.input_schema),
                           output_tree=schemas.schema_tree(page.output_schema),
                           features=schemas.feature_rows(page.features))


@blueprint.route("/models/<name>/compare")
def compare(name: str):
    name = _name(name, "model")
    a = _query_number("a", low=1, high=10**9 - 1)
    b = _query_number("b", low=1, high=10**9 - 1)
    if a is None or b is None:
        abort(400, description="choose two versions: /models/NAME/compare?a=N&b=M")
    first, second = pages.versions_for_comparison(_catalogue(), name, a, b)
    return render_template(
        "compare.html", a=first, b=second,
        input_diff=schemas.compare_schemas(first.input_schema, second.input_schema),
        output_diff=schemas.compare_schemas(first.output_schema, second.output_schema),
        feature_diff=schemas.compare_features(first.features, second.features,
                                              first.input_schema, second.input_schema),
        metrics=comparisons.metric_differences(first, second))


@blueprint.route("/lineage")
def lineage():
    node = _query_text("node")
    if node is None:
        abort(400, description="say which node: /lineage?node=dataset/NAME")
    direction = _query_text("direction", pattern=re.compile(r"^(up|down|both)$"), default="both")
    depth = _query_number("depth", low=0, high=PAGE_DEPTH_LIMIT, default=DEFAULT_DEPTH)
    try:
        canonical = lineage_service.normalise_node(node)
    except UserError as error:
        abort(400, description=error.one_line())
    with UnitOfWork(_catalogue(), write=False) as uow:
        graph = lineage_service.graph_in(uow, canonical, direction, depth)
    drawing = graphics.layout(graph) if len(graph.nodes) <= MAX_DRAWN_NODES else None
    return render_template("lineage.html", graph=graph, drawing=drawing, direction=direction,
                           depth=depth, depth_limit=PAGE_DEPTH_LIMIT, drawn_limit=MAX_DRAWN_NODES)


@blueprint.route("/datasets/<name>")
def dataset(name: str):
    name = _name(name, "dataset")
    against = _query_text("against", pattern=NAME_PATTERN)
    page = pages.dataset_page(_catalogue(), name)
    drift = None
    if against:
        if against == name:
            abort(400, description="compare a dataset with another one, not with itself")
        other = pages.dataset_fingerprint(_catalogue(), against)
        drift = comparisons.drift_between(page.fingerprint, other)
    profile = page.fingerprint.get("profile") if isinstance(page.fingerprint, dict) else None
    columns = []
    if isinstance(profile, dict):
        for column, facts in profile.items():
            facts = facts if isinstance(facts, dict) else {}
            chart = graphics.histogram_chart(facts.get("histogram"))
            categories = None
            if chart is None:
                for key in ("symbols", "categories"):
                    stored = facts.get(key)
                    # Category counts are stored as {"counts": {...}, "total", "cap", ...}.
                    if isinstance(stored, dict) and isinstance(stored.get("counts"), dict):
                        stored = stored["counts"]
                    categories = graphics.category_chart(stored)
                    if categories:
                        break
            scalars = [(k, v) for k, v in facts.items()
                       if k in ("type", "count", "nulls", "min", "max", "mean", "variance",
                                "distinct", "non_finite")]
            columns.append((str(column), scalars, chart, categories))
    return render_template("dataset.html", page=page, columns=columns, against=against,
                           drift=drift, profile_present=isinstance(profile, dict))


blueprint.app_template_global("schema_tree_of")(schemas.schema_tree)
