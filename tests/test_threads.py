"""One BLAS thread during a fit (workbench/analysis/threads.py)."""

from __future__ import annotations

import threading

import pytest
from threadpoolctl import threadpool_info, threadpool_limits

from workbench.analysis.fit import fit_design
from workbench.analysis.threads import one_blas_thread


def blas_threads() -> list[int]:
    """The thread count of every BLAS library loaded in the process."""
    return [d["num_threads"] for d in threadpool_info() if d["user_api"] == "blas"]


@pytest.fixture
def two_blas_threads():
    """Every BLAS library at two threads for the test (so a limit to one is visible), the old limits after."""
    import scipy.linalg  # noqa: F401  (loads SciPy's own BLAS too)

    with threadpool_limits(limits=2, user_api="blas"):
        if not blas_threads() or max(blas_threads()) < 2:
            pytest.skip("no BLAS library here runs more than one thread")
        yield


class TestOneBlasThread:
    def test_limits_inside_restores_after(self, two_blas_threads):
        """Inside the block every BLAS library runs one thread; after it, two again."""
        before = blas_threads()
        with one_blas_thread():
            assert set(blas_threads()) == {1}
        assert blas_threads() == before

    def test_nested_restore_at_the_outer_end(self, two_blas_threads):
        """A nested block leaves the limit in place until the outer one ends."""
        before = blas_threads()
        with one_blas_thread():
            with one_blas_thread():
                pass
            assert set(blas_threads()) == {1}
        assert blas_threads() == before

    def test_concurrent_blocks_share_one_limit(self, two_blas_threads):
        """Two threads' blocks ending in the other order than they began still restore the old limits."""
        before = blas_threads()
        entered, release_a = threading.Event(), threading.Event()

        def a():
            with one_blas_thread():
                entered.set()
                release_a.wait(10)

        t = threading.Thread(target=a)
        t.start()
        entered.wait(10)
        with one_blas_thread():
            release_a.set()
            t.join(10)
            assert set(blas_threads()) == {1}        # a's end did not lift the limit b still needs
        assert blas_threads() == before

    def test_restores_after_an_error(self, two_blas_threads):
        """An exception in the block still restores the limits."""
        before = blas_threads()
        with pytest.raises(ZeroDivisionError):
            with one_blas_thread():
                1 / 0
        assert blas_threads() == before


class TestFitDesignThreads:
    def test_fit_runs_on_one_blas_thread(self, two_blas_threads, demo_design):
        """Every batch of the fit is evaluated with one BLAS thread; the limits are back after it."""
        before = blas_threads()
        seen = []
        fit_design(demo_design, progress=False, max_evaluations=60,
                   callback=lambda n: seen.append(max(blas_threads())))
        assert seen and set(seen) == {1}
        assert blas_threads() == before
