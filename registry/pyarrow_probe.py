"""pyarrow, told at its first conversion that pandas is not there.

At its first conversion (pa.array, pa.scalar, fill_null) pyarrow asks whether pandas is
installed by importing it, which takes 0.16-0.22 s where pandas is installed, before the first
batch of a dataset is read. The answer only lets pyarrow recognise pandas objects handed to it,
and lockkeeper never hands it any; so the command line lets that first question meet no pandas,
as in an install without it (lockkeeper does not need pandas). A later conversion *to* pandas
(Table.to_pandas) is unaffected: pyarrow imports pandas again whenever it truly needs it.
"""

from __future__ import annotations

import importlib.abc
import sys
from collections.abc import Sequence
from types import ModuleType


class _NoPandas(importlib.abc.MetaPathFinder):
    def find_spec(self, fullname: str, path: Sequence[str] | None,
                  target: ModuleType | None = None) -> None:
        if fullname == "pandas":
            raise ModuleNotFoundError("pandas is hidden from pyarrow's probe", name=fullname)
        return None


def probe_without_pandas() -> None:
    """Make pyarrow's one question about pandas now, with pandas hidden (no effect once
    pandas is imported, or once pyarrow has asked)."""
    if "pandas" in sys.modules:
        return
    hidden = _NoPandas()
    sys.meta_path.insert(0, hidden)
    try:
        import pyarrow as pa

        pa.array([0])  # the first conversion asks, and pyarrow remembers the answer
    finally:
        sys.meta_path.remove(hidden)
