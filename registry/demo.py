"""`lockkeeper demo`: build a fresh catalogue from seed_data/ and play the Brackwater story.

Every step is a real `lockkeeper` command run in-process, printed as a person would type it, so
the demo doubles as a tour of the command line. All of its data is invented.
"""

from __future__ import annotations

import shlex
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from pathlib import Path

import click

from registry.errors import UserError

SEED = Path(__file__).resolve().parents[1] / "seed_data"
BRACKWATER = SEED / "brackwater"
NIGHT_FLOW = SEED / "night_flow"

ADMIN, AUTHOR, APPROVER, SECOND_APPROVER = ("mara.kowalczyk", "ines.okafor", "tomas.lindqvist",
                                            "priya.raman")


@dataclass(frozen=True)
class Step:
    """One command of the story, who runs it, and the exit code the story expects."""

    user: str
    arguments: tuple[str, ...]
    expect: int = 0
    caption: str = ""


def _shown(arguments: Sequence[str]) -> str:
    """The command as a person would type it from the project folder."""
    prefix = str(SEED.parent) + "/"
    return shlex.join(a.removeprefix(prefix) for a in arguments)


def brackwater_datasets() -> list[Step]:
    d, s = BRACKWATER / "datasets", BRACKWATER / "schemas"
    derived = ("--derived-from", "brackwater-asset-register",
               "--derived-from", "brackwater-telemetry-extract")
    split = ("--key", "segment_id", "--exclude", "burst_within_90d")
    return [
        Step(AUTHOR, ("dataset", "add", "brackwater-asset-register",
                      str(d / "brackwater-asset-register.csv"),
                      "--schema", str(s / "brackwater-asset-register.avsc"), "--role", "source"),
             caption="The asset register and the telemetry extract are the sources."),
        Step(AUTHOR, ("dataset", "add", "brackwater-telemetry-extract",
                      str(d / "brackwater-telemetry-extract"),
                      "--schema", str(s / "brackwater-telemetry-extract.avsc"), "--role", "source"),
             caption="The telemetry extract is a folder partitioned by district."),
        Step(AUTHOR, ("dataset", "add", "brackwater-training-set",
                      str(d / "brackwater-training-set.parquet"), "--role", "training",
                      *derived, *split),
             caption="Training and evaluation sets are derived from both, on disjoint segments."),
        Step(AUTHOR, ("dataset", "add", "brackwater-evaluation-set",
                      str(d / "brackwater-evaluation-set.parquet"), "--role", "evaluation",
                      *derived, *split)),
        Step(AUTHOR, ("dataset", "add", "brackwater-live-sample",
                      str(d / "brackwater-live-sample.avro"), "--role", "live-sample",
                      "--feed-of", "main-burst-risk"),
             caption="A sample of what the live feed writes, for the data-aware schema check."),
    ]


def _register_and_evaluate(number: int, *, evaluate: bool = True) -> list[Step]:
    steps = [Step(AUTHOR, ("register", "main-burst-risk",
                           str(BRACKWATER / "documents" / f"main-burst-risk-v{number}.pfa.json"),
                           "--manifest",
                           str(BRACKWATER / "manifests" / f"main-burst-risk-v{number}.toml")))]
    if evaluate:
        steps.append(Step(AUTHOR, (
            "evaluate", "main-burst-risk", str(number), "--dataset", "brackwater-evaluation-set",
            "--predictions", str(BRACKWATER / "predictions" / f"main-burst-risk-v{number}.csv"),
            "--slice", "district")))
    return steps


def _promote(number: int, stage: str, *, expect: int = 0, waive: Sequence[str] = (),
             reason: str = "", model: str = "main-burst-risk", caption: str = "") -> Step:
    extra: tuple[str, ...] = ()
    for gate in waive:
        extra += ("--waive", gate)
    if waive:
        extra += ("--reason", reason)
    return Step(APPROVER, ("promote", model, str(number), "--to", stage, *extra), expect, caption)


SALTMARSH_WAIVER = ("Saltmarsh repair records are being re-keyed; the asset team reviews the "
                    "slice weekly until the fix lands")


def brackwater_story() -> list[Step]:
    return [
        *_register_and_evaluate(1),
        _promote(1, "shadow", caption="v1 climbs the ladder; with nothing live yet, the schema "
                                      "and quality gates have nothing to compare against."),
        _promote(1, "canary"),
        Step(SECOND_APPROVER, ("approve", "main-burst-risk", "1", "--for", "live", "--note",
                               "reviewed the evaluation and the lineage")),
        _promote(1, "live"),
        *_register_and_evaluate(2),
        _promote(2, "shadow", caption="v2 adds repairs_5y with a default: it reads the v1 feed."),
        _promote(2, "canary", expect=1,
                 caption="v2 beats v1 overall, but the slice gate finds SALTMARSH worse."),
        _promote(2, "canary", waive=["slice-guard"], reason=SALTMARSH_WAIVER,
                 caption="An approver waives the slice finding, with a reason on the record."),
        Step(SECOND_APPROVER, ("approve", "main-burst-risk", "2", "--for", "live", "--note",
                               "accepted the Saltmarsh waiver")),
        _promote(2, "live", waive=["slice-guard"], reason=SALTMARSH_WAIVER),
        *_register_and_evaluate(3),
        _promote(3, "shadow", expect=1,
                 caption="v3 renames the pressure field through an alias and switches it to "
                         "psi: readable, but the feature gate catches the unit change."),
        *_register_and_evaluate(4, evaluate=False),
        _promote(4, "shadow", expect=1,
                 caption="v4 turns diameter_mm into a string: the schema gate refuses it."),
        Step(APPROVER, ("rollback", "main-burst-risk", "--stage", "live"),
             caption="Trouble in production: live goes back to v1 in one transaction."),
    ]


