"""The demo: the invented Brackwater story played through the command line (`lockkeeper demo`),
on a local catalogue or on a server holding it."""

from registry.cli.demo.scenario import (
    ADMIN,
    APPROVER,
    AUTHOR,
    BRACKWATER,
    NIGHT_FLOW,
    SECOND_APPROVER,
    SEED,
    SERVING_SYSTEM,
    TELEMETRY,
    Step,
)
from registry.cli.demo.story import (
    SALTMARSH_WAIVER,
    fresh_sqlite_file,
    play,
    run_in_process,
    serving_handoff,
    story,
)

__all__ = ["ADMIN", "APPROVER", "AUTHOR", "BRACKWATER", "NIGHT_FLOW", "SALTMARSH_WAIVER",
           "SECOND_APPROVER", "SEED", "SERVING_SYSTEM", "TELEMETRY", "Step", "fresh_sqlite_file",
           "play", "run_in_process", "serving_handoff", "story"]
