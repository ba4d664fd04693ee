"""Options end to end: the other transition criteria, trips, inflow, smoothing, Mach number."""

from __future__ import annotations

import numpy as np
import pytest

import ibl
from ibl.prepare import edge_velocity_from_cp

#: Thwaites' flat-plate momentum thickness, theta sqrt(Re_x)/x = sqrt(0.45) = 0.6708 [derived].
THWAITES_PLATE = np.sqrt(0.45)


def _plate(reynolds: float, n: int = 401, **extra):
    s = np.linspace(0.0, 1.0, n)
    return {
        "surface": {"s": s.tolist()},
        "pressure": {"edge_velocity": [1.0] * n},
        "flow": {"reynolds": reynolds, **extra.pop("flow", {})},
        **extra,
    }


def test_granville_on_a_flat_plate():
    # Granville (1953) on a flat plate: instability where Re_theta reaches the Blasius
    # critical value, Re_delta* = 519.4 (Jordinson 1970 [memory]) / H = 2.591: 200.5, then
    # transition 375 + exp(6.1) later. With Thwaites' theta, Re_x = (Re_theta / 0.6708)^2.
    # 0.2 % covers the difference between 519.4 and the 519.06 of our own Orr-Sommerfeld
    # solution that the library tabulates.
    result = ibl.analyze(_plate(1e7, transition={"criterion": "granville"}))
    tr = result["sides"][0]["transition"]
    re_theta_tr = 519.4 / 2.591 + 375.0 + np.exp(6.1)
    assert tr["re_theta"] == pytest.approx(re_theta_tr, rel=2e-3)
    assert tr["s"] * 1e7 == pytest.approx((re_theta_tr / THWAITES_PLATE) ** 2, rel=4e-3)


@pytest.mark.parametrize("tu", [0.005, 0.01, 0.03], ids=["Tu0.5%", "Tu1%", "Tu3%"])
def test_abu_ghannam_shaw_on_a_flat_plate(tu):
    # Abu-Ghannam & Shaw (1980), zero pressure gradient: Re_theta,S = 163 + exp(6.91 - Tu%).
    expected = 163.0 + np.exp(6.91 - 100.0 * tu)
    doc = _plate(
        1e7, flow={"turbulence_intensity": tu}, transition={"criterion": "abu_ghannam_shaw"}
    )
    tr = ibl.analyze(doc)["sides"][0]["transition"]
    assert tr["re_theta"] == pytest.approx(expected, rel=2e-3)
    assert tr["s"] * 1e7 == pytest.approx((expected / THWAITES_PLATE) ** 2, rel=4e-3)


def test_higher_turbulence_moves_transition_upstream():
    positions = []
    for tu in (0.005, 0.01, 0.02, 0.04):
        doc = _plate(
            5e6, flow={"turbulence_intensity": tu}, transition={"criterion": "abu_ghannam_shaw"}
        )
        positions.append(ibl.analyze(doc)["sides"][0]["transition"]["s"])
    assert positions == sorted(positions, reverse=True)


def test_trip_sets_transition():
    doc = _plate(1e6, transition={"criterion": "none", "trip": {"surface": 0.3}})
    side = ibl.analyze(doc)["sides"][0]
    assert side["transition"]["cause"] == "trip"
    assert side["transition"]["s"] == pytest.approx(0.3)
    regime = np.array(side["regime"])
    s = np.array(side["s"])
    assert np.all(regime[s < 0.3] == "laminar") and np.all(regime[s > 0.3] == "turbulent")
    # theta is continuous through transition (Head's method starts from the laminar theta).
    i = int(np.searchsorted(s, 0.3))
    theta = np.array(side["theta"])
    assert theta[i] / theta[i - 1] < 1.05


def test_turbulent_inflow_continues_a_layer():
    # Marching a tripped plate from 0 to 1, or from 0.5 to 1 starting with the state the
    # first run has at 0.5, must give the same layer at 1 (limiting case: the start term).
    full = ibl.analyze(_plate(1e7, transition={"trip": {"surface": 0.0}}))["sides"][0]
    s = np.array(full["s"])
    i = int(np.searchsorted(s, 0.5))
    half = np.linspace(0.5, 1.0, 201)
    doc = {
        "surface": {"s": half.tolist()},
        "pressure": {"edge_velocity": [1.0] * half.size},
        "flow": {"reynolds": 1e7},
        "inflow": {
            "theta": full["theta"][i],
            "shape_factor": full["shape_factor"][i],
            "regime": "turbulent",
        },
    }
    part = ibl.analyze(doc)["sides"][0]
    assert part["transition"] is None
    assert part["theta"][-1] == pytest.approx(full["theta"][-1], rel=2e-3)
    assert part["shape_factor"][-1] == pytest.approx(full["shape_factor"][-1], rel=2e-3)


