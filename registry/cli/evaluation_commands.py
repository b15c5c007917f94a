"""`lockkeeper evaluate`: metrics of a version on a registered evaluation dataset."""

from __future__ import annotations

import click

from registry.cli.catalogue_commands import _client
from registry.cli.output import emit, json_option
from registry.cli.params import FilePath, model_version_arguments


@click.command()
@model_version_arguments
@click.option("--dataset", "dataset_name", required=True, help="A registered evaluation dataset.")
@click.option("--predictions", "predictions_path", required=True,
              type=FilePath("a predictions file"),
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
    summary = _client().evaluate(model_name, version, dataset_name, predictions_path,
                                 task=task, slices=slice_columns, threshold=threshold)

    def text(s):
        shown = ", ".join(f"{name} {value:.4f}" for name, value in s["metrics"].items()
                          if isinstance(value, float))
        verb = "evaluated" if s["created"] else "already evaluated (nothing changed):"
        return f"{verb} {s['model']} v{s['version']} on {s['dataset']} ({s['n']} rows): {shown}"

    emit(summary, as_json, text)
