"""From case document to result document.

Contents
--------
- ``parse_case(doc)``: dict, JSON text or ``Case`` to a validated ``Case``.
- ``run(case)`` / ``run_batch(cases)``: typed analysis; a batch is marched in lockstep.
- ``analyze(doc)``: the whole path for JSON-ready input and output.
- ``CAUTION``: the caution carried by every result.
"""

from __future__ import annotations

import math
from typing import Any, Literal

import msgspec
import numpy as np
from numpy.typing import NDArray

from ibl import mesh, transition, turbulent
from ibl.errors import CaseError, FieldProblem, msgspec_path_to_pointer
from ibl.march import SideState, march
from ibl.prepare import Prepared, SideInput, prepare
from ibl.schema import (
    Case,
    FirstCell,
    LaminarSeparationEvent,
    MeshAdvice,
    Notice,
    Result,
    SeparationEvent,
    Side,
    TransitionEvent,
)

__all__ = ["CAUTION", "analyze", "parse_case", "run", "run_batch"]

#: Carried by every result, the CLI summary and the API description.
CAUTION = (
    "Early-design estimates from integral boundary-layer methods. Confirm them by testing "
    "or higher-fidelity analysis before they inform a design; where structures, vehicles "
    "or buildings depend on them, local codes and licensed engineering practice take "
    "precedence."
)

_decoder = msgspec.json.Decoder(Case)


def parse_case(doc: Any) -> Case:
    """Validate a case document (dict, JSON bytes or str, or ``Case``) into a ``Case``.

    Raises
    ------
    CaseError
        Naming the offending field by JSON pointer.
    """
    if isinstance(doc, Case):
        return doc
    try:
        if isinstance(doc, (bytes, str)):
            return _decoder.decode(doc)
        return msgspec.convert(doc, Case)
    except msgspec.ValidationError as error:
        message = str(error)
        reason, _, path = message.rpartition(" - at `")
        if not reason:
            return _raise(FieldProblem("", message))
        pointer = msgspec_path_to_pointer(path.rstrip("`"))
        value = _lookup(doc, pointer)
        if isinstance(value, float) and not math.isfinite(value):
            reason = "is not a finite number"
        return _raise(FieldProblem(pointer, reason))
    except msgspec.DecodeError as error:
        return _raise(FieldProblem("", f"malformed JSON: {error}"))


def _lookup(doc: Any, pointer: str) -> Any:
    """The value a JSON pointer designates in a dict document, or None."""
    for token in pointer.split("/")[1:]:
        try:
            doc = doc[int(token)] if isinstance(doc, list) else doc[token]
        except (KeyError, IndexError, ValueError, TypeError):
            return None
    return doc


def _raise(problem: FieldProblem) -> Case:
    raise CaseError(problem)


def run(case: Case) -> Result:
    """Analyse one case."""
    result = run_batch([case])[0]
    if isinstance(result, CaseError):
        raise result
    return result


def run_batch(cases: list[Case]) -> list[Result | CaseError]:
    """Analyse many cases, all their sides marched in lockstep; a bad case yields its error."""
    prepared: list[Prepared | CaseError] = []
    for case in cases:
        try:
            prepared.append(prepare(case))
        except CaseError as error:
            prepared.append(error)
    sides = [side for p in prepared if isinstance(p, Prepared) for side in p.sides]
    states = iter(march(sides)) if sides else iter(())
    results: list[Result | CaseError] = []
    for case, p in zip(cases, prepared, strict=True):
        if isinstance(p, CaseError):
            results.append(p)
            continue
        built = [_side(side, next(states)) for side in p.sides]
        warnings = list(p.warnings)
        for side, state in zip(p.sides, (b[1] for b in built), strict=True):
            warnings.extend(_range_warnings(side, state))
        results.append(
            Result(
                name=case.name,
                stagnation=p.stagnation,
                sides=[b[0] for b in built],
                options=_options(case),
                warnings=warnings,
                caution=CAUTION,
            )
        )
    return results


def analyze(doc: Any) -> dict[str, Any]:
    """Analyse a case document and return the result document as JSON-ready builtins."""
    result: dict[str, Any] = msgspec.to_builtins(run(parse_case(doc)))
    return result


