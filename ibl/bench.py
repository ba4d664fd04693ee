"""Timing figures of the march (``ibl bench``): printed, never asserted.

Contents
--------
- ``ellipse_case(n)``: a benchmark case, an ellipse section at incidence (potential-flow
  Cp), n points per side, transition and turbulent separation on both sides.
- ``reference_side(side)``: a straightforward per-side implementation with scipy
  (CubicSpline, cumulative Simpson quadrature, ``solve_ivp`` with a separation event),
  timed in the same run and used to show that the fast march gives the same answers.
- ``main()``: prints microseconds per side at N = 200 and 400, single and batched; sides
  per second in a batch for full and summary answers (``output.stations = false``), and
  the size of one answer, full and summary, in JSON and MessagePack; then the ratios
  against the march, each beside its target (``ratios``).
- ``ratios(n)``: the end-to-end paths as ratios to the march measured in the same run
  (absolute figures move twofold between machines; ratios much less): summary and full
  ``run_batch`` sides per second against the march's, and ``analyze(dict)`` of one case
  against the march of that case.
- ``finite_difference_side(side)``: the finite-difference laminar march
  (``ibl.finite_difference``) of one side; ``main`` times it at N = 200 per side against
  the march of the integral methods on the same sides, as a ratio with its target.
- ``_sensitivity_figures``: at N = 200, the time per side of a plain march and of a
  march with the derivatives of every event and the friction drag
  (``output.sensitivities``), and their ratio, measured in one run; then the same
  ellipse as a contour, the whole case with and without every derivative (the profile
  drag's included, and the two extra marches per side of the stagnation point's move).
- ``finite_difference_analysis(n)``: a full analysis (``analyze(dict)``) of the ellipse with
  ``laminar.method = "finite_difference"`` against the same analysis with Thwaites' method,
  timed in turn in one run: the cost of the option, as a ratio (printed by ``main``).
"""

from __future__ import annotations

import statistics
import time
from collections.abc import Callable
from typing import Any, Literal

import msgspec
import numpy as np

from ibl.analysis import analyze, parse_case, run, run_batch
from ibl.finite_difference import march_laminar
from ibl.march import march
from ibl.prepare import SideInput, prepare
from ibl.schema import Output

__all__ = [
    "FD_ANALYSIS_TARGET",
    "FD_COST_TARGET",
    "RATIO_TARGETS",
    "ellipse_case",
    "finite_difference_analysis",
    "finite_difference_side",
    "main",
    "ratios",
    "reference_side",
]

#: Targets of the end-to-end paths, as ratios to the compiled march in the same run:
#: run_batch sides per second with summary answers (no station arrays) and with all
#: station arrays, at least these fractions of the march's; analyze(dict) of one case at
#: most this many times the march of its sides.
RATIO_TARGETS = {"summary": 0.60, "full": 0.35, "analyze": 2.5}


def ellipse_case(n: int, reynolds: float = 2e6) -> dict[str, Any]:
    """A 4:1 ellipse at 4 degrees, unit chord, exact potential-flow Cp, n points per side."""
    a, b, alpha = 0.5, 0.125, np.radians(4.0)
    eta = np.linspace(0.0, 2.0 * np.pi, 2 * n + 1)
    speed = (
        (a + b)
        * np.abs(np.sin(eta - alpha))
        / np.sqrt(a**2 * np.sin(eta) ** 2 + b**2 * np.cos(eta) ** 2)
    )
    return {
        "surface": {"x": (a + a * np.cos(eta)).tolist(), "y": (b * np.sin(eta)).tolist()},
        "pressure": {"cp": (1.0 - speed**2).tolist()},
        "flow": {"reynolds": reynolds},
    }


