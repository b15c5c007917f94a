"""`lockkeeper evaluate`: metrics of a version on a registered evaluation dataset."""

from __future__ import annotations

import csv
from pathlib import Path

import click

from registry.cli.catalogue_commands import _actor, _context
from registry.cli.output import emit, json_option
from registry.cli.params import FilePath, model_version_arguments
from registry.errors import UserError


def infer_task(path: str) -> str:
    """binary when there is a `score` column, regression with `prediction`, multiclass with
    `p_<class>` columns."""
    file = Path(path)
    try:
        if file.suffix.lower() in (".parquet", ".pq") or file.read_bytes()[:4] == b"PAR1":
            import pyarrow.parquet as pq

            columns = pq.read_schema(file).names
        else:
            with file.open(newline="", encoding="utf-8") as handle:
                columns = next(csv.reader(handle), [])
    except FileNotFoundError:
        raise UserError(f"no such file: {path}", place="--predictions") from None
    except Exception as error:  # unreadable header: let the reader say exactly what is wrong
        raise UserError(f"cannot read the columns of {path}: {error}", place="--predictions") from None
    if "score" in columns:
        return "binary"
    if "prediction" in columns:
        return "regression"
    if any(column.startswith("p_") for column in columns):
        return "multiclass"
    raise UserError("cannot tell the task: expected a `score`, `prediction` or `p_<class>` "
                    "column; or give --task", place="--predictions")


@click.command()
@model_version_arguments
@click.option("--dataset", "dataset_name", required=True, help="A registered evaluation dataset.")
@click.option("--predictions", "predictions_path", required=True, type=FilePath("a predictions file"),
              help="CSV or Parquet: row_id, label, and score | prediction | p_<class>.")
@click.option("--task", type=click.Choice(["binary", "regression", "multiclass"]), default=None,
              help="Default: told by the prediction columns.")
@click.option("--slice", "slice_columns", multiple=True, metavar="COL",
              help="Also compute metrics per value of this column (repeatable).")
@click.option("--threshold", type=float, default=0.5, show_default=True,
              help="Decision threshold for accuracy (binary).")
@json_option
def evaluate(model_name: str, version: int, dataset_name: str, predictions_path: str,
             task: str | None, slice_columns: tuple[str, ...], threshold: float,
             as_json: bool) -> None:
    """Compute and store the metrics of a version's predictions on an evaluation dataset."""
    from registry.evaluation import read_predictions
    from registry.service.evaluations import EvaluationRequest, add_evaluation

    remote = _context().remote()
    if remote:
        summary = remote.evaluate(model_name, version, dataset_name, predictions_path,
                                  task=task, slices=slice_columns, threshold=threshold)
    else:
        predictions = read_predictions(predictions_path, task or infer_task(predictions_path))
        request = EvaluationRequest(model=model_name, version=version, dataset=dataset_name,
                                    predictions=predictions, slice_columns=slice_columns,
                                    threshold=threshold)
        summary = add_evaluation(_context().catalogue(), request, _actor())

    def text(s):
        shown = ", ".join(f"{name} {value:.4f}" for name, value in s["metrics"].items()
                          if isinstance(value, float))
        verb = "evaluated" if s["created"] else "already evaluated (nothing changed):"
        return f"{verb} {s['model']} v{s['version']} on {s['dataset']} ({s['n']} rows): {shown}"

    emit(summary, as_json, text)
