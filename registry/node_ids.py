"""The ids that name things in the catalogue, in lineage, the audit log and integrity findings:
`model/NAME`, `model/NAME/version/N`, `model/NAME/stage/STAGE`, `dataset/NAME`, `feed/NAME`,
`consumer/NAME`, `user/NAME`. One place formats and reads them, so every id of one thing is the
same string."""

from __future__ import annotations

import re

# The patterns that read an id back; groups are the parts the formatting functions take.
MODEL_ID = re.compile(r"^model/([^/]+)$")
VERSION_ID = re.compile(r"^model/([^/]+)/version/([0-9]{1,9})$")
EVALUATION_ID = re.compile(r"^model/([^/]+)/version/([0-9]{1,9})/evaluation/([^/]+)$")
STAGE_ID = re.compile(r"^model/([^/]+)/stage/([^/]+)$")
DATASET_ID = re.compile(r"^dataset/([^/]+)$")
CONTRACT_ID = re.compile(r"^(feed|consumer)/([^/]+)$")
USER_ID = re.compile(r"^user/([^/]+)$")


def model_id(model: str) -> str:
    return f"model/{model}"


def version_id(model: str, number: int) -> str:
    return f"{model_id(model)}/version/{number}"


def stage_id(model: str, stage: str) -> str:
    return f"{model_id(model)}/stage/{stage}"


def evaluation_id(model: str, number: int, dataset: str) -> str:
    return f"{version_id(model, number)}/evaluation/{dataset}"


def dataset_id(name: str) -> str:
    return f"dataset/{name}"


def contract_id(kind: str, name: str) -> str:
    """A feed (`feed/NAME`) or a consumer (`consumer/NAME`)."""
    return f"{kind}/{name}"


def contract_version_id(kind: str, name: str, number: int) -> str:
    """One numbered schema of a feed or a consumer."""
    return f"{contract_id(kind, name)}/version/{number}"


def user_id(name: str) -> str:
    """A person, as the subject of role and token events."""
    return f"user/{name}"
