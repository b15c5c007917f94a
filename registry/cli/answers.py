"""What the catalogue answers the command line, through either door (local or remote).

Each kind of answer is a frozen dataclass around the very JSON document the command prints
under --json (DESIGN.md fixes those keys), with typed accessors for what a command decides
on (its exit code, whether it warns). Both implementations of registry.cli.client build the
same classes from the same documents, so a command never knows which door answered.

Plain standard library only: the remote client imports this, and nothing of the server.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field
from typing import Any


@dataclass(frozen=True)
class Answer:
    """One JSON document from the catalogue, keys exactly as the command prints them."""

    document: Mapping[str, Any]

    def to_json(self) -> dict[str, Any]:
        return dict(self.document)


# --- models, versions and stages -------------------------------------------------------------

@dataclass(frozen=True)
class Ping(Answer):
    """The server (or the local catalogue) is there."""


@dataclass(frozen=True)
class ModelSummary(Answer):
    """A model line as created: name, description, when and by whom."""


@dataclass(frozen=True)
class ModelList(Answer):
    """Every model with its number of versions and the stages held."""


@dataclass(frozen=True)
class ModelDetail(Answer):
    """A model line and its versions."""


@dataclass(frozen=True)
class Registration(Answer):
    """A version registered, or found already registered with the same content."""

    @property
    def created(self) -> bool:
        return bool(self.document["created"])


@dataclass(frozen=True)
class GateCheck(Answer):
    """A gate report of a dry run, with `would_move`."""

    @property
    def passed(self) -> bool:
        return bool(self.document["passed"])


@dataclass(frozen=True)
class StageMove(Answer):
    """The outcome of a promotion or a roll back: moved or refused, with its gate report."""

    @property
    def moved(self) -> bool:
        return bool(self.document["moved"])


@dataclass(frozen=True)
class Approval(Answer):
    """An approval recorded for a version and a stage."""


@dataclass(frozen=True)
class Retirement(Answer):
    """A version taken out of service, with the stages it left."""


@dataclass(frozen=True)
class StageStatus(Answer):
    """Who holds each stage of a model, with flags and the after-release states."""

    @property
    def stages(self) -> Mapping[str, list[int]]:
        return self.document["stages"]


@dataclass(frozen=True)
class StageHistory(Answer):
    """Every stage event of a model and every attempt to enter a stage."""


@dataclass(frozen=True)
class GateReportAnswer(Answer):
    """One stored gate report, with its id."""


@dataclass(frozen=True)
class PolicyShown(Answer):
    """The policy in force for a model, as text and parsed."""


@dataclass(frozen=True)
class PolicyChange(Answer):
    """A model's own policy set."""


@dataclass(frozen=True)
class DocumentDownload:
    """A stored document on its way: what the catalogue says it is, and its bytes in chunks
    (read once, as they arrive)."""

    model: str
    version: int | None
    sha256: str
    size: int | None
    chunks: Iterable[bytes] = field(repr=False)


# --- datasets, evaluations, lineage ----------------------------------------------------------

@dataclass(frozen=True)
class DatasetAdded(Answer):
    """A dataset registered, or found already registered with the same content."""


@dataclass(frozen=True)
class DatasetDetail(Answer):
    """A registered dataset. `fingerprint` is the full fingerprint when the door has it at
    hand (the local one); the printed document is the same either way."""

    fingerprint: Mapping[str, Any] | None = None


@dataclass(frozen=True)
class DatasetList(Answer):
    """Every registered dataset."""


@dataclass(frozen=True)
class Evaluation(Answer):
    """The metrics of a version on an evaluation dataset."""


@dataclass(frozen=True)
class Recall(Answer):
    """A dataset recalled, and everything flagged downstream."""


@dataclass(frozen=True)
class LineageDocument(Answer):
    """A lineage graph (our JSON) or a W3C PROV-JSON document."""


# --- after release -----------------------------------------------------------------------------

@dataclass(frozen=True)
class ServedBatch(Answer):
    """A served batch recorded, with its windows."""


@dataclass(frozen=True)
class OutcomeBatch(Answer):
    """Outcomes recorded and joined to the rows served earlier."""


@dataclass(frozen=True)
class ServingReport(Answer):
    """Per window and version: rows, drift, agreement, live quality and the state."""


# --- contracts ---------------------------------------------------------------------------------

@dataclass(frozen=True)
class Feed(Answer):
    """A feed with its published schemas and its readers."""


@dataclass(frozen=True)
class FeedList(Answer):
    """Every feed."""


@dataclass(frozen=True)
class FeedPublication(Answer):
    """A writer schema published, or refused because a holder cannot read it."""

    @property
    def refused(self) -> bool:
        return bool(self.document["refused"])


@dataclass(frozen=True)
class SchemaVerdict(Answer):
    """Who could not read a proposed feed or consumer schema."""

    @property
    def passed(self) -> bool:
        return bool(self.document["passed"])


@dataclass(frozen=True)
class ModelFeed(Answer):
    """The feed a model reads, as declared."""


@dataclass(frozen=True)
class Consumer(Answer):
    """A declared consumer of a model's output."""


@dataclass(frozen=True)
class ConsumerList(Answer):
    """Every declared consumer."""


@dataclass(frozen=True)
class Impact(Answer):
    """What changes if a version enters a stage."""


# --- people, tokens, keys, audit ---------------------------------------------------------------

@dataclass(frozen=True)
class RoleChange(Answer):
    """A role granted or revoked."""


@dataclass(frozen=True)
class RoleList(Answer):
    """Every user with a role."""


@dataclass(frozen=True)
class TokenCreated(Answer):
    """A new bearer token: its record and its secret, shown this once."""

    @property
    def secret(self) -> str:
        return str(self.document["secret"])


@dataclass(frozen=True)
class TokenRecord(Answer):
    """One token's record (never its secret)."""


@dataclass(frozen=True)
class TokenList(Answer):
    """Every token's record."""


@dataclass(frozen=True)
class KeyList(Answer):
    """Every public signing key the catalogue has had, the current one last."""

    @property
    def keys(self) -> list[Mapping[str, Any]]:
        return list(self.document["keys"])


@dataclass(frozen=True)
class AuditVerdict(Answer):
    """The audit chain and every stored digest recomputed: intact, or the first break."""

    @property
    def ok(self) -> bool:
        return bool(self.document["ok"])