def reference_side(side: SideInput) -> dict[str, float]:
    """Thwaites + Michel + Head on one side with general-purpose scipy tools, no shortcuts.

    Planar sides from a stagnation point only; the laminar closure and correlations are
    the library's documented vectorised functions.
    """
    from scipy.integrate import cumulative_simpson, solve_ivp
    from scipy.interpolate import CubicSpline

    from ibl import laminar, transition, turbulent

    s, ue, nu = side.s, side.ue, side.nu
    spline = CubicSpline(s, ue)
    fine = np.linspace(0.0, s[-1], 4001)
    u = np.maximum(spline(fine), 0.0)
    theta2 = 0.45 * nu * cumulative_simpson(u**5, x=fine, initial=0.0)
    stagnation = 0.075 * nu / side.slope  # Ue = a s near s = 0, where the ratio is 0/0
    with np.errstate(divide="ignore", invalid="ignore"):
        theta2 = np.where(fine > 0.002 * s[-1], theta2 / u**6, stagnation)
    lam = theta2 * spline(fine, 1) / nu
    re_theta = u * np.sqrt(theta2) / nu
    with np.errstate(divide="ignore", invalid="ignore"):  # Re_s = 0 at the first point
        margin = re_theta - transition.re_theta_transition_michel_1951(u * fine / nu)
    lsep = int(np.argmax(lam[1:] <= side.options.separation_lambda)) + 1
    tr = int(np.argmax(margin[1:] >= 0.0)) + 1
    if lam[lsep] > side.options.separation_lambda:
        lsep = fine.size
    if margin[tr] < 0.0:
        tr = fine.size
    start = min(lsep, tr)
    if start >= fine.size:
        return {"transition": np.nan, "separation": np.nan}
    s0 = fine[start]

    def rhs(x: float, y: Any) -> list[float]:
        theta, h1 = y
        uu, du = float(spline(x)), float(spline(x, 1))
        h = float(turbulent.shape_factor_from_h1_head_1958(h1))
        cf = float(turbulent.cf_ludwieg_tillmann_1949(h, uu * theta / nu))
        grad = theta * du / uu
        return [
            0.5 * cf - (h + 2) * grad,
            (
                float(turbulent.entrainment_coefficient_head_1958(h1))
                - h1 * (0.5 * cf - (h + 1) * grad)
            )
            / theta,
        ]

    def separated(x: float, y: Any) -> float:
        return float(turbulent.shape_factor_from_h1_head_1958(y[1])) - 2.4

    separated.terminal = True  # type: ignore[attr-defined]
    y0 = [float(np.sqrt(theta2[start])), float(turbulent.entrainment_shape_factor_head_1958(1.4))]
    sol = solve_ivp(rhs, (s0, s[-1]), y0, events=separated, rtol=1e-6, atol=1e-12)
    sep = float(sol.t_events[0][0]) if sol.t_events[0].size else np.nan
    del laminar
    return {"transition": float(s0), "separation": sep}


def _time(function: Callable[[], object], repeat: int) -> float:
    """Median wall time of ``function`` in seconds over ``repeat`` calls (after a warm-up)."""
    function()
    times = []
    for _ in range(repeat):
        start = time.perf_counter()
        function()
        times.append(time.perf_counter() - start)
    return statistics.median(times)


