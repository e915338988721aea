"""One BLAS thread while a fit runs: small problems lose most of their time to idle BLAS workers.

The fit's arrays are small (a few hundred samples × 3 channels, 9 × 9 or
17 × 17 systems) and the quasi-Newton solver calls BLAS between every
batch. OpenBLAS keeps its worker threads spinning after each call, and
numpy and SciPy each ship their own OpenBLAS with its own workers: on a
machine with few cores the spinning workers of one take the cores the
other's (and numpy's element-wise work) needs. Measured on the demo fit
(2 cores): 1.8 s with the default threads, 0.35 s with one, the same
result to the last bit (``tests/benchmarks/bench_fit.py``).

:func:`one_blas_thread` limits every BLAS library loaded in the process
(through ``threadpoolctl``) for the duration of a ``with`` block (or a
decorated call). Nested and concurrent blocks (a notebook fit in a
background thread while another runs) share one limit, restored to what it
was when the last block ends. Each block sets the limit from its own
thread: OpenBLAS may ignore a limit set from a thread other than the one
that set it last.
"""

from __future__ import annotations

import threading
from contextlib import contextmanager

from threadpoolctl import ThreadpoolController

__all__ = ["one_blas_thread"]

_lock = threading.Lock()
_state = {"depth": 0, "controller": None, "original": None}


@contextmanager
def one_blas_thread():
    """Run the block with one BLAS thread in every BLAS library of the process; the previous limits after it."""
    with _lock:
        if _state["depth"] == 0:
            # found afresh for each outermost block: a library loaded since then is limited too
            _state["controller"] = ThreadpoolController()
            _state["original"] = _state["controller"].limit(limits=1, user_api="blas")
        else:
            _state["controller"].limit(limits=1, user_api="blas")
        _state["depth"] += 1
    try:
        yield
    finally:
        with _lock:
            _state["depth"] -= 1
            if _state["depth"] == 0:
                _state["original"].restore_original_limits()
                _state["controller"] = _state["original"] = None
