"""The lossless fast path's own helpers (the path itself is checked against tmm in tests/test_thinfilm.py)."""

from __future__ import annotations

import numpy as np

from workbench.optics.lossless_stack import _distinct_rows


class TestDistinctRows:
    def test_rows_grouped_by_value(self):
        """Equal rows share a number, different rows do not."""
        rows = np.array([[1.5, 2.0], [2.3, 2.1], [1.5, 2.0], [1.5, 2.1]])
        first, which = _distinct_rows(rows)
        assert which[0] == which[2] and len({which[0], which[1], which[3]}) == 3
        np.testing.assert_array_equal(rows[first][which], rows)

    def test_rows_with_one_weighted_sum_told_apart(self):
        """Two different rows whose weighted sums coincide exactly are still two."""
        w1 = 1.0 + 0.6180339887498949                         # the second weight of the sums
        rows = np.array([[w1, 0.0], [0.0, 1.0], [w1, 0.0]])   # sums w1, w1, w1
        first, which = _distinct_rows(rows)
        assert list(which) == [0, 1, 0]
        np.testing.assert_array_equal(rows[first][which], rows)
