"""Batches that mix awkward inputs with good cases and bad ones.

Generated members: closed contours listed from any point, stagnation plateaus at and within
rounding of Cp = 1 (float64 and float32), symmetric taps with a perturbed nose tap, open
one-sided surfaces, bodies of revolution with a pointed tail, noisy taps with and without
smoothing, and cases that must be refused.  The invariances: a batch gives, case by case,
exactly what the case gives alone (the lockstep march is the same march), a bad case fails
alone with its own pointers, and every result holds only finite numbers.
"""

from __future__ import annotations

import math

import msgspec
import numpy as np
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import ibl
from ibl.errors import CaseError

SETTINGS = settings(
    max_examples=25,
    deadline=None,
    suppress_health_check=[HealthCheck.too_slow],
    derandomize=True,
)


def _case(x, y, cp, re=1e5, **extra) -> dict:
    doc = {
        "surface": {"x": np.asarray(x).tolist(), "y": np.asarray(y).tolist()},
        "pressure": {"cp": np.asarray(cp).tolist()},
        "flow": {"reynolds": re},
    }
    doc.update(extra)
    return doc


def _circle(n: int, factor: float = 4.0):
    phi = np.linspace(0.0, 2.0 * np.pi, n + 1)
    return -np.cos(phi), np.sin(phi), 1.0 - factor * np.sin(phi) ** 2


@st.composite
def rotated(draw):
    n = draw(st.integers(24, 80))
    k = draw(st.integers(0, n - 1))
    b = draw(st.floats(0.2, 1.0))
    phi = np.linspace(0.0, 2.0 * np.pi, n + 1)[:-1]
    x, y = -np.cos(phi), b * np.sin(phi)
    speed = (1.0 + b) * np.abs(np.sin(phi)) / np.sqrt(np.sin(phi) ** 2 + b * b * np.cos(phi) ** 2)
    cp = 1.0 - speed**2  # ellipse at zero incidence (Lamb, Hydrodynamics sec. 72)
    order = np.r_[np.arange(k, n), np.arange(0, k), k]
    return _case(x[order], y[order], cp[order])


@st.composite
def plateau(draw):
    x, y, cp = _circle(draw(st.sampled_from([36, 72])))
    width = draw(st.integers(1, 3))
    below = draw(st.sampled_from([0.0, 2.0**-52, 6e-8, 5e-7]))
    taps = [*range(width + 1), *range(-width - 1, 0)]
    cp[taps] = 1.0 - below
    if draw(st.booleans()):
        cp = cp.astype(np.float32).astype(np.float64)
        cp[-1] = cp[0]
    return _case(x, y, cp)


@st.composite
def nose_tap(draw):
    kind = draw(st.sampled_from(["planar", "axisymmetric"]))
    x, y, cp = _circle(36, 9.0 / 4.0 if kind == "axisymmetric" else 4.0)
    cp[0] = cp[-1] = draw(st.floats(0.85, 1.0))
    return _case(x, y, cp, body={"kind": kind})


@st.composite
def one_sided(draw):
    sign = draw(st.sampled_from([1.0, -1.0]))
    x = 0.5 * (1.0 - np.cos(np.linspace(0.0, np.pi, draw(st.integers(20, 80)))))
    y = sign * 0.6 * (np.sqrt(x) - x)
    cp = 1.0 - np.minimum(20.0 * np.sqrt(x), 1.2) ** 2
    return _case(x, y, cp, re=1e6)


@st.composite
def pointed_tail(draw):
    # A prolate spheroid x^2 + (r/b)^2 = 1 whose radius closes to a point at the tail; the
    # potential-flow surface speed is taken as that of a sphere scaled to the body (an
    # invented distribution: the test is about the tail, not the flow).
    b = draw(st.floats(0.1, 0.3))
    n = draw(st.integers(30, 90))
    phi = np.linspace(0.0, np.pi, n)
    x, r = -np.cos(phi), b * np.sin(phi)
    cp = 1.0 - (1.2 * np.sin(phi)) ** 2
    trip = {"transition": {"trip": {"upper": 0.2}}} if draw(st.booleans()) else {}
    return _case(x, r, cp, re=draw(st.floats(1e4, 1e7)), body={"kind": "axisymmetric"}, **trip)


@st.composite
def noisy(draw):
    x, y, cp = _circle(120)
    rng = np.random.default_rng(draw(st.integers(0, 1000)))
    cp = np.minimum(cp + rng.normal(0.0, draw(st.floats(0.0, 0.01)), cp.size), 1.0)
    cp[-1] = cp[0]
    extra = {"transition": {"trip": {"upper": 0.3, "lower": 0.3}}}
    doc = _case(x, y, cp, re=draw(st.floats(1e5, 1e7)), **extra)
    if draw(st.booleans()):
        doc["pressure"]["smoothing"] = "auto"
    return doc


@st.composite
def bad(draw):
    x, y, cp = _circle(36)
    which = draw(st.sampled_from(["cp_over", "trip_side", "length", "smoothing"]))
    if which == "smoothing":
        # Built as a Case directly (as a Python caller may), so the schema's bound is not
        # checked on the way in: the preparation must refuse it.
        case = ibl.parse_case(_case(x, y, cp))
        smoothing = draw(st.sampled_from([math.inf, 1.0, 1e12]))
        pressure = msgspec.structs.replace(case.pressure, smoothing=smoothing)
        return msgspec.structs.replace(case, pressure=pressure), "/pressure/smoothing"
    if which == "cp_over":
        cp[5] = 1.3
        return _case(x, y, cp), "/pressure/cp/5"
    if which == "trip_side":
        s = np.linspace(0.0, 1.0, 20)
        doc = {
            "surface": {"s": s.tolist()},
            "pressure": {"edge_velocity": np.ones(20).tolist()},
            "flow": {"reynolds": 1e6},
            "transition": {"trip": {"lower": 0.5}},
        }
        return doc, "/transition/trip/lower"
    return _case(x, y[:-1], cp), "/surface/y"


good = st.one_of(rotated(), plateau(), nose_tap(), one_sided(), pointed_tail(), noisy())


def _finite(result: dict) -> None:
    for side in result["sides"]:
        for key, values in side.items():
            if isinstance(values, list) and values and isinstance(values[0], float | None):
                assert all(v is None or math.isfinite(v) for v in values), key


@given(cases=st.lists(st.one_of(good.map(lambda c: (c, None)), bad()), min_size=2, max_size=8))
@SETTINGS
def test_mixed_batches_equal_single_runs_and_fail_alone(cases) -> None:
    docs = [doc for doc, _ in cases]
    parsed = [ibl.parse_case(doc) for doc in docs]
    batch = ibl.run_batch(parsed)
    assert len(batch) == len(cases)
    for (_, pointer), case, got in zip(cases, parsed, batch, strict=True):
        if pointer is not None:
            assert isinstance(got, CaseError)
            assert pointer in [p.pointer for p in got.problems]
            continue
        assert not isinstance(got, CaseError), got.problems
        alone = ibl.run(case)
        assert msgspec.to_builtins(got) == msgspec.to_builtins(alone)
        _finite(msgspec.to_builtins(got))