def night_flow_story() -> list[Step]:
    d = NIGHT_FLOW / "datasets"
    return [
        Step(ADMIN, ("model", "policy", "set", "night-flow-leak",
                     str(NIGHT_FLOW / "policy.toml")),
             caption="night-flow-leak is a regression: its policy judges RMSE instead of AUC."),
        Step(AUTHOR, ("dataset", "add", "night-flow-training-set",
                      str(d / "night-flow-training-set.parquet"), "--role", "training",
                      "--key", "dma_id", "--exclude", "leak_l_h")),
        Step(AUTHOR, ("dataset", "add", "night-flow-evaluation-set",
                      str(d / "night-flow-evaluation-set.parquet"), "--role", "evaluation",
                      "--key", "dma_id", "--exclude", "leak_l_h")),
        Step(AUTHOR, ("dataset", "add", "night-flow-live-sample",
                      str(d / "night-flow-live-sample.avro"), "--role", "live-sample",
                      "--feed-of", "night-flow-leak")),
        Step(AUTHOR, ("register", "night-flow-leak",
                      str(NIGHT_FLOW / "documents" / "night-flow-leak-v1.pfa.json"),
                      "--manifest", str(NIGHT_FLOW / "manifests" / "night-flow-leak-v1.toml"))),
        Step(AUTHOR, ("evaluate", "night-flow-leak", "1", "--dataset", "night-flow-evaluation-set",
                      "--predictions", str(NIGHT_FLOW / "predictions" / "night-flow-leak-v1.csv"))),
        _promote(1, "canary", model="night-flow-leak"),
        Step(SECOND_APPROVER, ("approve", "night-flow-leak", "1", "--for", "live")),
        Step(APPROVER, ("approve", "night-flow-leak", "1", "--for", "live"),
             caption="Its policy asks two approvers, besides the author, for live."),
        _promote(1, "live", model="night-flow-leak"),
    ]


def story() -> list[Step]:
    people = [Step(ADMIN, ("user", "grant", ADMIN, "admin"),
                   caption="The first admin grants the roles of the people in the story.")]
    people += [Step(ADMIN, ("user", "grant", user, role)) for user, role in (
        (AUTHOR, "publisher"), (APPROVER, "approver"), (SECOND_APPROVER, "approver"))]
    models = [
        Step(ADMIN, ("model", "create", "main-burst-risk", "--description",
                     "Which water-main segments will burst within 90 days")),
        Step(ADMIN, ("model", "create", "night-flow-leak", "--description",
                     "Litres per hour of night flow lost per district meter area")),
    ]
    closing = [
        Step(AUTHOR, ("dataset", "recall", "brackwater-telemetry-extract", "--reason",
                      "pressure sensors in two districts were miscalibrated in the extract "
                      "period"),
             caption="A sensor calibration fault: the telemetry extract is recalled, and "
                     "everything downstream is flagged."),
        Step(AUTHOR, ("status", "main-burst-risk")),
        Step(AUTHOR, ("status", "night-flow-leak")),
        Step(AUTHOR, ("audit", "verify")),
    ]
    return [*people, *models, *brackwater_datasets(), *brackwater_story(), *night_flow_story(),
            *closing]


def play(db_url: str, run: Callable[[list[str], str], int], echo: Callable[[str], None]) -> None:
    """Run every step against the catalogue at db_url; stop at the first unexpected outcome."""
    for step in [Step(ADMIN, ("init",)), *story()]:
        if step.caption:
            echo("")
            echo(f"# {step.caption}")
        echo(f"$ lockkeeper --as {step.user} {_shown(step.arguments)}")
        code = run(["--db", db_url, "--as", step.user, *step.arguments], step.user)
        if code != step.expect:
            raise UserError(f"the demo step `{_shown(step.arguments)}` ended with exit code "
                            f"{code}, expected {step.expect}", place="demo")


def fresh_sqlite_file(db_url: str) -> None:
    """The demo always starts from an empty catalogue: remove an earlier demo's SQLite file."""
    from registry.store.catalogue import parse_catalogue_url

    url = parse_catalogue_url(db_url)
    if url.get_backend_name() != "sqlite" or not url.database:
        raise UserError("the demo builds a fresh SQLite catalogue; give --db sqlite:///PATH",
                        place="--db")
    for suffix in ("", "-wal", "-shm"):
        Path(url.database + suffix).unlink(missing_ok=True)


def run_in_process(arguments: list[str], user: str) -> int:
    from registry.cli import main

    try:
        # Without standalone mode click returns the exit code instead of leaving the process.
        code = main.main(args=arguments, prog_name="lockkeeper", standalone_mode=False)
    except click.ClickException as error:
        error.show()
        return error.exit_code
    return code or 0
