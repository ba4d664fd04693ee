"""The compiled scalars of the result building against their plain numpy definitions.

``ibl.side_scalars`` and ``ibl.drag.friction_drag_compiled`` do the same floating-point
operations in the same order as the numpy code that defines each number (``_xy_at``,
``_margins``, ``_mesh``, ``_friction``, ``_column`` in ``ibl.analysis``,
``ibl.drag.friction_drag``),
so the check is equality to the bit (no tolerance; values compared as their IEEE bytes):
any difference would change results.  The sums of ``friction_drag`` are numpy's ``dot``
(BLAS ddot); the twin calls the same routine through numba, which the tests check too.
"""

from __future__ import annotations

import dataclasses
import functools
import json
import math
from pathlib import Path

import msgspec
import numpy as np
import pytest

from ibl import analysis, drag, mesh
from ibl.analysis import (
    _FLOAT_STATIONS,
    _builtins,
    _column,
    _friction,
    _margins,
    _mesh,
    _xy_at,
    parse_case,
    run,
)
from ibl.bench import ellipse_case
from ibl.march import SideState, march
from ibl.prepare import SideInput
from ibl.side_scalars import station_columns, xy_at_compiled

ROOT = Path(__file__).resolve().parents[1]


def _same(a: object, b: object) -> bool:
    """Equal to the bit (NaN equal to NaN): compared as MessagePack bytes."""
    return msgspec.msgpack.encode(a) == msgspec.msgpack.encode(b)


def _plate(n: int = 120, gradient: float = 0.0) -> dict:
    s = np.linspace(0.0, 1.0, n)
    return {
        "surface": {"s": s.tolist()},
        "pressure": {"edge_velocity": (1.0 - gradient * s).tolist()},
        "flow": {"reynolds": 2e6},
    }


def _sphere(n: int = 121) -> dict:
    phi = np.linspace(0.0, math.pi, n)
    return {
        "surface": {"x": (-np.cos(phi)).tolist(), "y": np.sin(phi).tolist()},
        "pressure": {"cp": (1.0 - 2.25 * np.sin(phi) ** 2).tolist()},
        "flow": {"reynolds": 2e5},
        "body": {"kind": "axisymmetric"},
    }


def _documents() -> list[dict]:
    """Contours and single surfaces, planar and axisymmetric, laminar and turbulent
    starts, a plateau in the input, separation laminar and turbulent."""
    turbulent_inflow = _plate()
    turbulent_inflow["inflow"] = {"theta": 1e-3, "shape_factor": 1.4, "regime": "turbulent"}
    return [
        ellipse_case(200),
        ellipse_case(57),
        ellipse_case(400, reynolds=3e5),
        _plate(),
        _plate(gradient=0.6),
        turbulent_inflow,
        _sphere(),
        json.loads((ROOT / "examples" / "strut.json").read_text()),
        json.loads((ROOT / "tests/cases/section_noisy_taps.json").read_text()),
    ]


DOCUMENTS = _documents()


@functools.cache
def _marched(document: int) -> list[tuple[SideInput, SideState]]:
    """The prepared and marched sides of one of ``DOCUMENTS``: on first use, not when the
    tests are collected (a first march compiles the kernels, in each test worker)."""
    ready = analysis._prepare_all([parse_case(DOCUMENTS[document])])
    sides = analysis._sides(ready)
    return list(zip(sides, march(sides), strict=True))


def _random_side(rng: np.random.Generator, n: int) -> tuple[np.ndarray, ...]:
    s = np.cumsum(rng.random(n) + 1e-3) - 0.5
    x, y = rng.standard_normal(n), rng.standard_normal(n)
    return s, x, y


