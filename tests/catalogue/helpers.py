"""Small files for catalogue tests: a schema, a document and a manifest written to a folder."""

from __future__ import annotations

import json
from pathlib import Path

INPUT_SCHEMA = {
    "type": "record", "name": "Segment", "namespace": "test.assets",
    "fields": [{"name": "segment_id", "type": "string"},
               {"name": "diameter_mm", "type": "int"}],
}
OUTPUT_SCHEMA = {
    "type": "record", "name": "Score", "namespace": "test.scores",
    "fields": [{"name": "probability", "type": "double"}],
}


def write_version_files(folder: Path, *, document: bytes = b"model-bytes-v1",
                        description: str = "first", manifest_extra: str = "") -> tuple[Path, Path]:
    folder.mkdir(parents=True, exist_ok=True)
    (folder / "input.avsc").write_text(json.dumps(INPUT_SCHEMA))
    (folder / "output.avsc").write_text(json.dumps(OUTPUT_SCHEMA))
    document_path = folder / "model.bin"
    document_path.write_bytes(document)
    manifest_path = folder / "manifest.toml"
    manifest_path.write_text(
        f'description = "{description}"\ncode_revision = "abc123"\nauthor = "ines.okafor"\n'
        'input_schema = "input.avsc"\noutput_schema = "output.avsc"\n' + manifest_extra)
    return document_path, manifest_path
