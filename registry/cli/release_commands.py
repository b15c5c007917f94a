"""`lockkeeper release show|verify`: the signed statement behind what a stage serves, and the
offline check a serving system runs before loading a document."""

from __future__ import annotations

import hashlib
import json
from pathlib import Path

import click

from registry.cli.files import read_file_bytes
from registry.cli.output import emit, json_option
from registry.errors import NotFound, UserError
from registry.signing.release_check import check_release, load_public_key, read_envelope, superseded
from registry.signing.statements import MalformedStatement, parse_statement


@click.group("release")
def release_group() -> None:
    """Release statements: signed records that a document entered or left a stage."""


def _sha256_of_file(path: str) -> str:
    """Hashed a megabyte at a time: a document may be larger than memory."""
    digest = hashlib.sha256()
    try:
        with open(path, "rb") as file:
            while chunk := file.read(1024 * 1024):
                digest.update(chunk)
    except FileNotFoundError:
        raise UserError("no such file", place=path) from None
    except OSError as error:
        raise UserError(f"cannot read the file: {error.strerror or error}", place=path) from None
    return digest.hexdigest()


def _describe(envelope_bytes: bytes) -> dict:
    """What a person wants to see of an envelope: the statement's fields and who signed."""
    envelope = read_envelope(envelope_bytes, "release")
    try:
        statement = parse_statement(envelope.payload).to_dict()
    except MalformedStatement as error:
        raise UserError(f"the catalogue served a statement that does not parse: {error}",
                        place="release") from None
    return {"statement": statement, "signed_by": [s.key_id for s in envelope.signatures]}


@release_group.command("show")
@click.argument("model_name", metavar="MODEL")
@click.option("--stage", default="live", show_default=True)
@click.option("-o", "--output", default=None, type=click.Path(dir_okay=False),
              help="Also write the envelope's exact bytes to this file.")
@json_option
def release_show(model_name: str, stage: str, output: str | None, as_json: bool) -> None:
    """The current release statement of a stage. With --json, the DSSE envelope itself."""
    context = click.get_current_context().obj
    envelope_bytes = context.client().release_envelope(model_name, stage)
    if output:
        Path(output).write_bytes(envelope_bytes)
    if as_json:
        click.echo(json.dumps(json.loads(envelope_bytes), indent=2))
        return
    described = _describe(envelope_bytes)
    predicate = described["statement"]["predicate"]
    subject = described["statement"]["subject"][0]
    lines = [f"{subject['name']} {predicate['move']} {predicate['stage']} "
             f"({predicate['reason']}) at {predicate['issued_at']}",
             f"  document sha256  {subject['digest']['sha256']}",
             f"  previous holder  {_version(predicate['previous_holder'])}",
             f"  signed by        {', '.join(described['signed_by']) or 'nobody (unsigned)'}",
             f"  audit event      #{predicate['audit_event']['sequence']} "
             f"{predicate['audit_event']['hash']}"]
    report = predicate.get("gate_report")
    if report:
        lines.append(f"  gate report      {report['digest']['sha256']}")
        lines += [f"    {g['status']:<7} {g['gate']}" for g in report["gates"]]
    lines += [f"  approved by      {a['who']}: {a['note']}" for a in predicate["approvals"]]
    lines += [f"  waived           {w['gate']} by {w['who']}: {w['reason']}"
              for w in predicate["waivers"]]
    click.echo("\n".join(lines))


def _version(number: int | None) -> str:
    return "-" if number is None else f"v{number}"


@release_group.command("verify")
@click.argument("document", type=click.Path(dir_okay=False))
@click.argument("envelope_file", metavar="ENVELOPE", type=click.Path(dir_okay=False))
@click.option("--key", "key_file", required=True, type=click.Path(dir_okay=False),
              metavar="PUBKEY.pem", help="The catalogue's public key (`key list`).")
@click.option("--model", default=None, help="Insist the statement is about this model.")
@click.option("--stage", default=None, help="Insist the statement is about this stage.")
@click.option("--server", default=None, metavar="URL",
              help="Also ask this catalogue whether the statement is still its stage's current "
                   "one (default: the --server given before the command).")
@json_option
def release_verify(document: str, envelope_file: str, key_file: str, model: str | None,
                   stage: str | None, server: str | None, as_json: bool) -> None:
    """Check, before loading DOCUMENT, that ENVELOPE is a release statement for it signed with
    the key: exit 0 if so, 1 naming the reason if not, 2 for unreadable input. Needs no
    catalogue."""
    public_key = load_public_key(read_file_bytes(key_file, "--key"), "--key")
    envelope = read_envelope(read_file_bytes(envelope_file, "ENVELOPE"), envelope_file)
    verdict = check_release(_sha256_of_file(document), envelope, public_key, model=model,
                            stage=stage)
    context = click.get_current_context().obj
    server = server or context.server
    current = None
    statement = verdict.statement  # a verified verdict always carries its statement
    if server and verdict.verified and statement is not None:
        from registry.cli.remote import ApiClient
        from registry.cli.remote_catalogue import RemoteCatalogue

        try:
            served = RemoteCatalogue(ApiClient(server, context.token)).release_envelope(
                statement.model, statement.stage)
        except NotFound:  # nobody holds the stage now, or its holder has no statement
            current = False
        else:
            current = read_envelope(served, "--server").payload == envelope.payload
        if not current:
            verdict = superseded(verdict)
    emit({**verdict.to_dict(), "current": current}, as_json, _render_verdict)
    if not verdict.verified:
        click.get_current_context().exit(1)


def _render_verdict(document: dict) -> str:
    if document["verified"]:
        text = f"VERIFIED: {document['message']} (key {document['key_id'][:16]})"
        if document["current"]:
            text += "; still the stage's current statement"
        return text
    return f"NOT VERIFIED ({document['reason']}): {document['message']}"


@click.command("public")
@click.argument("key_id", required=False, metavar="[KEY_ID]")
@click.option("-o", "--output", default=None, type=click.Path(dir_okay=False),
              help="Write the PEM to this file instead of printing it.")
def key_public(key_id: str | None, output: str | None) -> None:
    """The public half of the catalogue's current signing key (or of KEY_ID), as PEM: what
    `release verify --key` takes."""
    context = click.get_current_context().obj
    keys = context.client().list_keys().keys
    if key_id is None:
        chosen = [k for k in keys if k["retired_at"] is None][-1:]
        if not chosen:
            raise UserError("the catalogue has no current signing key (`lockkeeper key "
                            "create` makes one)", place="key")
    else:
        chosen = [k for k in keys if k["id"] == key_id]
        if not chosen:
            raise NotFound(f"the catalogue has no signing key {key_id}", place="KEY_ID")
    pem = chosen[0]["public_key"]
    if output:
        Path(output).write_text(pem, encoding="ascii")
    else:
        click.echo(pem.rstrip("\n"))
