"""read_document: PFA or artifact, digests, and the manifest's schemas against the document's."""

import hashlib
import json

import pytest

from registry.documents import (MissingInputSchema, SchemaContradiction, document_kind,
                                read_document)
from registry.schema import parse
from .pfa_examples import LOGISTIC_REGRESSION

DOCUMENT = json.dumps(LOGISTIC_REGRESSION).encode()


def test_kind_follows_the_file_name():
    assert document_kind("main-burst-risk-v1.pfa.json") == "pfa"
    assert document_kind("model.PFA") == "pfa"
    assert document_kind("model.onnx") == "artifact"
    assert document_kind("estimator.pkl") == "artifact"


def test_a_pfa_document_is_kept_as_received_and_digested_canonically():
    summary = read_document(DOCUMENT, filename="v1.pfa.json")
    pretty = json.dumps(LOGISTIC_REGRESSION, indent=2).encode()
    assert summary.kind == "pfa"
    assert summary.stored_bytes is DOCUMENT and summary.size == len(DOCUMENT)
    assert summary.digest == read_document(pretty, filename="v1.pfa.json").digest
    assert summary.digest != hashlib.sha256(DOCUMENT).hexdigest()
    assert summary.input_schema.name == "brackwater.assets.Segment"


def test_a_manifest_may_repeat_the_documents_schemas_in_another_form():
    # Compared by Parsing Canonical Form (Avro specification): docs and defaults do not count.
    declared = json.loads(json.dumps(LOGISTIC_REGRESSION["input"]))
    declared["doc"] = "the feed's record"
    summary = read_document(DOCUMENT, filename="v1.pfa", manifest_input=parse(declared),
                            manifest_output=parse(LOGISTIC_REGRESSION["output"]))
    assert summary.kind == "pfa"


@pytest.mark.parametrize("key", ["input", "output"])
def test_a_manifest_that_contradicts_the_document_fails_naming_the_key(key):
    declared = json.loads(json.dumps(LOGISTIC_REGRESSION[key]))
    declared["fields"][1]["type"] = "float"
    options = {f"manifest_{key}": parse(declared)}
    with pytest.raises(SchemaContradiction, match=f"v1.pfa /{key}") as caught:
        read_document(DOCUMENT, filename="v1.pfa", **options)
    assert caught.value.place == f"manifest {key}_schema"


def test_an_artifact_is_digested_as_bytes_with_the_manifests_schemas():
    data = b"\x80\x04estimator bytes"
    schema = parse(LOGISTIC_REGRESSION["input"])
    summary = read_document(data, filename="model.pkl", manifest_input=schema)
    assert summary.kind == "artifact"
    assert summary.digest == hashlib.sha256(data).hexdigest()
    assert summary.input_schema is schema and summary.output_schema is None
    assert summary.method is None and summary.cells == ()


def test_an_artifact_without_an_input_schema_is_refused():
    with pytest.raises(MissingInputSchema) as caught:
        read_document(b"onnx", filename="model.onnx")
    assert caught.value.place == "manifest input_schema"
