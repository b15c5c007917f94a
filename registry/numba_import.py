"""numba, imported without its BLAS probe.

As it loads its numpy support (numba.np.arraymath, at the first compile or cache load) numba
asks whether SciPy's BLAS is there by importing scipy.linalg.cython_blas, which takes 0.2 s where
SciPy is installed, before any compiled kernel can run. The answer only chooses how
np.correlate and np.convolve are compiled (a loop or a BLAS dot product), and no kernel of ours
uses either; linear algebra (np.dot, np.linalg) asks for BLAS again when it is compiled. So the
probe is answered "no BLAS", as in an install without SciPy, which numba does not require. The
kernel modules import numba from here.
"""

from __future__ import annotations

import sys
from types import ModuleType

_PROBE = "scipy.linalg.cython_blas"


def _numba() -> ModuleType:
    if "numba" in sys.modules:
        return sys.modules["numba"]
    hidden = _PROBE not in sys.modules
    if hidden:
        sys.modules[_PROBE] = None  # type: ignore[assignment]  # importing it raises ImportError
    try:
        import numba
        import numba.np.arraymath  # noqa: F401 - the module that asks
    finally:
        if hidden and _PROBE in sys.modules and sys.modules[_PROBE] is None:
            del sys.modules[_PROBE]
    return numba


numba = _numba()