def _options(case: Case) -> dict[str, str | float]:
    return {
        "laminar_method": "thwaites_1949"
        + ("_rott_crabtree_1952" if case.body.kind == "axisymmetric" else ""),
        "laminar_closure": case.laminar.closure,
        "separation_lambda": case.laminar.separation_lambda,
        "transition_criterion": case.transition.criterion,
        "bubble_criterion": "owen_klanfer_1953",
        "bubble_re_delta_star": transition.OWEN_KLANFER_RE_DELTA_STAR,
        "turbulent_method": "head_1958",
        "skin_friction": case.turbulent.skin_friction,
        "initial_shape_factor": case.turbulent.initial_shape_factor,
        "separation_shape_factor": case.turbulent.separation_shape_factor,
    }


def _list(values: NDArray[np.float64]) -> list[float]:
    out: list[float] = values.tolist()
    return out


def _regime(turbulent: NDArray[np.bool_]) -> list[Literal["laminar", "turbulent"]]:
    """Station regimes: laminar up to transition, turbulent after it (as the kernel marks)."""
    n = turbulent.size
    laminar = n - int(np.count_nonzero(turbulent))
    regimes: list[Literal["laminar", "turbulent"]] = ["laminar"] * laminar
    return regimes + ["turbulent"] * (n - laminar)


def _xy_at(side: SideInput, s: float) -> tuple[float | None, float | None]:
    """x and y at arc length s along the side's stations (linear); None without a contour."""
    if side.x is None or side.y is None or not math.isfinite(s):
        return None, None
    i = min(max(int(np.searchsorted(side.s, s)), 1), side.s.size - 1)
    s0, s1 = float(side.s[i - 1]), float(side.s[i])
    t = min(max((s - s0) / (s1 - s0), 0.0), 1.0)
    x0, x1 = float(side.x[i - 1]), float(side.x[i])
    y0, y1 = float(side.y[i - 1]), float(side.y[i])
    return x0 + (x1 - x0) * t, y0 + (y1 - y0) * t


def _side(side: SideInput, state: SideState) -> tuple[Side, SideState]:
    keep = state.count
    offset = side.offset
    tr = None
    if math.isfinite(state.transition_s):
        tr = TransitionEvent(
            s=state.transition_s + offset,
            x=(xy := _xy_at(side, state.transition_s))[0],
            y=xy[1],
            cause=state.transition_cause,  # type: ignore[arg-type]
            re_theta=state.transition_re_theta,
        )
    lsep = None
    if math.isfinite(state.laminar_separation_s):
        lsep = LaminarSeparationEvent(
            s=state.laminar_separation_s + offset,
            x=(xy := _xy_at(side, state.laminar_separation_s))[0],
            y=xy[1],
            bubble="short" if state.bubble_short else "long",
            re_delta_star=state.laminar_separation_re_delta_star,
        )
    sep = None
    if math.isfinite(state.separation_s):
        sep = SeparationEvent(
            s=state.separation_s + offset,
            x=(xy := _xy_at(side, state.separation_s))[0],
            y=xy[1],
            regime="turbulent" if state.separation_turbulent else "laminar",
        )
    cf = state.cf
    cf_list: list[float | None] = cf.tolist()
    for i in np.flatnonzero(np.isnan(cf)).tolist():
        cf_list[i] = None
    side_out = Side(
        name=side.name,
        s=_list(state.s + offset),
        x=_list(side.x[:keep]) if side.x is not None else None,
        y=_list(side.y[:keep]) if side.y is not None else None,
        edge_velocity=_list(state.ue),
        theta=_list(state.theta),
        delta_star=_list(state.theta * state.shape_factor),
        shape_factor=_list(state.shape_factor),
        cf=cf_list,
        re_theta=_list(state.re_theta),
        delta99=_list(state.delta99),
        regime=_regime(state.turbulent),
        transition=tr,
        laminar_separation=lsep,
        separation=sep,
        mesh=_mesh(side, state),
    )
    return side_out, state


