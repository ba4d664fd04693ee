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
from concurrent.futures import Future, ThreadPoolExecutor
from typing import Any, Literal

import msgspec
import numpy as np
import orjson
from numpy.typing import NDArray

from ibl import march as march_module
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

#: Cases per chunk when a large batch is pipelined (see ``run_batch``).
PIPELINE_CASES = 128

_JSON_DECODER = msgspec.json.Decoder(Case)
_MSGPACK_DECODER = msgspec.msgpack.Decoder(Case)


def parse_case(doc: Any, *, encoding: Literal["json", "msgpack"] = "json") -> Case:
    """Validate a case document into a ``Case``.

    ``doc`` is a dict, a ``Case``, or the encoded document: JSON text (str, or bytes), or
    MessagePack bytes with ``encoding="msgpack"``.

    Raises
    ------
    CaseError
        Naming the offending field by JSON pointer.
    """
    if isinstance(doc, Case):
        return doc
    try:
        if isinstance(doc, str):
            return _JSON_DECODER.decode(doc)
        if isinstance(doc, bytes):
            return (_MSGPACK_DECODER if encoding == "msgpack" else _JSON_DECODER).decode(doc)
        return msgspec.convert(doc, Case)
    except msgspec.ValidationError as error:
        message = str(error)
        reason, _, path = message.rpartition(" - at `")
        if not reason:
            return _raise(FieldProblem("", message))
        pointer = msgspec_path_to_pointer(path.rstrip("`"))
        if isinstance(doc, bytes) and encoding == "msgpack":
            doc = msgspec.msgpack.decode(doc)  # well-formed: it failed validation only
        value = _lookup(doc, pointer)
        if isinstance(value, float) and not math.isfinite(value):
            reason = "is not a finite number"
        return _raise(FieldProblem(pointer, reason))
    except msgspec.DecodeError as error:
        name = "MessagePack" if encoding == "msgpack" else "JSON"
        return _raise(FieldProblem("", f"malformed {name}: {error}"))


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


#: How station arrays are returned: ``"list"`` (Python lists), or ``"json"`` and
#: ``"msgpack"`` (encoded fragments, ``msgspec.Raw``, for results that are only to be
#: written in that format).
Arrays = Literal["list", "json", "msgpack"]


def run(case: Case, *, arrays: Arrays = "list") -> Result:
    """Analyse one case (``arrays`` as for ``run_batch``)."""
    result = run_batch([case], arrays=arrays)[0]
    if isinstance(result, CaseError):
        raise result
    return result


def run_batch(cases: list[Case], *, arrays: Arrays = "list") -> list[Result | CaseError]:
    """Analyse many cases, all their sides marched in lockstep; a bad case yields its error.

    With ``arrays="json"`` (or ``"msgpack"``) the station arrays of each side (``s`` to
    ``regime``) are ``msgspec.Raw`` JSON (or MessagePack) fragments written straight from
    the march's arrays, not lists: ``msgspec.json.encode`` (``msgspec.msgpack.encode``)
    then writes the same bytes as for the ``"list"`` result, several times faster, but the
    result is good for nothing else.

    A batch of at least ``2 * PIPELINE_CASES`` cases is pipelined in chunks of that many
    when the process may use two cores or more; the results are the same.
    """
    convert = _ARRAYS[arrays]
    if len(cases) < 2 * PIPELINE_CASES or march_module.THREADS < 2:
        prepared = _prepare_all(cases)
        return _results(cases, prepared, march(_sides(prepared)), convert)
    # Pipelined: one chunk marches in a thread, without the interpreter lock, while the
    # next is prepared and the results of the one before are built.
    results: list[Result | CaseError] = []
    with ThreadPoolExecutor(1, thread_name_prefix="ibl-march") as pool:
        behind = None  # the chunk before: its cases, their preparation, its march
        for start in range(0, len(cases), PIPELINE_CASES):
            chunk = cases[start : start + PIPELINE_CASES]
            prepared = _prepare_all(chunk)
            marching = pool.submit(march_module.march_released, _sides(prepared))
            if behind is not None:
                results += _results(*behind, convert)
            behind = (chunk, prepared, marching)
        assert behind is not None
        results += _results(*behind, convert)
    return results


