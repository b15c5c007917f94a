"""`lockkeeper evaluate`: metrics of a version on a registered evaluation dataset."""

from __future__ import annotations

import click

from registry.cli.catalogue_commands import _actor, _context
from registry.cli.output import emit, json_option


@click.command()
@click.argument("model_name", metavar="MODEL")
@click.argument("version", type=int)
@click.option("--dataset", "dataset_name", required=True, help="A registered evaluation dataset.")
@click.option("--predictions", "predictions_path", required=True, type=click.Path(dir_okay=False),
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
    from registry.evaluation.predictions import infer_task
    from registry.service.evaluations import EvaluationRequest, add_evaluation

    remote = _context().remote()
    if remote:
        summary = remote.evaluate(model_name, version, dataset_name, predictions_path,
                                  task=task, slices=slice_columns, threshold=threshold)
    else:
        predictions = read_predictions(predictions_path,
                                       task or infer_task(predictions_path, place="--predictions"))
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


COMMANDS = [evaluate]
