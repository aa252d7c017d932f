"""Test-session settings shared by every test file.

The computations are many small linear-algebra problems; a multi-threaded BLAS only adds
overhead to them (and heavy contention on a shared 2-core machine), so the whole session runs
with one BLAS thread. Results do not depend on it.
"""

from threadpoolctl import threadpool_limits

_BLAS_LIMIT = threadpool_limits(limits=1, user_api="blas")
