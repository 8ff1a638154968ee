"""numba's ``njit``, for the compiled kernels of this stage, loaded without numba's linear-algebra probe.

When numba first compiles or loads a function it imports ``numba.np.arraymath``, which at import asks
whether a BLAS is available for ``np.dot`` and ``np.linalg`` in compiled code by importing
``scipy.linalg.cython_blas`` when SciPy is installed (numba/np/linalg.py, ``ensure_blas``).  No kernel here
uses linear algebra, and that import is about 0.3 s of CPU, a third of numba's fixed cost in every process
that runs a kernel (``periplus verify`` pays it for the shipped claims; bench/hunt_speed.py prints the fixed
cost).  So the first import of numba here loads ``numba.np.arraymath`` while ``scipy.linalg.cython_blas``
is marked missing in ``sys.modules``, and then unmarks it: numba records that it has no BLAS, which only
means that ``np.dot`` and ``np.linalg`` do not compile in *this process*; SciPy itself imports as before.
A process that had already imported either module keeps numba's own answer.
"""

from __future__ import annotations

import sys

__all__ = ["njit"]

_PROBED = "scipy.linalg.cython_blas"


def _load_numba_without_blas_probe() -> None:
    if _PROBED in sys.modules or "numba.np.arraymath" in sys.modules:
        return
    sys.modules[_PROBED] = None  # type: ignore[assignment]  # import-system protocol: None means "not found"
    try:
        import numba.np.arraymath  # noqa: F401  # the module whose import probes for a BLAS
    finally:
        del sys.modules[_PROBED]


_load_numba_without_blas_probe()

from numba import njit  # noqa: E402  # after the load above
