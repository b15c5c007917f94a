"""The feed check's verdicts against fastavro, the test oracle of Avro Schema Resolution: for
every holder, a record written with the proposed feed schema reads with the holder's input
schema exactly when the check says the holder can read it. Schemas from the demo scenario."""

from __future__ import annotations

import io
import json
import warnings

import fastavro
import pytest

from registry.cli.demo import BRACKWATER
from tests.catalogue.stage_helpers import register
from tests.contracts.contract_helpers import APPROVER, set_up_contracts

SEGMENT = {"segment_id": "BW-0001", "district": "OLD_TOWN", "pipe_material": "CAST_IRON",
           "pipe_age_years": 61.5, "diameter_mm": 150, "mean_pressure_kpa": 420.0,
           "pressure_transients_7d": 3, "soil_corrosivity": "HIGH", "min_air_temp_c_7d": -2.5,
           "repairs_5y": 2}


def _schema(folder: str, name: str) -> dict:
    return json.loads((BRACKWATER / folder / f"{name}.avsc").read_text())


def _fastavro_reads(writer: dict, reader: dict) -> bool:
    datum = {f["name"]: SEGMENT[f["name"]] for f in writer["fields"]}
    buffer = io.BytesIO()
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        fastavro.schemaless_writer(buffer, fastavro.parse_schema(writer), datum)
        buffer.seek(0)
        try:
            fastavro.schemaless_reader(buffer, fastavro.parse_schema(writer),
                                       fastavro.parse_schema(reader))
        except Exception:  # fastavro's resolution errors have no common base class
            return False
    return True


@pytest.mark.parametrize("proposal", ["segment-features-v2", "segment-features-v3-proposed"])
def test_every_holder_verdict_agrees_with_fastavro(cli, tmp_path, proposal):
    set_up_contracts(cli, tmp_path, feed=None)
    cli.json("feed", "create", "segment-features")
    cli.json("feed", "publish", "segment-features",
             str(BRACKWATER / "contracts" / "segment-features-v1.avsc"))
    cli.json("model", "set-feed", "m", "segment-features")
    readers = {}
    for number in (1, 2, 3, 4):
        schema = _schema("schemas", f"segment-v{number}")
        version = register(cli, tmp_path, f"v{number}", schema=schema)
        readers[version] = schema
    cli.json("promote", "m", "1", "--to", "live", user=APPROVER)
    writer = _schema("contracts", proposal)
    check = cli.json("feed", "check", "segment-features",
                     str(BRACKWATER / "contracts" / f"{proposal}.avsc"),
                     expect=0 if proposal.endswith("v2") else 1)
    verdicts = {holder["version"]: holder["reads"] for holder in check["holders"]}
    assert set(verdicts) == {1, 2, 3, 4}
    for version, reads in verdicts.items():
        assert reads == _fastavro_reads(writer, readers[version]), (proposal, version)
