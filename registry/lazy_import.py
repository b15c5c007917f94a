"""Modules that load on first use: the compiled kernels bring in numba, which takes a third of a
second to import, and most commands (schema checks in a producer's CI, say) never need it."""

from __future__ import annotations

import importlib
from typing import Any


class LazyModule:
    """Stands for a module until one of its attributes is read, then imports it.

    The import goes through importlib.import_module, whose module locks make it safe when two
    threads reach for the module at once (importlib.util.LazyLoader is not, before Python 3.12).
    """

    def __init__(self, name: str) -> None:
        self._name = name

    def __getattr__(self, attribute: str) -> Any:
        value = getattr(importlib.import_module(self._name), attribute)
        setattr(self, attribute, value)  # later reads find it without coming here
        return value


def lazy_import(name: str) -> LazyModule:
    return LazyModule(name)
