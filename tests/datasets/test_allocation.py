"""Large blocks freed by one batch serve the next: counted by the kernel's own tally of page
faults (getrusage ru_minflt), in fresh processes so this test runner's heap plays no part."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import pytest

from registry.datasets.allocation import _is_glibc, reuse_large_blocks

BATCHES = """
import resource, sys
import numpy as np
sys.path.insert(0, {root!r})
if sys.argv[1] == "reuse":
    from registry.datasets.allocation import reuse_large_blocks
    assert reuse_large_blocks()
before = resource.getrusage(resource.RUSAGE_SELF).ru_minflt
for _ in range(40):
    # a batch's arrays of several sizes, freed in no set order
    arrays = [np.ones(n) for n in (1_000_000, 3_000_000, 250_000, 2_000_000)]
    arrays.append(arrays[0] * 2 + arrays[2].sum())
    del arrays[1]
    del arrays
print(resource.getrusage(resource.RUSAGE_SELF).ru_minflt - before)
"""


def _page_faults(mode: str) -> int:
    script = BATCHES.format(root=str(Path(__file__).resolve().parents[2]))
    done = subprocess.run([sys.executable, "-c", script, mode], capture_output=True, text=True,
                          check=True, timeout=120)
    return int(done.stdout.split()[-1])


@pytest.mark.skipif(not _is_glibc(), reason="the thresholds are glibc's malloc's")
def test_arrays_of_each_batch_reuse_the_pages_of_the_last():
    plain, reused = _page_faults("plain"), _page_faults("reuse")
    # 40 batches of about 50 MiB: without reuse, several MiB of each are faulted in afresh
    assert plain > 40 * 1000
    assert reused * 5 < plain


def test_setting_the_thresholds_twice_is_harmless():
    assert reuse_large_blocks() == reuse_large_blocks() == _is_glibc()
