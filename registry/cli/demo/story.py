"""`lockkeeper demo`: build a fresh catalogue from seed_data/ and play the Brackwater story.

Every step is a real `lockkeeper` command run in-process, printed as a person would type it, so
the demo doubles as a tour of the command line. Each step goes through a door
(registry.cli.demo.doors): the local catalogue, or a server holding it, reached through the
same catalogue client. All of its data is invented.
"""

from __future__ import annotations

import shlex
from collections.abc import Callable, Sequence
from pathlib import Path

import click

from registry.cli.demo.after_release import STORY_START, after_release_steps
from registry.cli.demo.scenario import (
    ADMIN,
    APPROVER,
    AUTHOR,
    BRACKWATER,
    NIGHT_FLOW,
    SECOND_APPROVER,
    SEED,
    SERVING_SYSTEM,
    TELEMETRY,
    Step,
)
from registry.errors import UserError

Options = Callable[[Step], list[str]]
"""The global options that send a step through a door: `--db URL --as USER`, or
`--server URL --token SECRET` (registry.cli.demo.doors)."""


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
        *after_release_steps(),
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


def contracts_story() -> list[Step]:
    """The feed and the consumer as contracts: the telemetry team publishes `segment-features`,
    its proposed v3 is refused because live reads the field it drops, and a proposed reader of
    `work-order-planner` is shown breaking the live version."""
    c = BRACKWATER / "contracts"
    return [
        Step(ADMIN, ("user", "grant", TELEMETRY, "publisher"),
             caption="The telemetry team owns the feed main-burst-risk reads; it becomes a "
                     "contract with numbered writer schemas."),
        _token(TELEMETRY, "publisher"),
        Step(TELEMETRY, ("feed", "create", "segment-features", "--description",
                         "Segment features the telemetry team writes for scoring",
                         "--retain-days", "14", "--built-from", "brackwater-telemetry-extract")),
        Step(TELEMETRY, ("feed", "publish", "segment-features",
                         str(c / "segment-features-v1.avsc"), "--note", "today's records")),
        Step(AUTHOR, ("model", "set-feed", "main-burst-risk", "segment-features")),
        Step(TELEMETRY, ("feed", "publish", "segment-features",
                         str(c / "segment-features-v2.avsc"), "--note", "adds repairs_5y"),
             caption="v2 adds repairs_5y: live v1 reads it, ignoring the new field."),
        Step(TELEMETRY, ("feed", "check", "segment-features",
                         str(c / "segment-features-v3-proposed.avsc")), expect=1,
             caption="A proposed v3 drops soil_corrosivity: live reads it, so the check "
                     "names who breaks."),
        Step(TELEMETRY, ("feed", "publish", "segment-features",
                         str(c / "segment-features-v3-proposed.avsc")), expect=1),
        Step(AUTHOR, ("consumer", "add", "work-order-planner", "--reads", "main-burst-risk",
                      "--schema", str(c / "work-order-planner-v1.avsc"), "--owner",
                      "asset planning team"),
             caption="The work-order planner declares how it reads burst risk."),
        Step(AUTHOR, ("consumer", "check", "work-order-planner",
                      str(c / "work-order-planner-v2-proposed.avsc")), expect=1,
             caption="Its proposed reader needs a field no version writes: live would break."),
        Step(AUTHOR, ("impact", "main-burst-risk", "2", "--to", "live"),
             caption="What changes if v2 goes live again: feed versions, consumers, features, "
                     "metrics, slices and datasets."),
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


def _token(user: str, role: str, **extra) -> Step:
    return Step(ADMIN, ("token", "create", "--user", user, "--role", role, "--label", "demo"),
                **extra)


PEOPLE = ((AUTHOR, "publisher"), (APPROVER, "approver"), (SECOND_APPROVER, "approver"))


def story() -> list[Step]:
    people = [
        Step(ADMIN, ("init",), local=True),
        Step(ADMIN, ("user", "grant", ADMIN, "admin"), local=True,
             caption="The first admin grants the roles of the people in the story, and gives "
                     "each a token for the HTTP API (its secret is shown once)."),
        _token(ADMIN, "admin", local=True),
        # Before any server opens the catalogue: a server reads the key when it opens it.
        Step(ADMIN, ("key", "create"), local=True,
             caption="The catalogue's signing key: its private half stays in a file beside the "
                     "catalogue (made when missing), its public half is recorded."),
    ]
    people += [Step(ADMIN, ("user", "grant", user, role)) for user, role in PEOPLE]
    people += [_token(user, role) for user, role in PEOPLE]
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
    return [*people, *models, *brackwater_datasets(), *brackwater_story(), *contracts_story(),
            *night_flow_story(), *closing]


def _change_one_byte(source: Path, copy: Path) -> Callable[[], None]:
    def change() -> None:
        data = bytearray(source.read_bytes())
        data[len(data) // 2] ^= 0x01
        copy.write_bytes(bytes(data))

    return change


def serving_handoff(folder: Path) -> list[Step]:
    """The serving side: fetch what is live, check its release statement before loading it,
    and see a copy with one byte changed refused."""
    document, envelope = folder / "live.pfa.json", folder / "live.release.json"
    key, edited = folder / "catalogue.pub.pem", folder / "edited.pfa.json"
    verify = ("release", "verify", "--model", "main-burst-risk", "--stage", "live",
              "--key", str(key))
    return [
        _token(SERVING_SYSTEM, "reader",
               caption="The scoring service reads with a token of its own; it fetches the live "
                       "document, its release statement and the catalogue's public key."),
        Step(SERVING_SYSTEM, ("document", "get", "main-burst-risk", "--stage", "live", "-o",
                              str(document))),
        Step(SERVING_SYSTEM, ("release", "show", "main-burst-risk", "--stage", "live", "-o",
                              str(envelope))),
        Step(SERVING_SYSTEM, ("key", "public", "-o", str(key))),
        Step(SERVING_SYSTEM, (*verify[:2], str(document), str(envelope), *verify[2:]),
             caption="Before loading it, the service checks the statement offline.",
             catalogue=False),
        Step(SERVING_SYSTEM, ("copy", str(document), "to", str(edited), "with one byte "
                              "changed"),
             caption="A copy edited by hand: one byte changed.",
             action=_change_one_byte(document, edited)),
        Step(SERVING_SYSTEM, (*verify[:2], str(edited), str(envelope), *verify[2:]), expect=1,
             caption="The service refuses it: the document is not the one released.",
             catalogue=False),
    ]


def _work_folder(db_url: str) -> Path:
    """Where the serving side of the story keeps its files: beside the demo's SQLite file, or
    a fresh temporary folder for a catalogue on a server."""
    import tempfile

    from registry.store.catalogue import parse_catalogue_url

    url = parse_catalogue_url(db_url)
    if url.get_backend_name() != "sqlite" or not url.database:
        return Path(tempfile.mkdtemp(prefix="lockkeeper-demo-serving-"))
    folder = Path(url.database).parent / "serving"
    folder.mkdir(parents=True, exist_ok=True)
    return folder


def play(db_url: str, run: Callable[[list[str], str], int], echo: Callable[[str], None],
         options: Options | None = None) -> None:
    """Run every step against the catalogue at db_url; stop at the first unexpected outcome.
    `options` sends each step through its door (default: the local catalogue at db_url).
    The story keeps a calendar of its own: the catalogue's clock starts at its first day and
    travels to each dated step."""
    from registry import clock
    from registry.cli.demo.doors import LocalDoor

    clock.start_story(STORY_START)
    try:
        _play(db_url, run, echo, options or LocalDoor(db_url))
    finally:
        clock.back_to_the_wall_clock()


def _play(db_url: str, run: Callable[[list[str], str], int], echo: Callable[[str], None],
          options: Options) -> None:
    from registry import clock

    for step in [*story(), *serving_handoff(_work_folder(db_url))]:
        if step.at is not None:
            clock.travel_to(step.at)
        if step.caption:
            echo("")
            echo(f"# {step.caption}")
        if step.action is not None:
            echo(f"(by hand) {' '.join(_shown([a]) for a in step.arguments)}")
            step.action()
            continue
        echo(f"$ lockkeeper --as {step.user} {_shown(step.arguments)}")
        code = run([*options(step), *step.arguments], step.user)
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
