"""Converting a catalogue written before revision 0009 to the stored shapes of
docs/stored-shapes.md, run by that revision inside the upgrade's own transaction.

Feature definitions stored as `{"toml": ...}` become the JSON array of registry.features; an
evaluation record missing keys of the one shape gains them (threshold null, calibration empty);
predictions stored as zlib-compressed JSON columns become an Arrow IPC file in a new blob, and
the old blob goes once nothing points at it. A version whose features changed gets its
registration digest recomputed. One event, `catalogue.convert`, closes the transaction: it
carries the row digests of every converted row and, per registration it touched, the digests
that now stand for it, which `audit verify` reads in place of the registration event's.

The readers of the old shapes live here only: nothing else reads them.
"""

from __future__ import annotations

import hashlib
import json
import zlib
from dataclasses import dataclass, field
from typing import Any

from registry.errors import UserError
from registry.evaluation import Predictions
from registry.evaluation.record import EvaluationRecord, read_evaluation_record
from registry.features import definitions_json, parse_feature_file
from registry.service.registration import stored_registration_digest
from registry.store.catalogue import Catalogue
from registry.store.unit_of_work import UnitOfWork

ACTION = "catalogue.convert"
REVISION = "0009"
ARROW_MAGIC = b"ARROW1"


class UnconvertibleRow(UserError):
    """A stored value in neither the old shape nor the new one: the upgrade stops, unchanged."""

    kind = "unconvertible-row"


@dataclass
class Conversion:
    """What one conversion changed, and the digests that now stand for each registration."""

    features: int = 0
    evaluations: int = 0
    predictions: int = 0
    blobs_removed: int = 0
    converted: dict[str, dict[str, str]] = field(default_factory=dict)

    @property
    def changed_anything(self) -> bool:
        return bool(self.features or self.evaluations or self.predictions)

    def details(self) -> dict[str, Any]:
        return {"revision": REVISION, "features": self.features,
                "evaluations": self.evaluations, "predictions": self.predictions,
                "blobs_removed": self.blobs_removed, "converted": self.converted,
                "shapes": "docs/stored-shapes.md"}


def convert_stored_shapes(catalogue: Catalogue, actor_name: str) -> Conversion:
    """Convert every row still in an old shape, in one unit of work; no event when none was.

    Part of an upgrade, which needs write access to the database itself, so it asks no role."""
    conversion = Conversion()
    with UnitOfWork(catalogue) as uow:
        _convert_features(uow, conversion)
        replaced = _convert_evaluations(uow, conversion)
        for old in sorted(replaced):
            if not uow.blobs.is_referenced(old):
                uow.blobs.remove(old)
                conversion.blobs_removed += 1
        if conversion.changed_anything:
            uow.audit.append(actor_name, ACTION, "catalogue", conversion.details())
            uow.commit()
    return conversion


def _convert_features(uow: UnitOfWork, conversion: Conversion) -> None:
    for version, model in uow.versions.with_features():
        assert version.features_json is not None  # with_features() selects only these
        stored = _json(version.features_json, f"model/{model}/version/{version.number} features")
        if isinstance(stored, list):
            continue  # already the JSON array
        subject = f"model/{model}/version/{version.number}"
        if not isinstance(stored, dict) or not isinstance(stored.get("toml"), str):
            raise UnconvertibleRow("its features are in no shape this upgrade knows; nothing "
                                   "was changed", place=subject)
        definitions = parse_feature_file(stored["toml"], origin=f"{subject} features")
        version.features_json = definitions_json(definitions)
        version.registration_digest = stored_registration_digest(uow, version, model)
        conversion.converted[subject] = {"registration_digest": version.registration_digest}
        conversion.features += 1


def _convert_evaluations(uow: UnitOfWork, conversion: Conversion) -> set[str]:
    """Convert every evaluation's record and predictions; return the replaced blob digests."""
    replaced: set[str] = set()
    new_digest: dict[str, str] = {}  # old predictions digest -> new, for shared blobs
    for evaluation, subject in uow.evaluations.every_one():
        changed: dict[str, str] = {}
        record = _record(evaluation.metrics_json, subject)
        if record.to_json() != evaluation.metrics_json:
            evaluation.metrics_json = record.to_json()
            changed["metrics_digest"] = hashlib.sha256(
                evaluation.metrics_json.encode("utf-8")).hexdigest()
            conversion.evaluations += 1
        old = evaluation.predictions_digest
        content = uow.blobs.get(old)
        if not content.startswith(ARROW_MAGIC):
            if old not in new_digest:
                new_digest[old] = uow.blobs.put(_old_predictions(content, subject).to_bytes())
            evaluation.predictions_digest = new_digest[old]
            changed["predictions_digest"] = evaluation.predictions_digest
            replaced.add(old)
            conversion.predictions += 1
        if changed:
            conversion.converted[subject] = changed
    return replaced


def _record(text: str, subject: str) -> EvaluationRecord:
    """The one shape, from a record written before it: binary records already had every key;
    the others lacked `threshold` and `calibration`, which the one shape gives as null and []."""
    document = _json(text, f"{subject} metrics")
    if not isinstance(document, dict):
        raise UnconvertibleRow("its metrics are not a JSON object; nothing was changed",
                               place=subject)
    document.setdefault("threshold", None)
    document.setdefault("calibration", [])
    document.setdefault("slice_columns", [])
    document.setdefault("slices", {})
    return read_evaluation_record(json.dumps(document), place=f"{subject} metrics")


def _old_predictions(content: bytes, subject: str) -> Predictions:
    """Predictions as stored before revision 0009: zlib-compressed JSON of named columns plus
    the task, which Predictions.from_columns validates again."""
    try:
        columns = json.loads(zlib.decompress(content).decode("utf-8"))
    except (zlib.error, UnicodeDecodeError, json.JSONDecodeError) as error:
        raise UnconvertibleRow(f"its predictions are in no shape this upgrade knows ({error}); "
                               "nothing was changed", place=subject) from None
    return Predictions.from_columns(columns)


def _json(text: str, place: str) -> Any:
    try:
        return json.loads(text)
    except json.JSONDecodeError as error:
        raise UnconvertibleRow(f"not JSON ({error}); nothing was changed", place=place) from None


def refuse_to_unconvert(catalogue: Catalogue) -> None:
    """Going back below revision 0009 would need the old shapes written again, which nothing
    does: a catalogue holding converted rows stays, and one holding none goes back freely."""
    with UnitOfWork(catalogue, write=False) as uow:
        if uow.versions.with_features() or uow.evaluations.every_one():
            raise UnconvertibleRow(
                "this catalogue holds feature definitions or evaluations in the shapes of "
                "revision 0009, which older releases cannot read; restore an export taken "
                "before the upgrade instead of downgrading", place="revision 0009")