def _mesh(side: SideInput, state: SideState) -> MeshAdvice:
    cells = []
    if math.isfinite(state.max_u_tau):
        # The smallest first cell for every y+ target is where u_tau is largest.
        i = state.max_u_tau_index
        s_i = float(state.s[i]) + side.offset
        x = float(side.x[i]) if side.x is not None else None
        y = float(side.y[i]) if side.y is not None else None
        heights = mesh.first_cell_height(side.options.y_plus, side.nu, state.max_u_tau)
        cells = [
            FirstCell(y_plus=y_plus, height=height, s=s_i, x=x, y=y)
            for y_plus, height in zip(side.options.y_plus, heights.tolist(), strict=True)
        ]
    i_thick = state.max_delta99_index
    i_ratio = state.max_eddy_viscosity_ratio_index
    return MeshAdvice(
        first_cell=cells,
        max_thickness=float(state.delta99[i_thick]),
        max_thickness_s=float(state.s[i_thick]) + side.offset,
        max_eddy_viscosity_ratio=state.max_eddy_viscosity_ratio,
        max_eddy_viscosity_ratio_s=float(state.s[i_ratio]) + side.offset,
    )


def _range_warnings(side: SideInput, state: SideState) -> list[Notice]:
    """Correlations used outside the range they were fitted on."""
    notes = []
    name = side.name
    options = side.options
    if state.stop:
        notes.append(
            Notice(
                code="march_stopped",
                message=f"{name}: the turbulent march stopped at s = "
                f"{state.stopped_s + side.offset:.4g} ({state.stop}); the edge velocity is "
                "too rough there for Head's equations; try pressure.smoothing",
            )
        )
    if state.max_laminar_lambda > 0.1:
        notes.append(
            Notice(
                code="laminar_closure_extrapolated",
                message=f"{name}: Thwaites' lambda reaches {state.max_laminar_lambda:.3g}, "
                "above the closure's fitted range (0.1); the closure is held at 0.1",
            )
        )
    low, high = state.turbulent_re_theta_range
    if math.isfinite(low):
        law = turbulent.SKIN_FRICTION[options.skin_friction]
        lo, hi = law.validity["re_theta"]
        if low < lo or high > hi:
            notes.append(
                Notice(
                    code="skin_friction_extrapolated",
                    message=f"{name}: turbulent Re_theta spans {low:.3g} to {high:.3g}; the "
                    f"{options.skin_friction} law was fitted for {lo:g} to {hi:g}",
                )
            )
    if options.criterion == "michel" and math.isfinite(state.transition_re_s):
        if state.transition_cause == "criterion" and not 1e5 <= state.transition_re_s <= 4e7:
            notes.append(
                Notice(
                    code="transition_criterion_extrapolated",
                    message=f"{name}: Michel's criterion met at Re_s = "
                    f"{state.transition_re_s:.3g}, outside its fitted range 1e5 to 4e7",
                )
            )
    tu = options.turbulence_intensity
    if tu is not None:
        if options.criterion in ("michel", "granville") and tu > 0.01:
            notes.append(
                Notice(
                    code="turbulence_not_modelled",
                    message=f"{name}: the {options.criterion} criterion has no free-stream "
                    f"turbulence term and was calibrated for quiet flows; Tu = {tu:.3g} is "
                    "ignored (abu_ghannam_shaw takes it into account)",
                    pointer="/flow/turbulence_intensity",
                )
            )
        if options.criterion == "abu_ghannam_shaw" and not 0.003 <= tu <= 0.05:
            notes.append(
                Notice(
                    code="transition_criterion_extrapolated",
                    message=f"{name}: Tu = {tu:.3g} is outside the Abu-Ghannam & Shaw data "
                    "range 0.003 to 0.05",
                    pointer="/flow/turbulence_intensity",
                )
            )
    if options.criterion == "granville" and math.isfinite(state.lambda_mean_at_transition):
        if abs(state.lambda_mean_at_transition) > 0.04:
            notes.append(
                Notice(
                    code="transition_criterion_extrapolated",
                    message=f"{name}: Granville's mean lambda at transition is "
                    f"{state.lambda_mean_at_transition:.3g}, outside the fitted range +-0.04",
                )
            )
    return notes
