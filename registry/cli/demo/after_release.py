"""The demo's fourteen days after release: v1 live, v2 in shadow, outcomes a week late.

Each day's served batch is recorded the morning after; each day's outcomes arrive seven days
after it; from day 10 the pressure sensors' calibration fault shows as a drift alarm on
`mean_pressure_kpa`. The steps carry the story's dates, and the demo's clock travels to them.
"""

from __future__ import annotations

from datetime import UTC, datetime, timedelta

from registry.cli.demo.scenario import AUTHOR, BRACKWATER, Step

STORY_START = datetime(2026, 10, 26, 8, 0, tzinfo=UTC)  # v1 goes live the week before day 1
FIRST_DAY = datetime(2026, 11, 2, tzinfo=UTC)
DAYS = 14
OUTCOME_DELAY_DAYS = 7


def _day(day: int) -> datetime:
    return FIRST_DAY + timedelta(days=day - 1)


def after_release_steps() -> list[Step]:
    served, outcomes = BRACKWATER / "served", BRACKWATER / "outcomes"
    timed = []
    for day in range(1, DAYS + 1):
        timed.append((_day(day + 1) + timedelta(hours=1), Step(
            AUTHOR, ("serving", "record", "main-burst-risk",
                     str(served / f"served-day-{day:02d}.parquet")),
            caption=("The serving system sends back each day's rows: v1 live, v2 scoring the "
                     "same segments in shadow.") if day == 1 else "")))
        timed.append((_day(day + OUTCOME_DELAY_DAYS) + timedelta(hours=9), Step(
            AUTHOR, ("serving", "outcomes", "main-burst-risk",
                     str(outcomes / f"outcomes-day-{day:02d}.csv")),
            caption=("Outcomes arrive a week later and join the rows they belong to; a few "
                     "are for segments the feed never carried.") if day == 1 else "")))
    timed.sort(key=lambda pair: pair[0])
    steps = [Step(s.user, s.arguments, s.expect, s.caption, at=moment) for moment, s in timed]
    steps.append(Step(AUTHOR, ("serving", "report", "main-burst-risk", "--since",
                               f"{_day(DAYS - 4):%Y-%m-%d}"),
                      caption="From day 10 the pressure sensors read high: a drift alarm on "
                              "mean_pressure_kpa, for both versions.",
                      at=_day(DAYS + OUTCOME_DELAY_DAYS) + timedelta(hours=10)))
    return steps
