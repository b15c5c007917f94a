"""The read commands an upgrade test replays, and the recorder of what they printed before it.

fixtures/demo-catalogue-rev0007.reads.json holds the `--json` documents the code of revision
0007 printed on fixtures/demo-catalogue-rev0007.db; it was recorded once, with that code, by

    python -m tests.catalogue.upgrade_reads CATALOGUE.db OUT.json

(run from a checkout of that code, on a copy of the fixture), and is never regenerated.
"""

from __future__ import annotations

import json
import sys
from pathlib import Path

MODEL = "main-burst-risk"
NIGHT_FLOW = "night-flow-leak"
TELEMETRY = "brackwater-telemetry-extract"
DATASETS = ("brackwater-asset-register", "brackwater-evaluation-set", "brackwater-live-sample",
            TELEMETRY, "brackwater-training-set", "night-flow-evaluation-set",
            "night-flow-live-sample", "night-flow-training-set")

# Every read command that prints a catalogue document, with the arguments before `--json`.
READS: tuple[tuple[str, ...], ...] = (
    ("model", "list"),
    ("model", "show", MODEL),
    ("model", "show", NIGHT_FLOW),
    ("model", "policy", "show", NIGHT_FLOW),
    ("status", MODEL),
    ("status", NIGHT_FLOW),
    ("history", MODEL),
    ("history", NIGHT_FLOW),
    ("dataset", "list"),
    *(("dataset", "show", name) for name in DATASETS),
    ("lineage", f"dataset/{TELEMETRY}", "--down"),
    ("lineage", f"{MODEL}@2", "--up"),
    ("lineage", f"{NIGHT_FLOW}@1", "--up"),
    ("report", "show", "1"),
    ("report", "show", "5"),
    ("impact", MODEL, "2", "--to", "live"),
    ("serving", "report", MODEL, "--since", "2026-11-11"),
    ("feed", "list"),
    ("feed", "show", "segment-features"),
    ("consumer", "list"),
    ("release", "show", MODEL, "--stage", "live"),
    ("key", "list"),
    ("audit", "log", "--limit", "500"),
)


def key(arguments: tuple[str, ...]) -> str:
    return " ".join(arguments)


def record(url: str) -> dict[str, object]:
    from tests.conftest import run_cli

    documents: dict[str, object] = {}
    for arguments in READS:
        result = run_cli(["--db", url, *arguments, "--json"])
        assert result.exit_code == 0, (arguments, result.output)
        documents[key(arguments)] = json.loads(result.stdout)
    return documents


if __name__ == "__main__":
    catalogue, out = sys.argv[1:3]
    Path(out).write_text(json.dumps(record(f"sqlite:///{Path(catalogue).resolve()}"),
                                    indent=1, sort_keys=True) + "\n", encoding="utf-8")
