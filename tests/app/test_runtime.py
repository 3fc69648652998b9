"""app.runtime: BLAS threads per process. The reference is threadpoolctl's own report of the loaded
BLAS libraries (threadpool_info), an independent reading of what the library was told."""

from __future__ import annotations

import numpy as np
import pytest
from threadpoolctl import threadpool_info, threadpool_limits

from app import runtime
from app.config import Settings


def _blas_threads() -> set[int]:
    return {i["num_threads"] for i in threadpool_info() if i["user_api"] == "blas"}


def test_the_default_is_one_blas_thread_per_process() -> None:
    assert Settings().blas_threads == 1


def test_limit_sets_the_blas_threads_and_zero_leaves_them(monkeypatch: pytest.MonkeyPatch) -> None:
    np.ones((2, 2)) @ np.ones((2, 2))  # numpy's BLAS is loaded
    if not _blas_threads():
        pytest.skip("threadpoolctl finds no BLAS library in this numpy build")
    monkeypatch.setattr(runtime, "_applied", None)
    with threadpool_limits(limits=2, user_api="blas"):  # restored afterwards
        assert runtime.limit_blas_threads(1) == 1
        assert _blas_threads() == {1}
        monkeypatch.setattr(runtime, "_applied", None)
        with threadpool_limits(limits=2, user_api="blas"):
            assert runtime.limit_blas_threads(0) is None  # 0: the library's default, untouched
            assert _blas_threads() == {2}
