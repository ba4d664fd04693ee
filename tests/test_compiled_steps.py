"""The compiled steps of the preparation against their plain numpy definitions.

Each compiled step does the same floating-point operations in the same order as the numpy
expression it stands for, so the check is equality to the bit (no tolerance): any
difference would change results.
"""

from __future__ import annotations

import numpy as np
import pytest

from ibl import prepare
from ibl.smoothing import _cubic_residual_medians


def lagrange_residual_medians(s: np.ndarray, q: np.ndarray) -> tuple[float, float, float]:
    """The noise statistics written with numpy (the definition in ``ibl.smoothing``): the
    cubic's Lagrange weights at each point, each the product of its factors in node order."""
    i = np.arange(4, s.size - 4)
    medians = []
    for stride in (1, 2):
        nodes = [i - 2 * stride, i - stride, i + stride, i + 2 * stride]
        gain = np.ones(i.size)
        fit = np.zeros(i.size)
        for j in range(4):
            w = np.ones(i.size)
            for k in range(4):
                if k != j:
                    w = w * ((s[i] - s[nodes[k]]) / (s[nodes[j]] - s[nodes[k]]))
            gain = gain + w * w
            fit = fit + w * q[nodes[j]]
        medians.append(float(np.median(np.abs(q[i] - fit) / np.sqrt(gain))))
    return medians[0], medians[1], float(np.median(np.abs(np.diff(q))))


@pytest.mark.parametrize("seed", range(20))
def test_noise_residuals_equal_their_numpy_definition(seed: int) -> None:
    rng = np.random.default_rng(seed)
    n = int(rng.integers(11, 400))
    s = np.cumsum(rng.random(n) + 1e-3)
    q = rng.random(n) * 10.0 ** float(rng.integers(-6, 1)) + np.sin(s) ** 2
    assert _cubic_residual_medians(s, q) == lagrange_residual_medians(s, q)


@pytest.mark.parametrize("start", [0.0, 3.0, 3.5, 6.999999999999, 11.2, -2.0, 17.0])
def test_rotation_equals_the_indexed_listing(start: float) -> None:
    # The definition: points first .. k + m of the closed list, each index modulo m.
    m = 12
    columns = np.vstack([np.arange(m + 1.0), np.arange(m + 1.0) ** 2])
    columns[:, m] = columns[:, 0]
    rows, index = prepare._rotate(columns, start)
    k = int(np.floor(start))
    frac = start - k
    if frac >= 1.0 - 1e-9:
        k, frac = k + 1, 0.0
    k %= m
    first = k + 1 if frac > 1e-9 else k
    expected = np.arange(first, k + m + 1)
    assert np.array_equal(rows, columns[:, expected % m])
    assert np.array_equal(index, expected.astype(np.float64))


def test_arc_length_along_the_input_equals_numpy_interp() -> None:
    rng = np.random.default_rng(7)
    x, y = rng.random(30), rng.random(30)
    arc, _ = prepare._arc_length(x, y, 0.0)
    listed = np.append(arc, arc[-1] + float(np.hypot(x[-1] - x[0], y[-1] - y[0])))
    grid = np.arange(listed.size)
    for position in [0.0, 0.25, 1.0, 13.7, 28.999, 29.0, 29.5, 30.0, *rng.random(50) * 30.0]:
        expected = float(np.interp(position, grid, listed))
        assert prepare._along_input(float(position), arc, x, y) == expected
