"""Process-wide runtime settings: how many threads numpy's BLAS may use.

OpenBLAS starts one thread per core for every matrix product. The service runs one process per
core (`serve --workers N`, table-build pools, the scheduler beside them), so extra BLAS threads
only compete with those processes; on a busy 2-core machine they made the outlook's table
application about 15x slower than one thread (bench/bench_outlook.py measures both). Hence one
BLAS thread per process by default (`SHOALCAST_BLAS_THREADS`, 0 = the library's default).
"""

from __future__ import annotations

import logging

log = logging.getLogger(__name__)

_applied: int | None = None


def limit_blas_threads(threads: int | None = None) -> int | None:
    """Limit BLAS to `threads` per process (None: the `blas_threads` setting; 0: leave it as it
    is). Returns the limit in force. Idempotent; needs `threadpoolctl` (a dependency)."""
    global _applied
    if threads is None:
        from app.config import get_settings

        threads = get_settings().blas_threads
    if threads <= 0 or threads == _applied:
        return _applied
    from threadpoolctl import threadpool_limits

    threadpool_limits(limits=threads, user_api="blas")
    _applied = threads
    log.debug("BLAS limited to %d thread(s) per process", threads)
    return threads


__all__ = ["limit_blas_threads"]
