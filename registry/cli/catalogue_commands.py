"""Commands on the catalogue: init, model, register, status, audit."""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING

import click

from registry.cli.files import read_file_text
from registry.cli.lazy_group import LazyGroup
from registry.cli.output import emit, json_option, short_time
from registry.cli.params import FilePath, SuggestingChoice

if TYPE_CHECKING:
    from registry.cli.client import CatalogueClient
    from registry.cli.context import CommandContext
    from registry.service.actors import Actor

# The service modules are imported inside each command: importing them loads the database layer,
# and the stage and dataset commands import the helpers here without needing all of it.

ROLE_NAMES = ["reader", "publisher", "approver", "admin"]


def _context() -> CommandContext:
    return click.get_current_context().obj


def _client() -> CatalogueClient:
    return _context().client()


def _actor() -> Actor:
    """The acting user, for the commands that work on a local catalogue only."""
    from registry.service.roles import load_actor

    context = _context()
    return load_actor(context.catalogue(), context.user)


def read_text(path: str, *, what: str) -> str:
    return read_file_text(path, what)


@click.command()
@json_option
def init(as_json: bool) -> None:
    """Create the catalogue, or bring it up to the newest schema."""
    from registry.store import migrate
    from registry.store.catalogue import describe, open_catalogue

    context = _context()
    context.local_only("init")
    from registry.service.coverage_upgrade import cover_rows_written_before_coverage

    catalogue = open_catalogue(context.db_url, must_exist=False)
    try:
        before = migrate.current_revision(catalogue)
        covered = migrate.upgrade(catalogue, actor=context.user)
        after = migrate.current_revision(catalogue)
        covered += cover_rows_written_before_coverage(catalogue, context.user)
    finally:
        catalogue.close()
    emit({"catalogue": describe(catalogue.url), "revision_before": before, "revision": after,
          "rows_brought_under_the_chain": covered}, as_json,
         lambda d: f"catalogue {d['catalogue']} at revision {d['revision']}"
         + (f"; {d['rows_brought_under_the_chain']} earlier rows now covered by the audit chain"
            if d["rows_brought_under_the_chain"] else ""))


@click.command("create")
@click.argument("name")
@click.option("--description", default="", help="What the model is for.")
@json_option
def model_create(name: str, description: str, as_json: bool) -> None:
    """Create a model line NAME."""
    emit(_client().create_model(name, description), as_json, lambda s: f"created model {s['name']}")


@click.command("list")
@json_option
def model_list(as_json: bool) -> None:
    """List every model with its number of versions and who holds each stage."""
    found = _client().list_models()

    def text(d):
        if not d["models"]:
            return "no models yet"
        lines = []
        for item in d["models"]:
            held = "; ".join(f"{stage}: {', '.join(f'v{n}' for n in numbers)}"
                             for stage, numbers in item["stages"].items()) or "no stages held"
            lines.append(f"{item['name']}  {item['versions']} version(s)  {held}")
        return "\n".join(lines)

    emit(found, as_json, text)


@click.command("show")
@click.argument("name")
@json_option
def model_show(name: str, as_json: bool) -> None:
    """Show a model line and its versions."""
    detail = _client().show_model(name)

    def text(d):
        model = d["model"]
        lines = [f"{model['name']}: {model['description']}".rstrip(": "),
                 f"created {short_time(model['created_at'])} by {model['created_by']}"]
        for v in d["versions"]:
            stages = f"  [{', '.join(v['stages'])}]" if v["stages"] else ""
            recalled = v.get("recalled_upstream") or []
            flag = f"  FLAGGED: downstream of recalled {', '.join(recalled)}" if recalled else ""
            lines.append(f"  v{v['number']}  {v['document_kind']}  {v['document_digest'][:12]}  "
                         f"{v['author']}  {v['description']}{stages}{flag}")
        return "\n".join(lines)

    emit(detail, as_json, text)


@click.command()
@click.argument("model_name", metavar="MODEL")
@click.argument("document", type=FilePath("a model document"))
@click.option("--manifest", "manifest_path", required=True, type=FilePath("a manifest"),
              help="TOML manifest: schemas, features, description, code revision, author.")
@click.option("--features", "features_path", type=FilePath("feature definitions"), default=None,
              help="Feature definitions (TOML), instead of the manifest's `features`.")
