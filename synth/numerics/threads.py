"""One BLAS thread for synth's many small matrices.

synth's numerics work on matrices of order 2 to 40: a closed loop's state
matrix, a companion matrix, a block exponential.  A multi-threaded BLAS
(OpenBLAS by default) hands even these to its thread pool, and on a shared
machine waking the pool costs milliseconds per call: a 3 x 3 matrix
exponential took 3 to 16 ms instead of 30 us on the project's 2-core
machine under load (measured; ``tests/benchmarks/bench_design.py`` shows the
effect).  :func:`single_threaded` limits the BLAS pools to one thread for
the duration of a call and restores them afterwards (threadpoolctl), so a
caller's own settings are untouched.

References
----------
.. [1] threadpoolctl, "Python helpers to limit the number of threads used
   in native libraries", https://github.com/joblib/threadpoolctl (the
   library used here).
"""

from __future__ import annotations

from contextlib import contextmanager

__all__ = ["single_threaded"]


@contextmanager
def single_threaded():
    """Context manager: BLAS pools limited to one thread inside, restored on exit."""
    from threadpoolctl import threadpool_limits

    with threadpool_limits(limits=1, user_api="blas"):
        yield