def test_smoothing_recovers_noisy_taps():
    # Circular cylinder in potential flow (separation at 103.1 deg by Thwaites), with
    # pressure-tap noise of 0.01 in Cp: smoothing brings separation back within 2 deg.
    rng = np.random.default_rng(7)
    phi = np.linspace(0.0, 2 * np.pi, 181)
    cp = 1.0 - 4.0 * np.sin(phi) ** 2 + rng.normal(0.0, 0.01, phi.size)
    cp[-1] = cp[0]
    doc = {
        "surface": {"x": (-np.cos(phi)).tolist(), "y": np.sin(phi).tolist()},
        "pressure": {"cp": np.minimum(cp, 1.0).tolist(), "smoothing": "auto"},
        "flow": {"reynolds": 1e5},
        "transition": {"criterion": "none"},
    }
    result = ibl.analyze(doc)
    assert "input_smoothed" in [w["code"] for w in result["warnings"]]
    for side in result["sides"]:
        assert np.degrees(side["separation"]["s"]) == pytest.approx(103.1, abs=2.0)


def test_isentropic_edge_velocity():
    # Isentropic flow (standard gas dynamics): at M_inf = 0.5 a point with local Mach 0.8
    # has p/p_inf = ((1 + 0.2 * 0.25)/(1 + 0.2 * 0.64))^3.5 and Ue/U_inf = (0.8/0.5) sqrt(T/T_inf).
    m_inf, m_e, g = 0.5, 0.8, 1.4
    p_ratio = ((1 + 0.2 * m_inf**2) / (1 + 0.2 * m_e**2)) ** 3.5
    cp = (p_ratio - 1.0) / (0.5 * g * m_inf**2)
    expected = m_e / m_inf * np.sqrt((1 + 0.2 * m_inf**2) / (1 + 0.2 * m_e**2))
    assert float(edge_velocity_from_cp(cp, m_inf)) == pytest.approx(expected, rel=1e-12)
    # and the incompressible limit is Bernoulli
    assert float(edge_velocity_from_cp(-0.44, 1e-4)) == pytest.approx(1.2, rel=1e-6)


def test_mach_number_is_reported():
    doc = _plate(1e6, flow={"mach": 0.3})
    doc["pressure"] = {"cp": [0.0] * 401}
    codes = [w["code"] for w in ibl.analyze(doc)["warnings"]]
    assert "compressible_edge" in codes


def test_batch_equals_single_runs():
    docs = [_plate(re) for re in (1e5, 1e6, 1e7)]
    cases = [ibl.parse_case(d) for d in docs]
    batch = ibl.run_batch(cases)
    for case, together in zip(cases, batch, strict=True):
        assert together == ibl.run(case)


def test_batch_isolates_a_bad_case():
    good = ibl.parse_case(_plate(1e6))
    bad_doc = _plate(1e6)
    bad_doc["pressure"]["edge_velocity"] = [1.0] * 400  # one value short
    bad = ibl.parse_case(bad_doc)
    out = ibl.run_batch([good, bad, good])
    assert isinstance(out[1], ibl.CaseError)
    assert out[1].problems[0].pointer == "/pressure/edge_velocity"
    assert out[0] == out[2] == ibl.run(good)


def test_laminar_closure_option():
    # White's fits give separation at lambda = -0.09 too; on Howarth's flow Ue = 1 - x the
    # separation position depends only on lambda_sep (closed form 0.1231, derived).
    s = np.linspace(0.0, 0.3, 301)
    for closure in ("cebeci_bradshaw", "white"):
        doc = {
            "surface": {"s": s.tolist()},
            "pressure": {"edge_velocity": (1.0 - s).tolist()},
            "flow": {"reynolds": 1e5},
            "transition": {"criterion": "none"},
            "laminar": {"closure": closure},
        }
        sep = ibl.analyze(doc)["sides"][0]["separation"]["s"]
        assert sep == pytest.approx(1 - 2.2 ** (-1 / 6), rel=1e-3)


@pytest.mark.slow  # compiles the threaded kernel (about 10 s)
def test_a_large_batch_split_between_threads_equals_single_runs(monkeypatch):
    # The march of a large batch is split into one kernel call per thread; every side
    # must come out as it does on its own.
    from ibl import march

    monkeypatch.setattr(march, "THREADS", 3)
    monkeypatch.setattr(march, "SIDES_PER_THREAD", 4)
    reynolds = np.geomspace(1e4, 1e8, 14).tolist()
    docs = [_plate(re, n=41 + 20 * (i % 3)) for i, re in enumerate(reynolds)]
    cases = [ibl.parse_case(d) for d in docs]
    batch = ibl.run_batch(cases)
    for case, together in zip(cases, batch, strict=True):
        assert together == ibl.run(case)


def test_a_pipelined_batch_equals_single_runs(monkeypatch):
    # A large batch is prepared, marched and built in chunks that overlap; bad cases among
    # them must still fail alone and every result come out as it does on its own.
    from ibl import analysis

    monkeypatch.setattr(analysis, "PIPELINE_CASES", 3)
    monkeypatch.setattr(analysis.march_module, "THREADS", 2)
    reynolds = np.geomspace(1e4, 1e8, 10).tolist()
    docs = [_plate(re, n=41 + 20 * (i % 3)) for i, re in enumerate(reynolds)]
    docs[4]["pressure"]["edge_velocity"] = docs[4]["pressure"]["edge_velocity"][:-1]
    cases = [ibl.parse_case(d) for d in docs]
    batch = ibl.run_batch(cases)
    assert isinstance(batch[4], ibl.CaseError)
    for i, (case, together) in enumerate(zip(cases, batch, strict=True)):
        if i != 4:
            assert together == ibl.run(case)
