"""lumeval._workers.one_blas_thread: one BLAS thread inside (the bits of a one-thread product),
in the main thread and in others, the caller's setting restored after nested and overlapping
blocks, whichever thread leaves last.

The thread counts are read with threadpoolctl's threadpool_info (an independent library's view
of the loaded BLAS), not with lumeval's own bookkeeping.
"""

from __future__ import annotations

import threading

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

    a, b, one, _ = _products()
    with one_blas_thread():
        inside = a @ b
    np.testing.assert_array_equal(inside, one)  # exact: the claim is the same bits


def _products():
    """(a, b, a @ b on one thread, a @ b on two); skipped where the two agree anyway."""
    import numpy as np

    rng = np.random.default_rng(0)
    a, b = rng.random((2000, 401)), rng.random((401, 297))
    with threadpoolctl.threadpool_limits(1, user_api="blas"):
        one = a @ b
    two = a @ b
    if np.array_equal(one, two):
        pytest.skip("one- and two-thread products agree here")
    return a, b, one, two


def test_a_block_in_another_thread_after_the_main_thread_used_one(two_threads):
    """threadpoolctl lets only the thread that first set OpenBLAS's count set it again; the
    block clears that record, so a block in another thread limits too, and restores after."""
    import numpy as np

    a, b, one, two = _products()
    with one_blas_thread():
        pass
    got = {}

    def work():
        with one_blas_thread():
            got["inside"] = a @ b
        got["after"] = a @ b

    t = threading.Thread(target=work)
    t.start()
    t.join(20)
    np.testing.assert_array_equal(got["inside"], one)
    np.testing.assert_array_equal(got["after"], two)


def test_overlapping_blocks_in_two_threads(two_threads):
    """Thread A enters, thread B enters, A leaves: B still computes with one thread; when B
    (not the thread that set the limit) leaves, the caller's setting is back."""
    import numpy as np

    a, b, one, two = _products()
    a_in, b_in, a_out = threading.Event(), threading.Event(), threading.Event()
    got = {}

    def first():
        with one_blas_thread():
            a_in.set()
            b_in.wait(10)
        a_out.set()

    def second():
        a_in.wait(10)
        with one_blas_thread():
            b_in.set()
            a_out.wait(10)
            got["second"] = a @ b

    threads = [threading.Thread(target=first), threading.Thread(target=second)]
    for t in threads:
        t.start()
    for t in threads:
        t.join(20)
    np.testing.assert_array_equal(got["second"], one)
    np.testing.assert_array_equal(a @ b, two)
    assert min(_blas_threads()) == 2


def test_a_blas_loaded_after_the_first_block_is_limited_too():
    """A block taken before another BLAS library is loaded (scipy's own OpenBLAS, with
    scipy.linalg) limits that library too in later blocks (it did not: the view of the loaded
    libraries was made once). Run in a fresh interpreter, where scipy.linalg is not yet loaded."""
    import subprocess
    import sys

    code = (
        "import numpy as np, threadpoolctl\n"
        "from lumeval._workers import one_blas_thread\n"
        "np.ones((2, 2)) @ np.ones((2, 2))\n"
        "with one_blas_thread(): pass\n"
        "import scipy.linalg\n"
        "libs = [i for i in threadpoolctl.threadpool_info() if i['user_api'] == 'blas']\n"
        "with one_blas_thread():\n"
        "    inside = sorted({i['num_threads'] for i in threadpoolctl.threadpool_info() if i['user_api'] == 'blas'})\n"
        "print(len(libs), inside)\n"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=120, check=True).stdout
    n_libs, inside = out.split(" ", 1)
    if n_libs == "1":
        pytest.skip("scipy.linalg brings no BLAS library of its own here")
    assert inside.strip() == "[1]"
