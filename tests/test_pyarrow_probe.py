"""pyarrow's question about pandas, answered "not installed" by the command line
(registry/pyarrow_probe.py): the conversions lockkeeper makes no longer import pandas, and a
conversion to pandas still works where pandas is installed."""

from __future__ import annotations

import subprocess
import sys

import pytest

SCRIPT = """
import sys
from registry.pyarrow_probe import probe_without_pandas
probe_without_pandas()
import numpy as np, pyarrow as pa, pyarrow.compute as pc
pa.array([1, None]); pa.array(np.arange(3)); pa.scalar(1.5)
pc.fill_null(pa.array([1, None]), 0)
print("pandas imported" if "pandas" in sys.modules else "no pandas")
if len(sys.argv) > 1:
    print(type(pa.table({"a": [1, 2]}).to_pandas()).__name__)
"""


def run(*arguments: str) -> list[str]:
    done = subprocess.run([sys.executable, "-c", SCRIPT, *arguments], capture_output=True,
                          text=True, check=True, timeout=120)
    return done.stdout.split()


def test_the_conversions_of_the_dataset_code_import_no_pandas():
    assert run() == ["no", "pandas"]


def test_a_conversion_to_pandas_still_imports_it_where_installed():
    pytest.importorskip("pandas")
    assert run("to-pandas") == ["no", "pandas", "DataFrame"]
