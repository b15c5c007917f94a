"""When each version held a serving stage: spells read from the model's stage events.

Every ladder stage above the first one serves (the first, `candidate` by default, only holds
registered versions). A version serves from the moment it enters such a stage until it leaves
its last one: moving on, being replaced, rolled back or retired.
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence
from dataclasses import dataclass
from datetime import UTC, datetime

ENTERING = ("entered", "restored")
LEAVING = ("moved-on", "replaced", "rolled-back", "retired")


@dataclass(frozen=True)
class Spell:
    """[start, end) in microseconds since the epoch; end None while it lasts."""

    start: int
    end: int | None
    stages: tuple[str, ...]

    def holds(self, micros: int) -> bool:
        return self.start <= micros and (self.end is None or micros < self.end)


def _micros(moment: datetime) -> int:
    moment = moment if moment.tzinfo else moment.replace(tzinfo=UTC)  # SQLite keeps naive UTC
    return int(round(moment.timestamp() * 1_000_000))


def serving_spells(events: Iterable[tuple[int, str, str, datetime]],
                   serving_stages: Sequence[str]) -> dict[int, tuple[Spell, ...]]:
    """Per version number, the spells during which it held at least one serving stage."""
    held: dict[int, set[str]] = {}
    opened: dict[int, tuple[int, list[str]]] = {}
    spells: dict[int, list[Spell]] = {}
    for number, stage, event, when in events:
        if stage not in serving_stages:
            continue
        stages = held.setdefault(number, set())
        moment = _micros(when)
        if event in ENTERING:
            if not stages:
                opened[number] = (moment, [])
            stages.add(stage)
            opened[number][1].append(stage)
        elif event in LEAVING and stage in stages:
            stages.discard(stage)
            if not stages:
                start, names = opened.pop(number)
                spells.setdefault(number, []).append(Spell(start, moment, tuple(names)))
    for number, (start, names) in opened.items():
        spells.setdefault(number, []).append(Spell(start, None, tuple(names)))
    return {number: _joined(sorted(found, key=lambda s: s.start))
            for number, found in spells.items()}


def _joined(spells: list[Spell]) -> tuple[Spell, ...]:
    """Spells that touch become one: moving up the ladder leaves a stage and enters the next
    at the same moment."""
    joined: list[Spell] = []
    for spell in spells:
        last = joined[-1] if joined else None
        if last is not None and last.end is not None and last.end >= spell.start:
            end = None if spell.end is None else max(last.end, spell.end)
            joined[-1] = Spell(last.start, end, last.stages + spell.stages)
        else:
            joined.append(spell)
    return tuple(joined)


def holder_at(spells: dict[int, tuple[Spell, ...]], micros: int) -> list[int]:
    """The versions serving at a moment."""
    return sorted(n for n, found in spells.items() if any(s.holds(micros) for s in found))
