"""The cast and the files of the demo story, and what one step of it is. All of it invented."""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from datetime import datetime
from pathlib import Path

SEED = Path(__file__).resolve().parents[3] / "seed_data"
BRACKWATER = SEED / "brackwater"
NIGHT_FLOW = SEED / "night_flow"

ADMIN, AUTHOR, APPROVER, SECOND_APPROVER = ("mara.kowalczyk", "ines.okafor", "tomas.lindqvist",
                                            "priya.raman")
TELEMETRY = "efua.mensah"  # the telemetry team's engineer, who owns the feed
SERVING_SYSTEM = "burst-scoring-service"


@dataclass(frozen=True)
class Step:
    """One command of the story, who runs it, and the exit code the story expects. A step
    with an `action` does something a person would do outside lockkeeper instead (its
    arguments are what the story prints for it).

    `local` steps run on the machine that holds the catalogue whichever door the others take:
    creating it, naming its first admin and their token, and its signing key (a file there).
    Steps with `catalogue` false need none (the serving side's offline check)."""

    user: str
    arguments: tuple[str, ...]
    expect: int = 0
    caption: str = ""
    at: datetime | None = None  # the story's date of the step, when it has one
    action: Callable[[], None] | None = None
    local: bool = False
    catalogue: bool = True