def _figures(n: int, repeat: int, batch: int) -> None:
    doc = ellipse_case(n)
    case = parse_case(doc)
    sides = prepare(case).sides
    n_sides = len(sides)
    many = [side for _ in range(batch // n_sides) for side in sides]
    cases = [case] * (batch // n_sides)
    rows = [
        ("march, one case (numpy arrays in and out)", lambda: march(sides), repeat, n_sides),
        (f"march, batch of {len(many)} sides in lockstep", lambda: march(many), 5, len(many)),
        ("run(Case) -> Result, one case", lambda: run(case), repeat, n_sides),
        (f"run_batch, {len(cases)} cases", lambda: run_batch(cases), 5, len(many)),
        ("analyze(dict) -> dict, one case", lambda: analyze(doc), repeat, n_sides),
        (
            "reference: scipy solve_ivp per side",
            lambda: [reference_side(x) for x in sides],
            5,
            n_sides,
        ),
    ]
    for label, function, times, count in rows:
        per_side = _time(function, times) / count
        per_case = per_side * n_sides
        print(f"{n:>7} {label:<46} {per_case * 1e3:>8.3f} ms {per_side * 1e6:>8.1f} us")
    ours = run(case)
    for side, result_side in zip(sides, ours.sides, strict=True):
        ref = reference_side(side)
        tr = result_side.transition.s if result_side.transition else np.nan
        sep = result_side.separation.s if result_side.separation else np.nan
        print(
            f"{'':>7} {side.name}: transition s = {tr:.5f} (scipy {ref['transition']:.5f}), "
            f"separation s = {sep:.5f} (scipy {ref['separation']:.5f})"
        )
    march_rate = len(many) / _time(lambda: march(many), 3)
    run_rate = len(many) / _time(lambda: run_batch(cases), 3)
    summary = msgspec.structs.replace(case, output=Output(stations=False))
    summaries = [summary] * len(cases)
    summary_rate = len(many) / _time(lambda: run_batch(summaries), 3)
    print(
        f"{'':>7} sides per second in a batch: {march_rate:,.0f} (march), "
        f"{run_rate:,.0f} (run_batch), {summary_rate:,.0f} (run_batch, summary answers)"
    )
    for fmt, encode in (("JSON", msgspec.json.encode), ("MessagePack", msgspec.msgpack.encode)):
        arrays: Literal["json", "msgpack"] = "json" if fmt == "JSON" else "msgpack"
        full = len(encode(run(case, arrays=arrays)))
        short = len(encode(run(summary, arrays=arrays)))
        print(f"{'':>7} one answer in {fmt}: {full:,} bytes full, {short:,} bytes summary")


def _sensitivity_figures(n: int, repeat: int) -> None:
    """Per side: a plain march, and the same march with all derivatives, timed alternately
    in one run (so that both see the same load), the ratio of their medians."""
    from ibl.sensitivity import derivatives

    wanted = ["transition", "laminar_separation", "separation", "friction_drag"]
    print(f"{'N/side':>7} sensitivities (each side of the ellipse as a single surface)")
    for side in prepare(parse_case(ellipse_case(n))).sides:
        doc = {
            "surface": {"s": side.s.tolist()},
            "pressure": {"edge_velocity": side.ue.tolist()},
            "flow": {"reynolds": 2e6},
            "output": {"stations": False, "sensitivities": wanted},
        }
        case = parse_case(doc)
        one = prepare(case).sides

        def plain(one: list[SideInput] = one) -> object:
            return march(one)

        def derived(case: Any = case, one: list[SideInput] = one) -> object:
            return derivatives(case, one[0], march(one)[0], "/sides/0")

        plain()
        derived()
        times: dict[str, list[float]] = {"plain": [], "derived": []}
        for _ in range(repeat):
            for key, function in (("plain", plain), ("derived", derived)):
                start = time.perf_counter()
                function()
                times[key].append(time.perf_counter() - start)
        t_plain = statistics.median(times["plain"])
        t_derived = statistics.median(times["derived"])
        print(
            f"{n:>7} {side.name}: plain march {t_plain * 1e6:.1f} us, with all sensitivities "
            f"{t_derived * 1e6:.1f} us, ratio {t_derived / t_plain:.2f}"
        )
    # The ellipse as a contour: the whole case, its stagnation point and split included.
    doc = ellipse_case(n)
    doc["output"] = {"stations": False}
    cases = {"plain": parse_case(doc)}
    doc["output"] = {"stations": False, "sensitivities": [*wanted, "profile_drag"]}
    cases["derived"] = parse_case(doc)
    for c in cases.values():
        run(c)
    whole: dict[str, list[float]] = {"plain": [], "derived": []}
    for _ in range(repeat):
        for key, c in cases.items():
            start = time.perf_counter()
            run(c)
            whole[key].append(time.perf_counter() - start)
    t_plain = statistics.median(whole["plain"])
    t_derived = statistics.median(whole["derived"])
    print(
        f"{n:>7} contour case: plain {t_plain * 1e6:.1f} us, with all sensitivities "
        f"{t_derived * 1e6:.1f} us, ratio {t_derived / t_plain:.2f}"
    )


#: Target: the finite-difference laminar march costs at most this many times the march of
#: the integral methods, per side.
FD_COST_TARGET = 10.0


def finite_difference_side(side: SideInput) -> float:
    """The finite-difference laminar march of one side; its separation s (NaN if none)."""
    start = side.start if side.start in ("stagnation", "sharp") else None
    radius = side.r if side.axisymmetric else None
    return march_laminar(side.s, side.ue, side.nu, r=radius, start=start).separation


def _finite_difference_figures(n: int, repeat: int) -> None:
    sides = prepare(parse_case(ellipse_case(n))).sides
    integral = _time(lambda: march(sides), repeat) / len(sides)
    fd = _time(lambda: [finite_difference_side(side) for side in sides], 20) / len(sides)
    print(
        f"{n:>7} {'finite-difference laminar march (to separation)':<46} "
        f"{fd * len(sides) * 1e3:>8.3f} ms {fd * 1e6:>8.1f} us"
    )
    print(
        f"{'':>7} finite-difference / integral march per side: {fd / integral:.1f} "
        f"(target <= {FD_COST_TARGET:g})"
    )


def _lag_entrainment_figures(n: int, repeat: int) -> None:
    """The march of the same sides with the lag-entrainment method and with Head's, calls
    taken in turn; the ratio of their costs per side."""
    doc = ellipse_case(n)
    lag_doc = {**doc, "turbulent": {**doc.get("turbulent", {}), "method": "lag_entrainment"}}
    head_sides = prepare(parse_case(doc)).sides
    lag_sides = prepare(parse_case(lag_doc)).sides
    times = _interleaved(
        {"head": lambda: march(head_sides), "lag": lambda: march(lag_sides)}, repeat
    )
    per_side = times["lag"] / len(lag_sides)
    print(
        f"{n:>7} {'march, lag-entrainment turbulent method':<46} "
        f"{times['lag'] * 1e3:>8.3f} ms {per_side * 1e6:>8.1f} us"
    )
    print(
        f"{'':>7} lag-entrainment / Head march per side (same sides): "
        f"{times['lag'] / times['head']:.2f}"
    )


#: Target: a full analysis with the finite-difference laminar method costs at most this
#: many times the same analysis with Thwaites' method (the laminar march dominates).
FD_ANALYSIS_TARGET = 20.0


def finite_difference_analysis(n: int = 200, rounds: int = 21) -> float:
    """``analyze(dict)`` of the ellipse (``n`` points per side) with the finite-difference
    laminar method against the same with Thwaites' method, in turn; prints and returns
    the ratio of their median times."""
    thwaites = ellipse_case(n)
    fd = {**thwaites, "laminar": {"method": "finite_difference"}}
    times = _interleaved({"thwaites": lambda: analyze(thwaites), "fd": lambda: analyze(fd)}, rounds)
    ratio = times["fd"] / times["thwaites"]
    met = "met" if ratio <= FD_ANALYSIS_TARGET else "not met"
    print(
        f"{n:>7} {'analyze(dict), laminar finite_difference':<46} "
        f"{times['fd'] * 1e3:>8.3f} ms = {ratio:.1f} times the Thwaites analysis "
        f"({times['thwaites'] * 1e3:.3f} ms; target <= {FD_ANALYSIS_TARGET:g}: {met})"
    )
    return ratio


def _interleaved(functions: dict[str, Callable[[], object]], rounds: int) -> dict[str, float]:
    """Median wall time of each function, calls taken in turn round after round, so that
    a change in the machine's load touches all of them alike."""
    for function in functions.values():
        function()
    times: dict[str, list[float]] = {key: [] for key in functions}
    for _ in range(rounds):
        for key, function in functions.items():
            start = time.perf_counter()
            function()
            times[key].append(time.perf_counter() - start)
    return {key: statistics.median(values) for key, values in times.items()}


def ratios(n: int = 200, batch: int = 400, rounds: int = 7, single: int = 200) -> dict[str, float]:
    """The end-to-end paths against the march, measured in one run; printed and returned.

    ``batch`` sides (cases of the ellipse of ``n`` points per side) through ``march``, and
    through ``run_batch`` with summary answers and with every station array, as Python
    lists (``arrays="list"``) and as the JSON fragments the service writes
    (``arrays="json"``); one case through ``analyze(dict)`` against the march of its
    sides. Returns the ratios by name.
    """
    doc = ellipse_case(n)
    case = parse_case(doc)
    summary = msgspec.structs.replace(case, output=Output(stations=False))
    sides = prepare(case).sides
    count = batch // len(sides)
    many = [side for _ in range(count) for side in sides]
    total = len(many)
    batched = _interleaved(
        {
            "march": lambda: march(many),
            "summary": lambda: run_batch([summary] * count),
            "full": lambda: run_batch([case] * count),
            "full_json": lambda: run_batch([case] * count, arrays="json"),
        },
        rounds,
    )
    one = _interleaved({"march": lambda: march(sides), "analyze": lambda: analyze(doc)}, single)
    rate = {key: total / seconds for key, seconds in batched.items()}
    out = {
        "summary": rate["summary"] / rate["march"],
        "full": rate["full"] / rate["march"],
        "full_json": rate["full_json"] / rate["march"],
        "analyze": one["analyze"] / one["march"],
    }
    target = RATIO_TARGETS
    print(f"ratios to the march in one run (N = {n} per side, {total} sides; one case):")
    print(f"  march: {rate['march']:,.0f} sides/s in a batch, {one['march'] * 1e3:.3f} ms one case")
    rows = (
        ("summary", "run_batch, summary answers", rate["summary"], ">=", target["summary"]),
        ("full", "run_batch, all station arrays", rate["full"], ">=", target["full"]),
        ("full_json", "run_batch, all arrays as JSON", rate["full_json"], ">=", target["full"]),
    )
    for key, label, value, sign, goal in rows:
        met = "met" if out[key] >= goal else "not met"
        print(
            f"  {label:<32} {value:>8,.0f} sides/s = {out[key]:.2f} of the march "
            f"(target {sign} {goal:.2f}: {met})"
        )
    met = "met" if out["analyze"] <= target["analyze"] else "not met"
    print(
        f"  {'analyze(dict), one case':<32} {one['analyze'] * 1e3:>8.3f} ms = "
        f"{out['analyze']:.2f} times the march (target <= {target['analyze']}: {met})"
    )
    return out


def main(repeat: int = 200, batch: int = 2000, *, ratios_only: bool = False) -> int:
    """Print timing figures (only the ratios to the march with ``ratios_only``); return 0."""
    if ratios_only:
        ratios(200)
        finite_difference_analysis(200)
        return 0
    print("ibl bench: median wall time, one process, one core")
    print(f"{'N/side':>7} {'what':<46} {'per case':>11} {'per side':>11}")
    for n in (200, 400):
        _figures(n, repeat, batch)
    _finite_difference_figures(200, repeat)
    finite_difference_analysis(200)
    _lag_entrainment_figures(200, repeat)
    _sensitivity_figures(200, max(repeat, 50))
    print(
        "Targets: one case of 2 sides x 200 points <= 0.3 ms; >= 10,000 sides/s in a batch; "
        "all sensitivities <= 3 times a plain march per side."
    )
    ratios(200)
    return 0