@pytest.mark.parametrize("seed", range(10))
def test_xy_at_equals_its_numpy_definition(seed: int) -> None:
    rng = np.random.default_rng(seed)
    n = int(rng.integers(2, 300))
    s, x, y = _random_side(rng, n)
    side = dataclasses.replace(_marched(0)[0][0], s=s, x=x, y=y)
    # Between stations, on them, and beyond both ends.
    positions = [*rng.uniform(s[0] - 1.0, s[-1] + 1.0, 40), *s[:: max(1, n // 7)], s[-1]]
    for at in positions:
        assert xy_at_compiled(s, x, y, float(at)) == _xy_at(side, float(at))


def _g_arrays(rng: np.random.Generator, n: int, start: str) -> tuple[np.ndarray, ...]:
    s = np.cumsum(rng.random(n) + 1e-3)
    s -= s[0]
    x = np.cumsum(rng.standard_normal(n))  # parts running upstream too
    ue = rng.random(n) + 0.2
    cf = rng.random(n) * 10.0 ** float(rng.integers(-5, -1))
    r = rng.random(n) + 0.1
    if start == "undefined":  # a stagnation point or sharp edge: no first value
        cf[0] = np.nan
    elif start == "repeated":  # the first panel without length: its fallback
        cf[0] = np.nan
        s[1] = s[0]
    elif start == "gap":  # a NaN further on: no drag
        cf[n // 2] = np.nan
    return s, x, ue, cf, r


@pytest.mark.parametrize("seed", range(12))
@pytest.mark.parametrize("start", ["defined", "undefined", "repeated", "gap"])
@pytest.mark.parametrize("axisymmetric", [False, True])
def test_friction_drag_equals_its_numpy_definition(
    seed: int, start: str, axisymmetric: bool
) -> None:
    rng = np.random.default_rng(seed)
    n = int(rng.integers(2, 400)) if seed else 3
    s, x, ue, cf, r = _g_arrays(rng, n, start)
    weight = 2.0 * math.pi * r if axisymmetric else None
    expected = drag.friction_drag(s, x, ue, cf, weight)
    got = drag.friction_drag_compiled(s, x, ue, cf, r, axisymmetric)
    assert _same(got, math.nan if expected is None else expected)


def test_compiled_dot_is_numpys() -> None:
    # The trapezoids' sum is numpy's dot (BLAS ddot); the twin's must be the same routine.
    rng = np.random.default_rng(3)
    for n in [2, 3, 4, 5, 16, 17, 33, 64, 199, 401, 1000]:
        x = np.cumsum(rng.random(n))
        g = rng.standard_normal(n) * 1e-3
        expected = 0.5 * float(np.dot(g[1:] + g[:-1], x[1:] - x[:-1]))
        s = np.arange(float(n))
        assert drag.friction_drag_compiled(s, x, np.ones(n), g, s, False) == expected


def _with_nonfinite(state: SideState, rng: np.random.Generator) -> SideState:
    """The state with NaN and infinite lambda and H values and ties at their extremes."""
    lam = state.thwaites_lambda.copy()
    h = state.shape_factor.copy()
    for values in (lam, h):
        if values.size > 3:
            picks = rng.choice(values.size, size=min(6, values.size), replace=False)
            values[picks[0]] = np.nan
            values[picks[1]] = np.inf
            values[picks[2]] = -np.inf
            values[picks[3:]] = values[picks[3]]  # a tie
    return dataclasses.replace(state, thwaites_lambda=lam, shape_factor=h)


@pytest.mark.parametrize("document", range(len(DOCUMENTS)))
def test_side_scalars_equal_their_numpy_definitions(document: int) -> None:
    for index, (side, state) in enumerate(_marched(document)):
        _check_side_scalars(side, state, np.random.default_rng([document, index]))


def _check_side_scalars(side: SideInput, state: SideState, rng: np.random.Generator) -> None:
    variants = [state, _with_nonfinite(state, rng)]
    nan_lambda = state.thwaites_lambda.copy()
    nan_lambda[:] = np.nan
    variants.append(dataclasses.replace(state, thwaites_lambda=nan_lambda))
    for variant in variants:
        warnings: list = []
        built = analysis._side(
            side, variant, analysis._Lists, warnings, "/sides/0", wanted=frozenset({"cf"})
        )
        assert _same(built.margins, _margins(side, variant))
        assert _same(built.mesh, _mesh(side, variant))
        assert _same(built.friction_drag, _friction(side, variant))
        for event, at in [
            (built.transition, variant.transition_s),
            (built.laminar_separation, variant.laminar_separation_s),
            (built.separation, variant.separation_s),
        ]:
            if event is not None:
                assert (event.x, event.y) == _xy_at(side, at)
        # Cf with its undefined values as None, as the numpy conversion writes it.
        expected_cf = [None if math.isnan(v) else v for v in variant.cf.tolist()]
        assert _same(built.cf, expected_cf)


@pytest.mark.parametrize("document", range(len(DOCUMENTS)))
def test_station_columns_equal_their_numpy_definitions(document: int) -> None:
    for side, state in _marched(document):
        _check_station_columns(side, state)


def _check_station_columns(side: SideInput, state: SideState) -> None:
    contour = side.x is not None and side.y is not None
    names = [n for n in _FLOAT_STATIONS if contour or n not in ("x", "y")]
    empty = np.empty(0)
    for keep in sorted({state.count, state.count // 2, 1, 0}):
        # A state cut after ``keep`` stations (as at separation or a non-finite value).
        arrays = ("s", "ue", "theta", "shape_factor", "re_theta", "delta99")
        cut = dataclasses.replace(
            state, count=keep, **{name: getattr(state, name)[:keep] for name in arrays}
        )
        block = station_columns(
            contour,
            side.offset,
            keep,
            cut.s,
            side.x if contour else empty,
            side.y if contour else empty,
            cut.ue,
            cut.theta,
            cut.shape_factor,
            cut.re_theta,
            cut.delta99,
        )
        assert block.shape == (len(names), keep)
        assert block.flags.c_contiguous
        expected = np.array([_column(name, side, cut, keep) for name in names]).reshape(block.shape)
        assert block.tobytes() == expected.tobytes()


def test_first_cell_heights_equal_their_numpy_definition() -> None:
    rng = np.random.default_rng(5)
    for _ in range(50):
        y_plus = tuple(rng.random(int(rng.integers(1, 6))) * 10.0 ** float(rng.integers(0, 3)))
        nu, u_tau = float(rng.random() * 1e-4), float(rng.random() + 1e-3)
        expected = mesh.first_cell_height(y_plus, nu, u_tau).tolist()
        assert mesh.first_cell_heights(y_plus, nu, u_tau) == expected


@pytest.mark.parametrize(
    "output",
    [
        {},
        {"stations": False},
        {"stations": ["cf", "x", "regime"]},
        {"stations": ["theta"], "sensitivities": ["transition", "friction_drag"]},
    ],
)
@pytest.mark.parametrize(
    "doc", [ellipse_case(60), _plate(), _sphere()], ids=["ellipse", "plate", "sphere"]
)
def test_builtins_equal_msgspecs(doc: dict, output: dict) -> None:
    # analyze's document is msgspec.to_builtins of the result, members in the same order.
    case = parse_case({**doc, "output": output})
    expected = json.dumps(msgspec.to_builtins(run(case)))
    assert json.dumps(_builtins(run(case))) == expected
