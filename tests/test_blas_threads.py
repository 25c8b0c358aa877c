"""lumeval._workers.one_blas_thread: one BLAS thread inside (the bits of a one-thread product),
the caller's setting restored after nested blocks.

The thread counts are read with threadpoolctl's threadpool_info (an independent library's view
of the loaded BLAS), not with lumeval's own bookkeeping.
"""

from __future__ import annotations

import pytest

threadpoolctl = pytest.importorskip("threadpoolctl")

from lumeval._workers import one_blas_thread  # noqa: E402


def _blas_threads() -> list[int]:
    return [i["num_threads"] for i in threadpoolctl.threadpool_info() if i["user_api"] == "blas"]


@pytest.fixture
def two_threads():
    """BLAS at two threads for the test (skipped where BLAS will not take two)."""
    import numpy as np

    np.ones((2, 2)) @ np.ones((2, 2))  # BLAS loaded
    with threadpoolctl.threadpool_limits(2, user_api="blas"):
        if not _blas_threads() or min(_blas_threads()) < 2:
            pytest.skip("BLAS here does not run two threads")
        yield


def test_one_thread_inside_and_the_setting_restored_after_nested_blocks(two_threads):
    with one_blas_thread():
        assert set(_blas_threads()) == {1}
        with one_blas_thread():
            assert set(_blas_threads()) == {1}
        assert set(_blas_threads()) == {1}  # the outer block still holds it
    assert min(_blas_threads()) == 2


def test_products_inside_run_on_one_thread(two_threads):
    """What the block is for: a product inside gives the bits of a one-thread product, which a
    two-thread product does not (on this machine; skipped where the two agree anyway)."""
    import numpy as np

    rng = np.random.default_rng(0)
    a, b = rng.random((2000, 401)), rng.random((401, 297))
    with threadpoolctl.threadpool_limits(1, user_api="blas"):
        one = a @ b
    two = a @ b
    if np.array_equal(one, two):
        pytest.skip("one- and two-thread products agree here")
    with one_blas_thread():
        inside = a @ b
    np.testing.assert_array_equal(inside, one)  # exact: the claim is the same bits
