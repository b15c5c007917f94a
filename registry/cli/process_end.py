"""The end of a `lockkeeper` process: its exit handlers run, the interpreter's teardown does not.

Once a command has written its output, the interpreter would still tear down every module it
loaded. With numba, LLVM and pyarrow loaded (the dataset commands) that took 0.13-0.2 s of
freeing memory the operating system takes back at once. So the command line's own process ends
the way the interpreter begins to: it waits for its threads and runs every exit handler (thread
and process pools, logging, temporary files), flushes its output, and then ends with the exit
code. Commands run in-process (click's test runner, an embedding program) exit as usual.
"""

from __future__ import annotations

import atexit
import os
import sys
import threading
from typing import NoReturn


def end_process(code: int) -> NoReturn:
    threading._shutdown()  # type: ignore[attr-defined]  # what the interpreter calls first
    atexit._run_exitfuncs()
    for stream in (sys.stdout, sys.stderr):
        try:
            stream.flush()
        except (OSError, ValueError):  # a reader gone (broken pipe) or a stream closed
            pass
    os._exit(code)
