"""The compiled steps of the preparation against their plain numpy definitions.

Each compiled step does the same floating-point operations in the same order as the numpy
expression it stands for, so the check is equality to the bit (no tolerance): any
difference would change results.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from ibl import plateau, prepare, smoothing
from ibl.plateau import _bernoulli_cp
from ibl.smoothing import _cubic_residual_medians, noise_at_most, noise_estimate


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


def nose_gradients_numpy(
    arc: np.ndarray, q: np.ndarray, a: int, b: int, s0: float, slope: float, plateau: bool
) -> tuple[np.ndarray, np.ndarray, np.ndarray, str]:
    """The derivatives of the stagnation point's position and slopes written with numpy
    arrays (the definition of ``prepare._nose_gradients``)."""
    n = q.size
    d_s0, d_before, d_after = np.zeros(n), np.zeros(n), np.zeros(n)

    def secant(target: np.ndarray, j: int) -> None:
        target[j] = 0.5 / math.sqrt(q[j]) / abs(arc[j] - s0) if q[j] > 0.0 else math.nan

    if a == 0 or b == n - 1 or plateau:
        first, second = (
            (b + 1, b + 1) if a == 0 else (a - 1, a - 1) if b == n - 1 else (a - 1, b + 1)
        )
        secant(d_before, first)
        secant(d_after, second)
        ok = bool(np.all(np.isfinite(d_before)) and np.all(np.isfinite(d_after)))
        return d_s0, d_before, d_after, "" if ok else prepare.NOSE_GAPS[1]
    if a < b:
        return d_s0, d_before, d_after, prepare.NOSE_GAPS[2]
    p_s0, p_slope, _, v_s0, v_slope, _ = prepare.stagnation_models(arc, q, a, b)
    if s0 == arc[a] + v_s0 and slope == v_slope:
        sm, s_a = arc[a - 1] - arc[a], arc[a - 2] - arc[a]
        sp, s_d = arc[b + 1] - arc[a], arc[b + 2] - arc[a]
        if not sm < v_s0 < sp:
            return d_s0, d_before, d_after, prepare.NOSE_GAPS[3]
        u = np.sqrt(q[[a - 2, a - 1, b + 1, b + 2]])
        left = (u[1] - u[0]) / (sm - s_a)
        right = (u[3] - u[2]) / (s_d - sp)
        g_left = np.array([-1.0, 1.0, 0.0, 0.0]) / (sm - s_a)
        g_right = np.array([0.0, 0.0, -1.0, 1.0]) / (s_d - sp)
        top = u[2] - u[1] + left * sm - right * sp
        g_top = np.array([0.0, -1.0, 1.0, 0.0]) + sm * g_left - sp * g_right
        down = left - right
        g_meet = (g_top * down - top * (g_left - g_right)) / (down * down)
        g_slope = 0.5 * (g_right - g_left)
        dq = 0.5 / u
        for k, j in enumerate((a - 2, a - 1, b + 1, b + 2)):
            d_s0[j] += g_meet[k] * dq[k]
            d_before[j] += g_slope[k] * dq[k]
        return d_s0, d_before, d_before.copy(), ""
    if s0 == arc[a] + p_s0 and slope == p_slope:
        h0, h1 = arc[a] - arc[a - 1], arc[a + 1] - arc[a]
        if not -h0 < p_s0 < h1:
            return d_s0, d_before, d_after, prepare.NOSE_GAPS[3]
        values = q[a - 1 : a + 2]
        g_d0 = np.array([-1.0, 1.0, 0.0]) / h0
        g_d1 = np.array([0.0, -1.0, 1.0]) / h1
        g_c2 = (g_d1 - g_d0) / (h0 + h1)
        g_c1 = g_d0 + g_c2 * h0
        c2 = float(g_c2 @ values)
        c1 = float(g_c1 @ values)
        d_s0[a - 1 : a + 2] = -0.5 * (g_c1 * c2 - c1 * g_c2) / (c2 * c2)
        d_before[a - 1 : a + 2] = g_c2 / (2.0 * math.sqrt(c2))
        return d_s0, d_before, d_before.copy(), ""
    return d_s0, d_before, d_after, prepare.NOSE_GAPS[4]


def _nose_case(rng: np.random.Generator, kind: str) -> tuple:
    """A random listing round a stagnation point and the choice of model the caller made."""
    n = int(rng.integers(8, 60))
    arc = np.cumsum(rng.random(n) + 1e-2)
    a = b = int(rng.integers(2, n - 2))
    q = (arc - arc[a] - rng.normal(0.0, 0.3 * (arc[a + 1] - arc[a]))) ** 2 * rng.random() * 50
    q = q + rng.random(n) * 10.0 ** float(rng.integers(-9, -1))
    p_s0, p_slope, _, v_s0, v_slope, _ = prepare.stagnation_models(arc, q, a, b)
    if kind == "parabola":
        return arc, q, a, b, arc[a] + p_s0, p_slope, False
    if kind == "v":
        return arc, q, a, b, arc[a] + v_s0, v_slope, False
    if kind == "run":
        return arc, q, a, a + 1, arc[a], 1.0, False
    if kind == "end":
        a, b = (0, 0) if rng.random() < 0.5 else (n - 1, n - 1)
        return arc, q, a, b, arc[a], 1.0, False
    lo = int(rng.integers(1, n - 3))  # a plateau, some of it at zero
    hi = int(rng.integers(lo, n - 2))
    q[lo : hi + 1] = 0.0
    if rng.random() < 0.3:
        q[hi + 1] = 0.0  # the secant after it ends at Ue = 0
    return arc, q, lo, hi, 0.5 * (arc[lo] + arc[hi]), 1.0, True


@pytest.mark.parametrize("kind", ["parabola", "v", "run", "end", "plateau"])
def test_nose_gradients_equal_their_numpy_definition(kind: str) -> None:
    rng = np.random.default_rng(list(map(ord, kind)))
    for _ in range(200):
        args = _nose_case(rng, kind)
        *arrays, code = prepare._nose_gradients(*args)
        *expected, gap = nose_gradients_numpy(*args)
        assert prepare.NOSE_GAPS[code] == gap
        for got, want in zip(arrays, expected, strict=True):
            np.testing.assert_array_equal(got, want)  # NaN equal to NaN, else to the bit


@pytest.mark.parametrize("seed", range(10))
def test_listed_arc_length_equals_the_arc_length_of_the_listing(seed: int) -> None:
    # The definition: the arc length of the listed points, as _arc_length measures any list.
    rng = np.random.default_rng(seed)
    n = int(rng.integers(5, 80))
    t = np.sort(rng.random(n)) * 2.0 * np.pi
    x, y = np.cos(t) * (1.0 + 0.1 * rng.random(n)), 0.3 * np.sin(t)
    if seed % 3 == 0:  # explicitly closed, the last point within rounding of the first
        x, y = np.append(x, x[0] * (1.0 + 1e-15)), np.append(y, y[0])
    q = rng.random(x.size)
    arc, chord, _ = prepare._arc_and_chords(x, y, 0.0)
    closed, implicit = prepare._closure(x, y, arc)
    columns, _, listed = prepare._listing(x, y, q, np.empty(0), closed, implicit, arc, chord)
    assert np.array_equal(listed, prepare._arc_length(columns[0], columns[1], 0.0)[0])
    # The open contour: listed as given.
    _, _, listed = prepare._listing(x, y, q, np.empty(0), False, False, arc, chord)
    assert np.array_equal(listed, prepare._arc_length(x, y, 0.0)[0])


@pytest.mark.parametrize("seed", range(10))
def test_nose_arrays_equal_numpy_add_at(seed: int) -> None:
    rng = np.random.default_rng(seed)
    n_in = int(rng.integers(5, 50))
    period = n_in - int(rng.integers(0, 2))
    first_index = int(rng.integers(0, period))
    index = np.arange(first_index, first_index + period + 1).astype(np.float64)
    d_s0, d_slope = rng.standard_normal(index.size), rng.standard_normal(index.size)
    inputs = index.astype(np.int64) % period
    first, step = int(rng.integers(1, index.size - 1)), int(rng.choice([-1, 1]))
    size = first + 1 if step < 0 else index.size - first
    points, s0_grad, slope_grad = prepare._nose_arrays(
        index, period, first, step, size, d_s0, d_slope, n_in
    )
    branch = np.arange(first, first + step * size, step)
    assert np.array_equal(points, np.concatenate([[-1], inputs[branch]]))
    for got, values in ((s0_grad, d_s0), (slope_grad, d_slope)):
        out = np.zeros(n_in)
        np.add.at(out, inputs, values)
        assert np.array_equal(got, out)


def axis_point_numpy(x, y, r, arc, closed: bool, radius_from_y: bool) -> float:
    """The point on the axis written with numpy (the definition of ``_axis_point``)."""
    total = float(arc[-1])
    inner = slice(1, -1) if closed else slice(None)
    on_axis = np.flatnonzero(r[inner] <= prepare.REPEAT_TOLERANCE * total) + (1 if closed else 0)
    candidates = [(float(x[i]), float(arc[i])) for i in on_axis.tolist()]
    if radius_from_y:
        for i in np.flatnonzero(y[:-1] * y[1:] < 0.0).tolist():
            t = y[i] / (y[i] - y[i + 1])
            candidates.append(
                (float(x[i] + t * (x[i + 1] - x[i])), float(arc[i] + t * (arc[i + 1] - arc[i])))
            )
    return min(candidates)[1] if candidates else float("nan")


@pytest.mark.parametrize("seed", range(10))
def test_axis_point_equals_its_numpy_definition(seed: int) -> None:
    rng = np.random.default_rng(seed)
    for _ in range(50):
        n = int(rng.integers(4, 40))
        x = np.round(rng.standard_normal(n), 1)  # ties in x
        y = rng.standard_normal(n)
        r = np.where(rng.random(n) < 0.2, 0.0, np.abs(y))
        arc = prepare._arc_length(x, y, 0.0)[0]
        for closed in (False, True):
            for from_y in (False, True):
                got = prepare._axis_point(x, y, r, arc, closed, from_y)
                want = axis_point_numpy(x, y, r, arc, closed, from_y)
                assert got == want or (math.isnan(got) and math.isnan(want))


def test_station_equals_numpy_searchsorted_and_interpolation() -> None:
    rng = np.random.default_rng(3)
    for _ in range(200):
        n = int(rng.integers(3, 40))
        arc = np.cumsum(rng.random(n))
        arc[0] = 0.0
        columns = rng.standard_normal((4, n))
        index = np.arange(n) + float(rng.integers(0, 5))
        s0 = float(rng.choice([arc[int(rng.integers(0, n))], rng.random() * arc[-1]]))
        tol = 1e-10 * arc[-1]
        plateau = bool(rng.random() < 0.3)
        got = prepare._station(columns, arc, index, s0, tol, plateau, 1, 1)
        i0 = min(max(int(np.searchsorted(arc, s0, side="right")) - 1, 0), n - 2)
        seg = arc[i0 + 1] - arc[i0]
        frac = (s0 - arc[i0]) / seg
        at = [c[i0] + frac * (c[i0 + 1] - c[i0]) for c in columns]
        slopes = [(c[i0 + 1] - c[i0]) / seg for c in columns]
        before = 0 if plateau else int(np.searchsorted(arc, s0 - tol, side="left")) - 1
        after = 2 if plateau else int(np.searchsorted(arc, s0 + tol, side="right"))
        position = index[i0] + frac * (index[i0 + 1] - index[i0])
        want = (at[0], at[1], at[3], slopes[0], slopes[1], slopes[3], position)
        assert got == (*want, before, after)


def test_scans_equal_their_numpy_definitions() -> None:
    rng = np.random.default_rng(5)
    for _ in range(300):
        n = int(rng.integers(1, 30))
        v = rng.choice([-1.0, 0.0, 0.5, 2.0, np.nan, np.inf], n)

        def first(mask: np.ndarray, offset: int = 0) -> int:
            hits = np.flatnonzero(mask)
            return int(hits[0]) + offset if hits.size else -1

        assert prepare._first_nonfinite(v) == first(~np.isfinite(v))
        assert prepare._first_above(v, 0.0) == first(v > 0.0)
        assert prepare._first_at_most(v, 1, n, 0.0) == first(v[1:] <= 0.0, 1)
        with np.errstate(invalid="ignore"):  # inf - inf
            assert prepare._first_not_increasing(v) == first(np.diff(v) <= 0.0, 1)
        signs = np.sign(v[np.isfinite(v)])
        moving = np.flatnonzero(signs)
        change = -1
        if moving.size and np.any(signs[moving] != signs[moving[0]]):
            k = moving[np.argmax(signs[moving] != signs[moving[0]])]
            change = int(np.flatnonzero(np.isfinite(v))[k])
        assert prepare._sign_change(v) == change
        w = v[np.isfinite(v)]
        assert np.array_equal(prepare._bernoulli_q(w), np.maximum(1.0 - w, 0.0))
        assert np.array_equal(_bernoulli_cp(w), 1.0 - w**2)
        listed = w.tolist()
        assert np.array_equal(prepare._array(listed, "", []), np.fromiter(listed, np.float64))
        if w.size:
            start = int(rng.integers(0, w.size))
            for step, size in ((1, w.size - start), (-1, start + 1)):
                want = float(w[np.arange(start, start + step * size, step)].mean())
                assert prepare._mean_along(w, start, step, size) == want


@pytest.mark.parametrize("seed", range(20))
def test_noise_bound_never_hides_a_larger_estimate(seed: int) -> None:
    # noise_at_most may say True only where the full estimate is at most the limit.
    rng = np.random.default_rng(seed)
    n = int(rng.integers(5, 300))
    s = np.cumsum(rng.random(n) + 1e-3)
    q = rng.random(n) * 10.0 ** float(rng.integers(-7, 0)) + np.sin(s) ** 2
    sigma, _ = noise_estimate(s, q)
    for limit in (0.0, sigma, np.nextafter(sigma, 0.0), 0.5 * sigma, 2.0 * sigma, 1e-3):
        if noise_at_most(s, q, limit):
            assert sigma <= limit
    assert noise_at_most(s, q, 1.01 * math.sqrt(256.0 / 255.0) * sigma + 1.0) or n < 11


@pytest.mark.parametrize("seed", range(10))
def test_orientation_decides_as_numpy_dot_products(seed: int) -> None:
    # The definition: the shoelace area from numpy's dot products against the tolerance.
    rng = np.random.default_rng(seed)
    for _ in range(200):
        n = int(rng.integers(3, 300))
        t = np.sort(rng.random(n)) * 2.0 * np.pi
        flat = 10.0 ** float(rng.integers(-16, 0)) * rng.choice([0.0, 1.0, -1.0])
        x = np.cos(t) + 1e-3 * rng.standard_normal(n)
        y = flat * np.sin(t) + (1e-14 * rng.standard_normal(n) if rng.random() < 0.5 else 0.0)
        x, y = np.append(x, x[0]), np.append(y, y[0])
        area = 0.5 * float(np.dot(x[:-1], y[1:]) - np.dot(x[1:], y[:-1]))
        limit = prepare.AREA_TOLERANCE * (prepare._extent_product(x, y) + 1e-300)
        want = (1 if area > 0.0 else -1) if abs(area) > limit else 0
        got = prepare._orientation(x, y)
        assert got in (want, 2)


def test_side_names_of_nearly_flat_loops_as_numpy_names_them() -> None:
    # Loops out and back along one curve, offset by about the area tolerance, far from the
    # origin (large products): the orientation is too close to call in compiled sums, and
    # numpy's dot products name the sides, as they always did.
    rng = np.random.default_rng(11)
    undecided = 0
    for _ in range(300):
        n = int(rng.integers(4, 100))
        t = np.linspace(0.0, 1.0, n)
        offset = prepare.AREA_TOLERANCE * 10.0 ** float(rng.uniform(-1.0, 1.0))
        x = 1e3 + np.concatenate([t, t[::-1]])
        y = 0.1 * np.concatenate([np.sin(t), np.sin(t[::-1]) + offset * rng.random(n)])
        x, y = np.append(x, x[0]), np.append(y, y[0])
        undecided += prepare._orientation(x, y) == 2
        runs = ((n - 1, -1, n), (n, 1, n + 1))
        area = 0.5 * float(np.dot(x[:-1], y[1:]) - np.dot(x[1:], y[:-1]))
        if abs(area) > prepare.AREA_TOLERANCE * (prepare._extent_product(x, y) + 1e-300):
            want = ("upper", "lower") if area > 0.0 else ("lower", "upper")
        else:
            want = prepare._side_names(x, y, runs, False, float(y[n - 1]))
        assert prepare._side_names(x, y, runs, True, float(y[n - 1])) == want
    assert undecided > 0


def split_one_step_at_a_time(
    x: np.ndarray,
    y: np.ndarray,
    q: np.ndarray,
    radius: np.ndarray,
    arc: np.ndarray,
    chord: np.ndarray,
    axisymmetric: bool,
    radius_from_y: bool,
) -> tuple:
    """The numbers of ``prepare._split_numbers`` from its steps, each called on its own as
    the contour split calls them (the definition of the fused call)."""
    n_in = arc.size
    closed, implicit = prepare._closure(x, y, arc)
    columns, index, listed = prepare._listing(x, y, q, radius, closed, implicit, arc, chord)
    lx, ly, lq = columns[0], columns[1], columns[2]
    n = lx.size
    total = float(listed[-1])
    tol = prepare.REPEAT_TOLERANCE * total
    a, b, s0, before, after, ue_vertex, plateau, q_run = prepare._locate(listed, lx, lq, not closed)
    gap = 0
    if not (math.isfinite(before) and math.isfinite(after)):
        before = after = math.nan
        gap = prepare.NO_SLOPE
    if a < 0:
        a = b = int(np.argmin(lx[:-1] if closed else lx))
        while a > 0 and lx[a - 1] <= lx[b] + prepare.TIE_TOLERANCE * total:
            a -= 1
        while b < n - 1 and lx[b + 1] <= lx[a] + prepare.TIE_TOLERANCE * total:
            b += 1
        s0 = 0.5 * (listed[a] + listed[b])
        q_run = float(np.min(lq[a : b + 1]))
        ue_vertex = math.sqrt(q_run)
        before = after = math.nan
        plateau = False
        gap = prepare.NO_STAGNATION
    if gap == 0:
        d_s0, d_before, d_after, gap = prepare._nose_gradients(
            listed, lq, a, b, s0, before, plateau
        )
    moved = math.nan
    if axisymmetric:
        r_axis = columns[3] if radius.size else np.abs(ly)
        axis = prepare._axis_point(lx, ly, r_axis, listed, closed, radius_from_y)
        if math.isfinite(axis) and abs(axis - s0) > tol:
            spacing = float(np.max(np.diff(listed[max(a - 1, 0) : b + 2])))
            if abs(axis - s0) > spacing:
                moved = abs(axis - s0)
            s0, plateau = axis, False
            if gap == 0:
                d_s0[:] = 0.0
    long_plateau = plateau and b > a and listed[b] - listed[a] > prepare.PLATEAU_WARNING * total
    x0, y0, r0, dx0, dy0, dr0, position, last_before, first_after = prepare._station(
        columns, listed, index, s0, tol, plateau, a, b
    )
    if axisymmetric and radius_from_y:
        r0, dr0 = abs(y0), math.copysign(dy0, y0)
    period = (n_in if implicit else n_in - 1) if closed else 0
    position = position % period if closed else position
    along = prepare._along_input(position, arc, x, y)
    turn = prepare._orientation(lx, ly) if closed else 3
    ue_start = math.sqrt(q_run) if math.isnan(before) else 0.0
    ints = [closed, implicit, a, b, gap, plateau, long_plateau, last_before, first_after, turn]
    sides = []
    runs = ((last_before, -1, max(last_before + 1, 0)), (first_after, 1, max(n - first_after, 0)))
    for first, step, size in runs:
        ends = zero_r = -1
        block = np.empty((5, 0))
        if size + 1 < prepare.MIN_POINTS:
            size = -1
        else:
            ends = prepare._vanishing(lq, first, step, size)
            size = ends + 1 if ends >= 0 else size
            block = prepare._side_rows(columns, listed, first, step, size, s0, ue_start, x0, y0, r0)
            if axisymmetric:
                zero_r = prepare._first_at_most(block[2], 1, size, 0.0)
        points, grads = np.empty(0, dtype=np.int64), np.empty((2, 0))
        if gap == 0 and size >= 0:
            slopes = d_before if step < 0 else d_after
            points, *rows = prepare._nose_arrays(
                index, period, first, step, size, d_s0, slopes, n_in
            )
            grads = np.array(rows)
        ints += [size, ends, zero_r]
        sides += [block, points, grads]
    floats = [s0, before, after, ue_vertex, q_run, x0, y0, r0, dx0, dy0, dr0, position, along]
    return (np.array([*floats, moved]), np.array(ints), columns, index, listed, *sides)


def _contours() -> list[tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray, bool, bool]]:
    """Contours of every kind the split meets: (x, y, q, radius or empty, axisymmetric,
    radius from y)."""
    out = []
    empty = np.empty(0)
    for n, alpha in ((40, 4.0), (200, 0.0), (57, -7.0)):
        eta = np.linspace(0.0, 2.0 * np.pi, 2 * n + 1)
        a, b, al = 0.5, 0.125, np.radians(alpha)
        # Potential flow round an ellipse (Milne-Thomson [recalled, not re-checked]).
        ue = (
            (a + b)
            * np.abs(np.sin(eta - al))
            / np.sqrt(a**2 * np.sin(eta) ** 2 + b**2 * np.cos(eta) ** 2)
        )
        x, y = a + a * np.cos(eta), b * np.sin(eta)
        out.append((x, y, ue**2, empty, False, False))
        out.append((x[:-1], y[:-1], ue[:-1] ** 2, empty, False, False))  # implicitly closed
        out.append((x[: n + 1], y[: n + 1], ue[: n + 1] ** 2, empty, False, False))  # open
    phi = np.linspace(0.0, np.pi, 121)
    sphere_q = (1.5 * np.sin(phi)) ** 2  # potential flow round a sphere [same source]
    out.append((-np.cos(phi), np.sin(phi), sphere_q, empty, True, True))
    out.append((-np.cos(phi), np.sin(phi), sphere_q, np.sin(phi), True, False))
    shifted = np.roll(sphere_q, 3)  # the pressure's stagnation point off the axis
    out.append((-np.cos(phi), np.sin(phi), shifted, empty, True, True))
    t = np.linspace(0.0, 2.0 * np.pi, 81)
    cyl = 4.0 * np.sin(t) ** 2  # circular cylinder
    plateau = np.where(np.abs(np.sin(t)) < 0.12, 0.0, cyl)  # taps clipped at the nose
    out.append((-np.cos(t), np.sin(t), plateau, empty, False, False))
    out.append((-np.cos(t), np.sin(t), 0.5 + 0.1 * np.sin(t), empty, False, False))  # no zero
    out.append((-np.cos(t), np.sin(t), np.minimum(cyl, 1e-9 + cyl), empty, False, False))
    return out


@pytest.mark.parametrize("index", range(15))
def test_split_in_one_call_equals_its_steps_one_at_a_time(index: int) -> None:
    x, y, q, radius, axisymmetric, from_y = _contours()[index]
    arc, chord, _ = prepare._arc_and_chords(x, y, 0.0)
    got = prepare._split_numbers(x, y, q, radius, arc, chord, axisymmetric, from_y)
    want = split_one_step_at_a_time(x, y, q, radius, arc, chord, axisymmetric, from_y)
    assert len(got) == len(want)
    for g, w in zip(got, want, strict=True):
        assert g.dtype == w.dtype and g.shape == w.shape
        assert np.array_equal(g, w, equal_nan=True)


@pytest.mark.parametrize("given_cp", [True, False])
def test_input_scan_equals_the_scans_one_at_a_time(given_cp: bool) -> None:
    rng = np.random.default_rng(8)
    for _ in range(300):
        n = int(rng.integers(3, 60))
        block = np.cumsum(rng.random((3, n)), axis=1)
        block[2] = 1.0 - rng.random(n) * 3.0 + 0.1 * rng.random()
        if rng.random() < 0.3:
            block[int(rng.integers(0, 3)), int(rng.integers(0, n))] = rng.choice([np.nan, np.inf])
        if rng.random() < 0.3:
            block[:2, n // 2] = block[:2, n // 2 - 1]  # a repeated point
        bad, repeated, arc, chord, over, clipped, q = prepare._input_scan(
            block, given_cp, 1e-10, 1.0, 0.05
        )
        rows = [prepare._first_nonfinite(row) for row in block]
        assert bad == next((k for k, i in enumerate(rows) if i >= 0), -1)
        if bad >= 0:
            continue
        want = prepare._arc_and_chords(block[0], block[1], 1e-10)
        assert np.array_equal(arc, want[0]) and np.array_equal(chord, want[1])
        assert repeated == want[2]
        if given_cp:
            assert (over, clipped) == prepare._cp_excess(block[2], 1.0, 0.05)
            assert np.array_equal(q, np.maximum(1.0 - block[2], 0.0))
        else:
            assert (over, clipped) == (-1, 0) and np.array_equal(q, block[2] ** 2)


@pytest.mark.parametrize("seed", range(20))
def test_noise_check_by_counting_answers_as_the_median_bound(seed: int) -> None:
    # The definition: the bound sqrt(256 r1^2 / 255), r1 = 1.4826 x the median residual.
    rng = np.random.default_rng(seed)
    n = int(rng.integers(11, 400))
    s = np.cumsum(rng.random(n) + 1e-3)
    q = np.sin(s) ** 2 + rng.standard_normal(n) * 10.0 ** float(rng.uniform(-6.0, -2.0))
    median = smoothing._fine_residual_median(s, q)
    r1 = smoothing.MAD_TO_SIGMA * median
    bound = math.sqrt(max(256.0 * r1**2 / 255.0, 0.0))
    for sigma in (bound, np.nextafter(bound, 0.0), 0.5 * bound, 2.0 * bound, 1e-3, 0.0):
        assert noise_at_most(s, q, sigma) == (bound <= sigma)
        limit = sigma / smoothing.MAD_TO_SIGMA
        above = smoothing._fine_residual_median_above(s, q, limit)
        assert above == median or (above == limit and median <= limit)


@pytest.mark.parametrize("seed", range(10))
def test_sums_onto_the_input_points_equal_numpy_add_at(seed: int) -> None:
    # Zeros of either sign are left out of the sums: the same sums to the bit.
    rng = np.random.default_rng(seed)
    n_in = int(rng.integers(3, 40))
    inputs = rng.integers(0, n_in, int(rng.integers(1, 90)))
    values = rng.standard_normal(inputs.size) * rng.choice([0.0, -0.0, 1.0, -1.0], inputs.size)
    values[rng.random(inputs.size) < 0.1] = np.nan
    want = np.zeros(n_in)
    np.add.at(want, inputs, values)
    got = prepare._summed_onto(inputs, values, n_in)
    assert np.array_equal(got, want, equal_nan=True)
    assert np.array_equal(np.signbit(got), np.signbit(want))


def test_plateau_search_from_the_edge_velocity_equals_the_search_of_its_cp() -> None:
    rng = np.random.default_rng(3)
    turning = math.radians(plateau.PLATEAU_MIN_TURNING)
    for _ in range(100):
        n = int(rng.integers(3, 120))
        t = np.sort(rng.random(n)) * np.pi
        x, y = -np.cos(t), np.sin(t)
        ue = np.abs(2.0 * np.sin(t)) * (1.0 + 0.02 * rng.standard_normal(n))
        ue[t > rng.uniform(1.5, 3.0)] = rng.uniform(0.5, 1.5)  # a base-pressure plateau
        s = np.concatenate([[0.0], np.cumsum(np.hypot(np.diff(x), np.diff(y)))])
        *got, cp = plateau._search_ue(s, ue, x, y, turning)
        want = plateau._search(s, plateau.cp_from_edge_velocity(ue), x, y, turning)
        assert np.array_equal(cp, 1.0 - ue**2)
        assert got[:4] == list(want[:4]) and np.array_equal(got[4], want[4])
        for mach in (0.0, 0.4):
            cp_m = plateau.cp_from_edge_velocity(ue, mach)
            assert plateau.side_plateau(s, ue, x, y, mach) == plateau.find_plateau(s, cp_m, x, y)
