"""Reads of what the catalogue recorded: `report show ID` and `audit log`."""

from __future__ import annotations

import click

from registry.cli.catalogue_commands import _client, _context
from registry.cli.output import emit, json_option, listing, short_time


@click.command("show")
@click.argument("report_id", metavar="ID", type=click.IntRange(min=1))
@json_option
def report_show(report_id: int, as_json: bool) -> None:
    """Show gate report ID (as `history` names it): every gate of one attempt and its evidence."""
    from registry.gates import GateReport, render_report

    emit(_client().report(report_id), as_json,
         lambda d: f"gate report {report_id}, {short_time(d['evaluated_at'])} by {d['actor']}\n"
                   + render_report(GateReport.from_dict(d)))


@click.command("log")
@click.option("--model", "model_name", default=None, metavar="MODEL",
              help="Only events about this model and its versions.")
@click.option("--dataset", "dataset_name", default=None, metavar="NAME",
              help="Only events about this dataset (and evaluations on it).")
@click.option("--actor", default=None, metavar="USER", help="Only events by this user.")
@click.option("--action", default=None, metavar="ACTION",
              help="Only this action (stage.promote), or a family of them (stage).")
@click.option("--since", default=None, metavar="7d|12h|ISO-TIME",
              help="Only events from this time on.")
@click.option("--limit", type=int, default=50, show_default=True,
              help="At most this many events, newest first.")
@json_option
def audit_log(model_name: str | None, dataset_name: str | None, actor: str | None,
              action: str | None, since: str | None, limit: int, as_json: bool) -> None:
    """Read the audit log, newest first: who did what to which thing, and when."""
    from registry.service.audit_reads import parse_since, read_audit_log
    from registry.store.audit_repository import AuditFilter

    _context().local_only("audit log")
    wanted = AuditFilter(model=model_name, dataset=dataset_name, actor=actor, action=action,
                         since=parse_since(since), limit=limit)
    found = read_audit_log(_context().catalogue(), wanted)

    emit(found, as_json, lambda d: listing(
        d["events"], "no events", lambda e: f"{e['sequence']:>6}  {short_time(e['at'])}  "
                                            f"{e['actor']:<18} {e['action']:<17} {e['subject']}"))