@json_option
def register(model_name: str, document: str, manifest_path: str, features_path: str | None,
             as_json: bool) -> None:
    """Register DOCUMENT as the next version of MODEL."""
    outcome = _client().register(model_name, document, manifest_path, features_path)
    emit(outcome, as_json, render_registration)


def render_registration(o: dict) -> str:
    if not o["created"]:
        return (f"{o['model']} v{o['version']} already holds this registration; "
                "nothing changed")
    text = f"registered {o['model']} v{o['version']}"
    if o.get("missing_features"):
        text += f"\nno feature definition yet for: {', '.join(o['missing_features'])}"
    return text


@click.command("verify")
@click.option("--against", "against_path", type=click.Path(dir_okay=False), default=None,
              metavar="CHECKPOINT.json",
              help="Also prove the catalogue still extends this checkpoint kept elsewhere.")
@json_option
def audit_verify(against_path: str | None, as_json: bool) -> None:
    """Recompute the audit chain and every stored digest, compare every deciding row with the
    chain, check the signed checkpoints; name the first difference."""
    verdict = _client().verify_audit(Path(against_path) if against_path else None)

    def text(d):
        if d["ok"]:
            signed = (f"newest checkpoint event {d['newest_checkpoint']['sequence']}"
                      if d.get("newest_checkpoint") else
                      "no checkpoint yet" if d.get("signed") else "nothing is signed (no key)")
            return (f"audit chain intact: {d['events']} events, {d.get('rows', 0)} rows, "
                    f"{d['blobs']} blobs, {d['versions']} versions, {d['datasets']} datasets "
                    f"checked; {signed}"
                    + (f"; extends {against_path}" if against_path else ""))
        return "\n".join([f"BROKEN at {d['first_broken_link']}"] +
                         [f"  {f['place']}: {f['problem']}" for f in d["findings"]])

    emit(verdict, as_json, text)
    if not verdict.ok:
        click.get_current_context().exit(1)


@click.command("checkpoint")
@json_option
def audit_checkpoint(as_json: bool) -> None:
    """Print the newest signed checkpoint (signing one of the head if the chain has grown),
    to keep outside the catalogue for `audit verify --against`."""
    from registry.service.checkpoints import newest_checkpoint

    _context().local_only("audit checkpoint")
    document = newest_checkpoint(_context().catalogue(), _actor())
    if as_json:
        emit(document, True, str)
    else:
        import json

        click.echo(json.dumps(document, indent=2, sort_keys=True))


@click.group(cls=LazyGroup)
def user() -> None:
    """Roles of the people who act on the catalogue: reader, publisher, approver, admin."""


@user.command("grant")
@click.argument("name")
@click.argument("role", metavar="ROLE", type=SuggestingChoice(ROLE_NAMES))
@json_option
def user_grant(name: str, role: str, as_json: bool) -> None:
    """Give user NAME a ROLE (needs admin, except for a catalogue's first admin)."""
    outcome = _client().grant_role(name, role)
    emit(outcome, as_json, lambda o: f"{o['user']} is now {o['role']}" if o["granted"]
         else f"{o['user']} already was {o['role']}")


@user.command("revoke")
@click.argument("name")
@click.argument("role", metavar="ROLE", type=SuggestingChoice(ROLE_NAMES))
@json_option
def user_revoke(name: str, role: str, as_json: bool) -> None:
    """Take a ROLE away from user NAME (needs admin)."""
    emit(_client().revoke_role(name, role), as_json,
         lambda o: f"{o['user']} is no longer {o['role']}")


@user.command("list")
@json_option
def user_list(as_json: bool) -> None:
    """Every user with a role, and the roles."""
    emit(_client().list_users(), as_json, lambda d: "\n".join(
        f"{name}: {', '.join(roles)}" for name, roles in d["users"].items()) or "no roles granted")


@click.command()
def demo() -> None:
    """Build a fresh demo catalogue from seed_data/ and play the Brackwater story."""
    from registry.cli import demo as story

    context = _context()
    context.local_only("demo")
    url = context.db_url or "sqlite:///.lockkeeper/demo.db"
    story.fresh_sqlite_file(url)
    story.play(url, story.run_in_process, click.echo)
    click.echo("")
    click.echo(f"demo catalogue ready: {url}")