def _prepare_all(cases: list[Case]) -> list[Prepared | CaseError]:
    """Each case prepared, or its error: whatever goes wrong with one case (even a failure
    that is not a ``CaseError``) stays with that case."""
    prepared: list[Prepared | CaseError] = []
    for case in cases:
        try:
            prepared.append(prepare(case))
        except CaseError as error:
            prepared.append(error)
        except Exception as error:  # one case must not fail a batch
            reason = f"could not be prepared ({type(error).__name__}: {error})"
            prepared.append(CaseError(FieldProblem("", reason)))
    return prepared


def _sides(prepared: list[Prepared | CaseError]) -> list[SideInput]:
    return [side for p in prepared if isinstance(p, Prepared) for side in p.sides]


def _results(
    cases: list[Case],
    prepared: list[Prepared | CaseError],
    marched: list[SideState] | Future[list[SideState]],
    convert: _Converter,
) -> list[Result | CaseError]:
    """The result of each case from its marched sides (in order, or their future), or its
    error."""
    states = iter(marched.result() if isinstance(marched, Future) else marched)
    results: list[Result | CaseError] = []
    for case, p in zip(cases, prepared, strict=True):
        if isinstance(p, CaseError):
            results.append(p)
            continue
        warnings = list(p.warnings)
        built = []
        for index, side in enumerate(p.sides):
            state = next(states)
            built.append(_side(side, state, convert, warnings, f"/sides/{index}"))
            warnings.extend(_range_warnings(side, state))
        results.append(
            Result(
                name=case.name,
                stagnation=p.stagnation,
                sides=built,
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


class _Lists:
    """Station arrays as Python lists."""

    @staticmethod
    def rows(columns: list[NDArray[np.float64]]) -> list[Any]:
        """Each of several arrays of one length."""
        return [column.tolist() for column in columns]

    @staticmethod
    def nullable(values: NDArray[np.float64]) -> Any:
        """NaN entries become None."""
        out: list[float | None] = values.tolist()
        for i in np.flatnonzero(np.isnan(values)).tolist():
            out[i] = None
        return out

    @staticmethod
    def regime(laminar: int, turbulent: int) -> Any:
        return ["laminar"] * laminar + ["turbulent"] * turbulent


class _Json:
    """Station arrays as JSON fragments (the same text msgspec writes for the lists)."""

    @staticmethod
    def rows(columns: list[NDArray[np.float64]]) -> list[Any]:
        """Each of several arrays of one length (finite values: orjson writes NaN as null)."""
        dumps, option = orjson.dumps, orjson.OPT_SERIALIZE_NUMPY
        return [msgspec.Raw(dumps(np.ascontiguousarray(c), option=option)) for c in columns]

    @staticmethod
    def nullable(values: NDArray[np.float64]) -> Any:
        """NaN entries become null (as orjson writes them)."""
        return _Json.rows([values])[0]

    @staticmethod
    def regime(laminar: int, turbulent: int) -> Any:
        text = ',"laminar"' * laminar + ',"turbulent"' * turbulent
        return msgspec.Raw(f"[{text[1:]}]".encode())


def _msgpack_header(count: int) -> bytes:
    """MessagePack array header for ``count`` entries (fixarray, array 16 or array 32)."""
    if count < 16:
        return bytes((0x90 | count,))
    if count < 1 << 16:
        return b"\xdc" + count.to_bytes(2, "big")
    return b"\xdd" + count.to_bytes(4, "big")


#: A MessagePack float 64: the 0xcb marker, then the value as eight big-endian bytes.
_PACKED_FLOAT = np.dtype([("marker", "u1"), ("value", ">f8")])


def _packed(values: NDArray[np.float64] | list[NDArray[np.float64]]) -> NDArray[np.void]:
    """Values (a 1-D array, or several of one length as rows) as packed float 64s."""
    out = np.empty(np.shape(values), dtype=_PACKED_FLOAT)
    out["marker"] = 0xCB
    out["value"] = values
    return out


class _Msgpack:
    """Station arrays as MessagePack fragments (the bytes msgspec writes for the lists:
    every float as a float 64, 0xcb and eight big-endian bytes; None as nil, 0xc0)."""

    @staticmethod
    def rows(columns: list[NDArray[np.float64]]) -> list[Any]:
        """Each of several arrays of one length (packed together)."""
        header = _msgpack_header(columns[0].size)
        return [msgspec.Raw(header + row.tobytes()) for row in _packed(columns)]

    @staticmethod
    def nullable(values: NDArray[np.float64]) -> Any:
        """NaN entries become nil."""
        missing = np.isnan(values)
        packed = _packed(values)
        if missing.any():
            packed["marker"][missing] = 0xC0
            kept = np.ones((values.size, 9), dtype=bool)
            kept[missing, 1:] = False  # nil is the marker alone
            body = packed.view(np.uint8).reshape(-1, 9)[kept].tobytes()
        else:
            body = packed.tobytes()
        return msgspec.Raw(_msgpack_header(values.size) + body)

    @staticmethod
    def regime(laminar: int, turbulent: int) -> Any:
        return msgspec.Raw(
            _msgpack_header(laminar + turbulent)
            + b"\xa7laminar" * laminar
            + b"\xa9turbulent" * turbulent
        )


_Converter = type[_Lists] | type[_Json] | type[_Msgpack]
_ARRAYS: dict[str, _Converter] = {"list": _Lists, "json": _Json, "msgpack": _Msgpack}


def _xy_at(side: SideInput, s: float) -> tuple[float | None, float | None]:
    """x and y at arc length s along the side's stations (linear); None without a contour."""
    if side.x is None or side.y is None or not math.isfinite(s):
        return None, None
    i = min(max(int(side.s.searchsorted(s)), 1), side.s.size - 1)
    s0, s1 = float(side.s[i - 1]), float(side.s[i])
    t = min(max((s - s0) / (s1 - s0), 0.0), 1.0)
    x0, x1 = float(side.x[i - 1]), float(side.x[i])
    y0, y1 = float(side.y[i - 1]), float(side.y[i])
    return x0 + (x1 - x0) * t, y0 + (y1 - y0) * t


def _side(
    side: SideInput,
    state: SideState,
    arrays: _Converter,
    warnings: list[Notice],
    pointer: str,
) -> Side:
    """The result document of one side; a notice in ``warnings`` if its stations were cut."""
    keep = state.count
    if state.cut_non_finite:
        warnings.append(
            Notice(
                code="non_finite",
                message=f"{side.name}: stations from index {keep} on are left out: "
                "non-finite values",
                pointer=f"{pointer}/s/{keep}",
            )
        )
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
    laminar = keep - int(np.count_nonzero(state.turbulent))
    columns = [
        state.s + offset,
        state.ue,
        state.theta,
        state.theta * state.shape_factor,
        state.shape_factor,
        state.re_theta,
        state.delta99,
    ]
    if side.x is not None and side.y is not None:
        columns += [side.x[:keep], side.y[:keep]]
    rows = arrays.rows(columns)
    s, ue, theta, delta_star, shape_factor, re_theta, delta99 = rows[:7]
    x, y = rows[7:] if len(rows) == 9 else (None, None)
    return Side(
        name=side.name,
        s=s,
        x=x,
        y=y,
        edge_velocity=ue,
        theta=theta,
        delta_star=delta_star,
        shape_factor=shape_factor,
        cf=arrays.nullable(state.cf),
        re_theta=re_theta,
        delta99=delta99,
        regime=arrays.regime(laminar, keep - laminar),
        transition=tr,
        laminar_separation=lsep,
        separation=sep,
        mesh=_mesh(side, state),
    )


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
    if state.count == 0:  # not one finite station (see SideState.cut_non_finite)
        nan = math.nan
        return MeshAdvice(
            first_cell=[],
            max_thickness=nan,
            max_thickness_s=nan,
            max_eddy_viscosity_ratio=nan,
            max_eddy_viscosity_ratio_s=nan,
        )
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
