"""One BLAS/OpenMP thread per process, for this process and the workers it starts.

On 2 cores, two single-threaded workers gave 1.9x while oversubscribed threads gave
0.4-1.3x (DEVELOPERS.md, Speed). Spawned children read the thread
variables from the environment when numpy loads, which may be before any initializer
runs, so the variables are set in the parent while its pool lives; libraries already
loaded are limited through threadpoolctl. No numerical library is imported at the top.
"""

from __future__ import annotations

import os
from collections.abc import Iterator
from contextlib import contextmanager

__all__ = ["BLAS_THREAD_VARIABLES", "single_thread_blas", "limit_loaded_blas"]

BLAS_THREAD_VARIABLES = ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS",
                         "VECLIB_MAXIMUM_THREADS", "NUMEXPR_NUM_THREADS")


def limit_loaded_blas() -> None:
    """Limit the thread pools of libraries loaded already in this process to one thread."""
    try:
        from threadpoolctl import threadpool_limits
    except ImportError:
        return
    threadpool_limits(1)


@contextmanager
def single_thread_blas() -> Iterator[None]:
    """One thread for this process's pools and for processes started inside the block;
    the environment and the limits are restored at its end."""
    from threadpoolctl import threadpool_limits

    saved = {k: os.environ.get(k) for k in BLAS_THREAD_VARIABLES}
    os.environ.update({k: "1" for k in BLAS_THREAD_VARIABLES})
    try:
        with threadpool_limits(limits=1):
            yield
    finally:
        for key, value in saved.items():
            if value is None:
                os.environ.pop(key, None)
            else:
                os.environ[key] = value
