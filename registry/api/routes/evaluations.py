"""Evaluations: the catalogue computes a version's metrics from an uploaded predictions file.

POST .../evaluations takes multipart/form-data: part `predictions` (CSV or Parquet: row_id,
label, and score | prediction | p_<class>), fields `dataset` (a registered evaluation dataset),
`task` (binary | regression | multiclass; default: told by the columns), `slice` (repeatable),
`threshold` (binary accuracy; default 0.5).
"""

from __future__ import annotations

import math

from flask import g

from registry.api.bodies import check_form, require_media_type
from registry.api.context import catalogue
from registry.api.rendering import json_response, path_name
from registry.api.routing import route
from registry.api.uploads import file_part, form_value, form_values, saved_upload
from registry.errors import UserError
from registry.service import evaluations

TEXT_FIELD = {"type": "string"}
EVALUATION_FORM = {
    "type": "object",
    "properties": {"predictions": {"type": "string", "format": "binary"}, "dataset": TEXT_FIELD,
                   "task": {"type": "string", "enum": ["binary", "regression", "multiclass"]},
                   "slice": {"type": "array", "items": TEXT_FIELD}, "threshold": TEXT_FIELD},
    "required": ["predictions", "dataset"], "additionalProperties": False,
}
VERSION_PATH = "/models/<model>/versions/<number:version>"


def _threshold() -> float:
    text = form_value("threshold", "0.5")
    try:
        value = float(text)
    except ValueError:
        raise UserError(f"threshold {text!r} is not a number", place="threshold") from None
    if not math.isfinite(value) or not 0.0 <= value <= 1.0:
        raise UserError("threshold must be between 0 and 1", place="threshold")
    return value


@route(VERSION_PATH + "/evaluations", "POST", action="evaluation.add",
       summary=("Compute and store a version's metrics on an evaluation dataset "
                "from its predictions"),
       tag="evaluations",
       form=EVALUATION_FORM,
       responses={201: "Created", 200: "This evaluation already exists; nothing changed"})
def add_evaluation(model: str, version: int):
    from registry.evaluation import read_predictions
    from registry.evaluation.predictions import infer_task

    require_media_type("multipart/form-data")
    check_form(EVALUATION_FORM)
    dataset = path_name(form_value("dataset") or "", "dataset")
    threshold = _threshold()
    with saved_upload(file_part("predictions"), "predictions.csv") as path:
        task = form_value("task") or infer_task(path, place="predictions")
        predictions = read_predictions(path, task)
    summary = evaluations.add_evaluation(catalogue(), evaluations.EvaluationRequest(
        model=path_name(model, "model"), version=version, dataset=dataset,
        predictions=predictions, slice_columns=form_values("slice"), threshold=threshold),
        g.actor)
    return json_response(summary, 201 if summary.created else 200)


@route(VERSION_PATH + "/evaluations", "GET", summary="Every evaluation of a version",
       tag="evaluations")
def list_evaluations(model: str, version: int):
    return json_response({"evaluations": evaluations.list_evaluations(
        catalogue(), path_name(model, "model"), version)})
