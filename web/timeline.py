"""Geometry of a model's timeline: one lane per stage, a bar per holder from the step it entered
to the step it left, and a mark per attempt (promotion, roll back, refusal) linking to its
report. Steps are attempts and registrations in time order, evenly spaced: a story told in a
few seconds and one told over months read alike; the times are in each bar's tooltip."""

from __future__ import annotations

from dataclasses import dataclass

from registry.service.queries.models import Timeline

WIDTH = 1100
LANE = 38
LABEL_ROOM = 96
TOP = 26
RIGHT = 24
BAR = 20


@dataclass(frozen=True)
class TimelineBar:
    x: float
    y: float
    width: float
    label: str  # v1, shown inside when it fits
    title: str
    is_current: bool
    restored: bool


@dataclass(frozen=True)
class TimelineMark:
    x: float
    y: float
    kind: str  # promotion | rollback | refusal
    report_id: int
    title: str


@dataclass(frozen=True)
class TimelineDrawing:
    width: float
    height: float
    lanes: tuple[tuple[float, str], ...]  # y of the lane's middle, stage
    bars: tuple[TimelineBar, ...]
    marks: tuple[TimelineMark, ...]
    left: float
    right: float


def draw(timeline: Timeline) -> TimelineDrawing | None:
    if not timeline.steps:
        return None
    left, right = LABEL_ROOM, WIDTH - RIGHT
    step = (right - left) / (timeline.steps + 1)
    lane_of = {stage: i for i, stage in enumerate(timeline.lanes)}

    def middle(stage: str) -> float:
        return TOP + lane_of[stage] * LANE + LANE / 2

    bars = []
    for bar in timeline.bars:
        end = bar.end if bar.end is not None else timeline.steps + 1
        x1, x2 = left + bar.start * step + step / 2, left + end * step + step / 2
        if bar.end is None:
            x2 = right
        held = (f"from {bar.entered_at} to {bar.left_at}" if bar.left_at
                else f"since {bar.entered_at}, holds it now")
        how = "restored by a roll back" if bar.how_entered == "restored" else "entered"
        bars.append(TimelineBar(x1, middle(bar.stage) - BAR / 2, max(x2 - x1, 6),
                                f"v{bar.version}", f"v{bar.version} in {bar.stage}: {how}, {held}",
                                bar.end is None, bar.how_entered == "restored"))
    words = {"promotion": "promoted", "rollback": "rolled back to", "refusal": "refused"}
    # Promotions and roll backs sit above the bar they start; a refusal, which starts none,
    # sits on its lane.
    marks = tuple(TimelineMark(left + m.step * step + step / 2,
                               middle(m.stage) + (4 if m.kind == "refusal" else -BAR / 2 - 5),
                               m.kind, m.report_id,
                               f"{words[m.kind]} v{m.version} "
                               f"{'for' if m.kind == 'refusal' else 'in'} {m.stage} at {m.at}: "
                               f"open report {m.report_id}")
                  for m in timeline.marks)
    height = TOP + LANE * len(timeline.lanes) + 12
    return TimelineDrawing(WIDTH, height, tuple((middle(s), s) for s in timeline.lanes),
                           tuple(bars), marks, left, right)
