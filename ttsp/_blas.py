"""One BLAS thread for ttsp's linear algebra (private).

The fits solve many small problems (matrices of tens to a few hundred rows): a second BLAS thread
only adds synchronisation, and on a loaded machine (other programs, or the workers of a batch)
OpenBLAS threads that wait for a core made a joint shift fit forty times slower (28 s against
0.7 s for one fit on a 2-core machine beside two busy processes).
"""

from __future__ import annotations

from contextlib import AbstractContextManager

__all__ = ["one_blas_thread"]

_controller = None


def one_blas_thread() -> AbstractContextManager:
    """A context in which the BLAS libraries loaded by numpy and scipy use one thread. The
    libraries are looked up once per process (a fresh lookup costs 0.3 ms, reuse 0.01 ms)."""
    global _controller
    if _controller is None:
        from threadpoolctl import ThreadpoolController

        _controller = ThreadpoolController()
    return _controller.limit(limits=1, user_api="blas")
