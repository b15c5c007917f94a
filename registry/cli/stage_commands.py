"""Commands that move versions between stages: check, promote, approve, rollback, retire,
history, and the model's policy."""

from __future__ import annotations

import click

from registry.cli.catalogue_commands import _client, read_text
from registry.cli.client import WHOEVER_HOLDS_IT
from registry.cli.lazy_group import LazyGroup
from registry.cli.output import emit, json_option, short_time
from registry.cli.params import FilePath, model_version_arguments, parse_version_number
from registry.cli.progress import progress_bar
from registry.errors import UserError
from registry.gates import GateReport, render_report


def _waivers(gates: tuple[str, ...], reasons: tuple[str, ...]) -> list[tuple[str, str]]:
    """(gate, reason) pairs; the catalogue records the acting user as the one who waived."""
    if not gates:
        if reasons:
            raise UserError("--reason goes with --waive GATE", place="--reason")
        return []
    if not reasons:
        raise UserError("a waiver needs a reason: add --reason TEXT", place="--waive")
    if len(reasons) == 1:
        reasons = reasons * len(gates)
    if len(reasons) != len(gates):
        raise UserError("give one --reason, or one per --waive", place="--reason")
    return list(zip(gates, reasons, strict=True))


def _render_outcome(outcome: dict, verb: str) -> str:
    report = GateReport.from_dict(outcome["report"])
    where = f"{outcome['model']} v{outcome['version']}"
    if outcome["moved"]:
        head = f"{verb}: {where} now holds {outcome['stage']}"
        if outcome["displaced"]:
            head += f" (v{outcome['displaced']} left it)"
    else:
        head = f"REFUSED: {where} may not enter {outcome['stage']}"
    return head + "\n" + render_report(report)


waive_options = [
    click.option("--waive", "waive_gates", multiple=True, metavar="GATE",
                 help="Override this failed gate (approvers only; needs --reason)."),
    click.option("--reason", "reasons", multiple=True, metavar="TEXT",
                 help="Why the gate is waived, in your words."),
]


def with_waive_options(function):
    for option in reversed(waive_options):
        function = option(function)
    return function


@click.command()
@model_version_arguments
@click.option("--to", "stage", required=True, help="The stage to check entry into.")
@with_waive_options
@json_option
def check(model_name: str, version: int, stage: str, waive_gates, reasons, as_json: bool) -> None:
    """Run the gates of a stage for a version, as a dry run: nothing changes."""
    waivers = _waivers(waive_gates, reasons)
    with progress_bar("gathering evidence", unit="resamples"):
        verdict = _client().check(model_name, version, stage, waivers)
    emit(verdict, as_json,
         lambda d: ("WOULD PASS" if d["passed"] else "WOULD BE REFUSED") + "\n" +
         render_report(GateReport.from_dict(d)))
    if not verdict.passed:
        click.get_current_context().exit(1)


@click.command()
@model_version_arguments
@click.option("--to", "stage", required=True, help="The stage to move the version into.")
@click.option("--expect-holder", default=None, metavar="VERSION|none",
              help="Only move if the stage is still held by this version (default: whoever "
                   "held it when the command started).")
@with_waive_options
@json_option
def promote(model_name: str, version: int, stage: str, expect_holder: str | None, waive_gates,
            reasons, as_json: bool) -> None:
    """Move a version into a stage if the stage's gates allow it."""
    holder = (None if expect_holder in (None, "none")
              else parse_version_number(expect_holder, place="--expect-holder"))
    waivers = _waivers(waive_gates, reasons)
    with progress_bar("gathering evidence", unit="resamples"):
        outcome = _client().promote(model_name, version, stage, waivers,
                                    WHOEVER_HOLDS_IT if expect_holder is None else holder)
    emit(outcome, as_json, lambda o: _render_outcome(o, "PROMOTED"))
    if not outcome.moved:
        click.get_current_context().exit(1)


@click.command()
@model_version_arguments
@click.option("--for", "stage", required=True, help="The stage the approval is for.")
@click.option("--note", default="", help="What you checked.")
@json_option
def approve(model_name: str, version: int, stage: str, note: str, as_json: bool) -> None:
    """Record your approval of a version for a stage (approvers; never your own version)."""
    outcome = _client().approve(model_name, version, stage, note)
    emit(outcome, as_json, lambda o: f"{o['approver']} approved {o['model']} v{o['version']} for "
                                     f"{o['stage']} ({o['approvals']} approval(s))")


