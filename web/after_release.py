"""The "after release" page of a model: drift, live quality and shadow agreement over time.

Page data comes from the page query (registry/service/queries/after_release.py); the charts are
plain geometry (points, bands, ticks) that the template draws as SVG, with a table of the same
figures beneath each chart. The states of each version also reach the model and front pages
through the template global `after_release_states`.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

from flask import current_app, render_template

from registry.errors import LockkeeperError
from registry.service import queries
from registry.service.queries.after_release import AfterReleaseEvidence
from web import blueprint

WIDTH, HEIGHT = 720, 260
LEFT, RIGHT, TOP, BOTTOM = 56, 150, 14, 40
PSI_WARN, PSI_ALARM = 0.1, 0.25


@dataclass(frozen=True)
class Series:
    name: str
    points: str  # SVG polyline points
    css: str
    label_y: float
    markers: tuple[tuple[float, float, str], ...] = ()
    show_label: bool = True


@dataclass(frozen=True)
class Band:
    y_top: float
    y_bottom: float
    css: str
    label: str


@dataclass(frozen=True)
class Rule:
    y: float
    css: str
    label: str


@dataclass(frozen=True)
class TimeChart:
    title: str
    caption: str
    y_label: str
    x_ticks: tuple[tuple[float, str], ...]
    y_ticks: tuple[tuple[float, str], ...]
    series: tuple[Series, ...] = ()
    bands: tuple[Band, ...] = ()
    rules: tuple[Rule, ...] = ()
    areas: tuple[tuple[str, str, str], ...] = ()  # (polygon points, css, title)
    width: int = WIDTH
    height: int = HEIGHT
    left: int = LEFT
    top: int = TOP
    plot_width: int = WIDTH - LEFT - RIGHT
    plot_height: int = HEIGHT - TOP - BOTTOM


@dataclass(frozen=True)
class VersionSection:
    version: int
    state: str
    reasons: list[str]
    rows: int
    drift_chart: TimeChart | None
    drift_table: list[dict[str, Any]]
    quality_chart: TimeChart | None
    quality_table: list[dict[str, Any]]
    agreement_chart: TimeChart | None
    agreement_table: list[dict[str, Any]]
    features: list[str] = field(default_factory=list)


@dataclass(frozen=True)
class AfterReleasePage:
    evidence: AfterReleaseEvidence  # the page query's figures
    versions: list[VersionSection]  # and the charts drawn from them


def _scale(low: float, high: float, pixels: float, flip: bool = False):
    span = (high - low) or 1.0

    def to_pixels(value: float) -> float:
        share = (value - low) / span
        return round((1 - share) * pixels if flip else share * pixels, 1)

    return to_pixels


def _x_axis(dates: list[str]) -> tuple[Any, tuple[tuple[float, str], ...]]:
    plot = WIDTH - LEFT - RIGHT
    count = len(dates)
    x = _scale(0, max(count - 1, 1), plot)
    every = max(1, count // 7)
    ticks = tuple((x(i), dates[i][5:10]) for i in range(0, count, every))
    return x, ticks


def _y_axis(low: float, high: float, steps: int = 5, digits: int = 2):
    plot = HEIGHT - TOP - BOTTOM
    y = _scale(low, high, plot, flip=True)
    values = [low + (high - low) * k / steps for k in range(steps + 1)]
    ticks = tuple((y(value), f"{value:.{digits}f}") for value in values)
    return y, ticks


def _polyline(points: list[tuple[float, float]]) -> str:
    return " ".join(f"{px:.1f},{py:.1f}" for px, py in points)


def drift_chart(version: int, dates: list[str], drift: dict[str, list[float | None]]
                ) -> TimeChart | None:
    values = [v for series in drift.values() for v in series if v is not None]
    if not values:
        return None
    top = max(0.5, max(values) * 1.1)
    x, x_ticks = _x_axis(dates)
    y, y_ticks = _y_axis(0.0, top)
    series = []
    for name, psis in sorted(drift.items()):
        points = [(x(i), y(v)) for i, v in enumerate(psis) if v is not None]
        worst = max((v for v in psis if v is not None), default=0.0)
        css = "alarm" if worst >= PSI_ALARM else "warn" if worst >= PSI_WARN else "quiet"
        markers = tuple((x(i), y(v), f"{name} {dates[i][:10]}: PSI {v:.3f}")
                        for i, v in enumerate(psis) if v is not None)
        # quiet inputs share one grey and one label, so the labels of the ones that drift stay
        # readable
        label = name if css != "quiet" else ""
        series.append(Series(label or name, _polyline(points), f"series {css}",
                             points[-1][1] if points else 0.0, markers))
    bands = (Band(y(top), y(PSI_ALARM), "band-alarm", "alarm (0.25 and above)"),
             Band(y(PSI_ALARM), y(PSI_WARN), "band-warn", "warn (0.1 to 0.25)"))
    alarmed = sorted(n for n, s in drift.items() if max((v or 0) for v in s) >= PSI_ALARM)
    caption = (f"PSI per input of v{version} against its training data, per window; "
               + (f"at or above the alarm level: {', '.join(alarmed)}" if alarmed
                  else "no input reached the alarm level"))
    return TimeChart(f"Input drift of v{version}", caption, "PSI", x_ticks, y_ticks,
                     tuple(_spread_labels(series)), bands)


def _spread_labels(series: list[Series]) -> list[Series]:
    """Line-end labels at least 12 pixels apart, so none is drawn over another; the inputs
    that stay below the warn level get one label between them."""
    placed: list[Series] = []
    last = -100.0
    loud = sorted((s for s in series if "quiet" not in s.css), key=lambda s: s.label_y)
    quiet = [s for s in series if "quiet" in s.css]
    for item in loud:
        y = max(item.label_y, last + 12)
        placed.append(Series(item.name, item.points, item.css, y, item.markers))
        last = y
    if quiet:
        y = max(max(s.label_y for s in quiet), last + 12)
        placed += [Series(s.name, s.points, s.css, y, s.markers, show_label=False)
                   for s in quiet[1:]]
        placed.append(Series(f"{len(quiet)} other inputs below 0.1", quiet[0].points,
                             quiet[0].css, y, quiet[0].markers))
    return placed


def quality_chart(version: int, dates: list[str], rows: list[dict[str, Any]], metric: str,
                  evaluation: float | None, margin: float) -> TimeChart | None:
    known = [(i, r) for i, r in enumerate(rows) if r.get("value") is not None]
    if not known:
        return None
    values = [r["value"] for _, r in known] + [r["ci_low"] for _, r in known
                                               if r.get("ci_low") is not None]
    values += [r["ci_high"] for _, r in known if r.get("ci_high") is not None]
    if evaluation is not None:
        values += [evaluation, evaluation - margin, evaluation + margin]
    low, high = max(0.0, min(values) - 0.05), min(1.0, max(values) + 0.05) if metric in (
        "roc_auc", "accuracy", "average_precision", "macro_f1") else max(values) + 0.05
    x, x_ticks = _x_axis(dates)
    y, y_ticks = _y_axis(low, high)
    line = [(x(i), y(r["value"])) for i, r in known]
    with_band = [(i, r) for i, r in known if r.get("ci_low") is not None]
    areas: tuple[tuple[str, str, str], ...] = ()
    if with_band:
        upper = [(x(i), y(r["ci_high"])) for i, r in with_band]
        lower = [(x(i), y(r["ci_low"])) for i, r in reversed(with_band)]
        areas = ((_polyline(upper + lower), "interval", "95% interval of the live value"),)
    rules: tuple[Rule, ...] = ()
    if evaluation is not None:
        rules = (Rule(y(evaluation), "evaluation", f"evaluation {evaluation:.3f}"),
                 Rule(y(evaluation - margin if metric != "mae" else evaluation + margin),
                      "margin", f"degrading beyond {margin:g}"))
    markers = tuple((x(i), y(r["value"]), f"{dates[i][:10]}: {metric} {r['value']:.3f} "
                     f"({r['rows']} rows with outcomes)") for i, r in known)
    caption = (f"live {metric} of v{version} per window on rows whose outcomes arrived, with "
               f"its interval, against the evaluation's value")
    return TimeChart(f"Live quality of v{version}", caption, metric, x_ticks, y_ticks,
                     (Series(f"live {metric}", _polyline(line), "series live", line[-1][1],
                             markers),), (), rules, areas)


def agreement_chart(version: int, dates: list[str], rows: list[dict[str, Any] | None],
                    minimum: float | None) -> TimeChart | None:
    known = [(i, r) for i, r in enumerate(rows) if r and r.get("share_agreeing") is not None]
    if not known:
        return None
    low = min([0.5] + [r["share_agreeing"] for _, r in known])
    x, x_ticks = _x_axis(dates)
    y, y_ticks = _y_axis(low, 1.0)
    line = [(x(i), y(r["share_agreeing"])) for i, r in known]
    markers = tuple((x(i), y(r["share_agreeing"]), f"{dates[i][:10]}: agrees with "
                     f"v{r['against']} on {r['share_agreeing']:.1%} of {r['rows']} rows")
                    for i, r in known)
    rules = (Rule(y(minimum), "margin", f"gate minimum {minimum:.0%}"),) if minimum else ()
    against = known[-1][1]["against"]
    return TimeChart(f"Agreement of v{version} with v{against}",
                     f"share of shared rows on which v{version} and v{against} agree, per window",
                     "share agreeing", x_ticks, y_ticks,
                     (Series("agreement", _polyline(line), "series live", line[-1][1], markers),),
                     (), rules)


def after_release_page(evidence: AfterReleaseEvidence) -> AfterReleasePage:
    """The page's charts drawn from the figures of the page query."""
    dates = evidence.dates
    sections = [VersionSection(
        version=v.version, state=v.state, reasons=v.reasons, rows=v.rows,
        drift_chart=drift_chart(v.version, dates, v.drift), drift_table=v.drift_rows,
        quality_chart=quality_chart(v.version, dates, v.qualities, evidence.quality_metric,
                                    v.evaluation_value, evidence.quality_margin),
        quality_table=v.quality_rows,
        agreement_chart=agreement_chart(v.version, dates, v.agreements, evidence.min_agreement),
        agreement_table=v.agreement_rows, features=v.features) for v in evidence.versions]
    return AfterReleasePage(evidence, sections)


@blueprint.route("/models/<name>/after-release")
def after_release(name: str):
    from web.views import _catalogue, _name

    page = after_release_page(queries.after_release_evidence(_catalogue(), _name(name, "model")))
    return render_template("after_release.html", page=page)


@blueprint.app_template_global()
def after_release_states(model_name: str) -> dict[str, dict[str, Any]]:
    """Each version's state after release ({} when nothing was served), for the model and front
    pages; a page still renders when the evidence cannot be read."""
    try:
        return queries.after_release_states(current_app.extensions["lockkeeper"].catalogue(),
                                            model_name)
    except LockkeeperError:
        return {}