@click.command()
@click.argument("model_name", metavar="MODEL")
@click.option("--stage", default="live", show_default=True, help="The exclusive stage.")
@with_waive_options
@json_option
def rollback(model_name: str, stage: str, waive_gates, reasons, as_json: bool) -> None:
    """Give a stage back to the version its holder displaced, after re-running the schema gates."""
    outcome = _client().rollback(model_name, stage, _waivers(waive_gates, reasons))
    emit(outcome, as_json, lambda o: _render_outcome(o, "ROLLED BACK"))
    if not outcome.moved:
        click.get_current_context().exit(1)


@click.command()
@model_version_arguments
@click.option("--reason", default="", help="Why the version leaves service.")
@json_option
def retire(model_name: str, version: int, reason: str, as_json: bool) -> None:
    """Take a version out of service: it leaves every stage and enters `retired`."""
    outcome = _client().retire(model_name, version, reason)
    emit(outcome, as_json, lambda o: f"retired {o['model']} v{o['version']}" + (
        f" (left {', '.join(o['left_stages'])})" if o["left_stages"] else ""))


@click.command()
@click.argument("model_name", metavar="MODEL")
@click.option("--watch", is_flag=True, help="Keep watching: print each change as it happens "
              "(with --json, one JSON document per line) until Ctrl-C.")
@click.option("--changes", type=click.IntRange(min=1), default=None, metavar="N",
              help="With --watch, stop after N changes.")
@json_option
def status(model_name: str, watch: bool, changes: int | None, as_json: bool) -> None:
    """Who holds each stage of MODEL."""
    if watch:
        from registry.cli.status_watch import watch_status

        watch_status(_client(), model_name, as_json, changes)
        return
    if changes is not None:
        raise UserError("--changes goes with --watch", place="--changes")
    document = _client().status(model_name)

    def text(d):
        lines = [f"{d['model']}:"]
        after = d.get("after_release", {})
        for stage, numbers in d["stages"].items():
            held = ", ".join(f"v{n}" + _after_release_mark(after.get(str(n)))
                             for n in numbers) or "-"
            lines.append(f"  {stage:<10} {held}")
        for flagged in d.get("recalled_upstream", []):
            lines.append(f"FLAGGED: v{flagged['version']} ({', '.join(flagged['stages'])}) is "
                         f"downstream of recalled {', '.join(flagged['recalled'])}")
        for number, found in after.items():
            if found["state"] != "steady":
                lines += [f"  v{number} {found['state']}: {reason}" for reason in found["reasons"]]
        return "\n".join(lines)

    emit(document, as_json, text)


def _after_release_mark(found: dict | None) -> str:
    """` (drifting)` beside a version whose evidence after release is not steady."""
    return f" ({found['state']})" if found and found["state"] != "steady" else ""


@click.command()
@click.argument("model_name", metavar="MODEL")
@json_option
def history(model_name: str, as_json: bool) -> None:
    """Every stage event of MODEL, oldest first, with the gate report of each attempt."""
    document = _client().history(model_name)

    def text(d):
        lines = [f"{d['model']}: {len(d['events'])} stage event(s)"]
        for e in d["events"]:
            lines.append(f"  {short_time(e['at'])}  v{e['version']:<3} {e['event']:<11} "
                         f"{e['stage']:<10} by {e['by']}")
        refused = [a for a in d["attempts"] if not a["passed"]]
        for attempt in refused:
            lines.append(f"  refused: v{attempt['version']} into {attempt['stage']} "
                         f"by {attempt['by']} (lockkeeper report show {attempt['id']})")
        return "\n".join(lines)

    emit(document, as_json, text)


@click.group("policy", cls=LazyGroup)
def policy_group() -> None:
    """A model's promotion policy: the ladder, exclusive stages and the gates of each stage."""


@policy_group.command("show")
@click.argument("model_name", metavar="MODEL")
@json_option
def policy_show(model_name: str, as_json: bool) -> None:
    """Show the policy in force for MODEL (its own laid over the default)."""
    emit(_client().show_policy(model_name), as_json, lambda d: d["text"])


@policy_group.command("set")
@click.argument("model_name", metavar="MODEL")
@click.argument("policy_file", type=FilePath("a policy"))
@json_option
def policy_set(model_name: str, policy_file: str, as_json: bool) -> None:
    """Give MODEL its own policy (TOML, laid over the default; admins only)."""
    text = read_text(policy_file, what="POLICY")
    outcome = _client().set_policy(model_name, text, source=policy_file)
    emit(outcome, as_json, lambda o: f"{o['model']} now follows {policy_file}")

