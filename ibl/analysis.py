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
from dataclasses import dataclass
from typing import Any, Literal

import msgspec
import numpy as np
import orjson
from numpy.typing import NDArray

from ibl import drag, kernel, lag_entrainment, mesh, sensitivity, transition, turbulent
from ibl import march as march_module
from ibl.errors import CaseError, FieldProblem, msgspec_path_to_pointer
from ibl.march import SideState, march
from ibl.plateau import Plateau, cut_side, side_plateau
from ibl.prepare import Prepared, SideInput, prepare
from ibl.schema import (
    STATION_QUANTITIES,
    Case,
    Drag,
    FirstCell,
    LaminarMargin,
    LaminarSeparationEvent,
    Margins,
    MeshAdvice,
    Notice,
    Output,
    PressurePlateauEvent,
    Result,
    SeparationEvent,
    Side,
    TransitionEvent,
    TurbulentMargin,
)
from ibl.side_scalars import side_scalars, station_columns

__all__ = ["CAUTION", "NEAR_SEPARATION_FRACTION", "analyze", "parse_case", "run", "run_batch"]

#: Carried by every result, the CLI summary and the API description.
CAUTION = (
    "Early-design estimates from integral boundary-layer methods. Confirm them by testing "
    "or higher-fidelity analysis before they inform a design; where structures, vehicles "
    "or buildings depend on them, local codes and licensed engineering practice take "
    "precedence."
)

#: A laminar inflow's shape factor is not used (Thwaites' method takes H from lambda);
#: it is reported when it differs from the closure's H at the first station by more than
#: this fraction: twice the closures' error against exact similarity solutions (up to
#: about 5 %, Falkner-Skan m = 0.3: README's accuracy table).
INFLOW_H_TOLERANCE = 0.1

#: Cases per chunk when a large batch is pipelined (see ``run_batch``).
PIPELINE_CASES = 128

#: A side comes near separation (warning ``near_separation``) when it gets within this
#: fraction of the way from zero pressure gradient to a separation criterion without
#: crossing it: Thwaites' lambda from 0 to its separation value (-0.09: warned from -0.072),
#: the turbulent H from its initial value to the separation value (1.4 to 2.4: warned from
#: 2.2). Common practice for a margin of an integral method; published turbulent criteria
#: alone range from H = 1.8 to 2.4.
NEAR_SEPARATION_FRACTION = 0.2


#: A predicted separation this close to a plateau's onset (a fraction of the side's
#: length) is reported as at the onset: the onset is located to within a tap spacing.
PLATEAU_SAME_PLACE = 0.005


@dataclass(slots=True)
class _Ready:
    """A prepared case whose sides end at any pressure plateau found in the input."""

    prepared: Prepared
    plateaus: list[Plateau | None]
    cut: list[bool]  # the side's stations were ended at its plateau


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
        elif pointer.startswith("/output/stations/") and reason.startswith("Invalid enum"):
            reason += "; the station arrays are " + ", ".join(STATION_QUANTITIES)
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

    Each case's ``output.stations`` chooses the station arrays its sides carry (all, none
    or some); those left out are not built (``msgspec.UNSET``, absent when encoded).

    A batch of at least ``2 * PIPELINE_CASES`` cases is pipelined in chunks of that many
    when the process may use two cores or more; the results are the same.
    """
    convert = _ARRAYS[arrays]
    if len(cases) < 2 * PIPELINE_CASES or march_module.THREADS < 2:
        ready = _prepare_all(cases)
        return _results(cases, ready, march(_sides(ready)), convert)
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


def _prepare_all(cases: list[Case]) -> list[_Ready | CaseError]:
    """Each case prepared, or its error: whatever goes wrong with one case (even a failure
    that is not a ``CaseError``) stays with that case."""
    prepared: list[_Ready | CaseError] = []
    for case in cases:
        try:
            prepared.append(_plateaus(case, prepare(case)))
        except CaseError as error:
            prepared.append(error)
        except Exception as error:  # one case must not fail a batch
            reason = f"could not be prepared ({type(error).__name__}: {error})"
            prepared.append(CaseError(FieldProblem("", reason)))
    return prepared


def _plateaus(case: Case, prepared: Prepared) -> _Ready:
    """Look for a pressure plateau on each side (``ibl.plateau``) and end the side there."""
    count = len(prepared.sides)
    if not case.separation.pressure_plateau:
        return _Ready(prepared, [None] * count, [False] * count)
    sides, plateaus, cut = [], [], []
    for side in prepared.sides:
        # Single-surface input has no geometry to tell a separated plateau from attached
        # flow at constant pressure (ibl.plateau, rule (c)): it is not checked.
        found = None
        if side.x is not None and side.y is not None:
            found = side_plateau(side.s, side.ue, side.x, side.y, case.flow.mach)
        shorter = cut_side(side, found.onset_s) if found is not None else None
        sides.append(shorter if shorter is not None else side)
        plateaus.append(found)
        cut.append(shorter is not None)
    if not any(cut):
        return _Ready(prepared, plateaus, cut)
    ready = Prepared(sides, prepared.stagnation, prepared.warnings, prepared.closed)
    return _Ready(ready, plateaus, cut)


def _sides(prepared: list[_Ready | CaseError]) -> list[SideInput]:
    return [side for p in prepared if isinstance(p, _Ready) for side in p.prepared.sides]


#: The pointers of the first sides of a result (a contour has two).
_POINTERS = ("/sides/0", "/sides/1")


def _results(
    cases: list[Case],
    prepared: list[_Ready | CaseError],
    marched: list[SideState] | Future[list[SideState]],
    convert: _Converter,
) -> list[Result | CaseError]:
    """The result of each case from its marched sides (in order, or their future), or its
    error."""
    states = iter(marched.result() if isinstance(marched, Future) else marched)
    results: list[Result | CaseError] = []
    for case, ready in zip(cases, prepared, strict=True):
        if isinstance(ready, CaseError):
            results.append(ready)
            continue
        p = ready.prepared
        sides = p.sides
        output = case.output
        derivatives = output.sensitivities
        warnings = list(p.warnings)
        wanted = _wanted(output)
        marched = [next(states) for _ in sides]
        profile_scale = None
        if "profile_drag" in derivatives and not _no_trailing_edge(p, marched):
            axisymmetric = sides[0].axisymmetric
            profile_scale = 0.5 if axisymmetric and _one_body(sides) else 1.0
        built = []
        for index, (side, state) in enumerate(zip(sides, marched, strict=True)):
            pointer = _POINTERS[index] if index < len(_POINTERS) else f"/sides/{index}"
            found = ready.plateaus[index]
            one = _side(side, state, convert, warnings, pointer, found, wanted)
            if derivatives:
                derived, notes = sensitivity.derivatives(case, side, state, pointer, profile_scale)
                one = msgspec.structs.replace(one, sensitivities=derived)
                warnings.extend(notes)
            built.append(one)
            if found is not None:
                warnings.append(_plateau_notice(side, state, found, ready.cut[index], pointer))
            warnings += _range_warnings(side, state)
            if state.laminar_failure:
                warnings += _laminar_method_notice(side, state)
            if side.start == "inflow":
                warnings += _laminar_inflow_notice(side, state)
            warnings += _near_separation(side, state, one.margins)
        results.append(
            Result(
                name=case.name,
                stagnation=p.stagnation,
                sides=built,
                drag=_drag(p, marched, [one.friction_drag for one in built]),
                options=_options(case),
                warnings=warnings,
                caution=CAUTION,
            )
        )
    return results


def analyze(doc: Any) -> dict[str, Any]:
    """Analyse a case document and return the result document as JSON-ready builtins."""
    return _builtins(run(parse_case(doc)))


def _builtins(result: Result) -> dict[str, Any]:
    """``msgspec.to_builtins(result)`` (the same document, members in the same order) that
    takes the station lists of the sides as they are instead of copying them: for a result
    of lists (``arrays="list"``) that is not used afterwards."""
    sides = result.sides
    out: dict[str, Any] = msgspec.to_builtins(msgspec.structs.replace(result, sides=[]))
    out["sides"] = [_side_builtins(side) for side in sides]
    return out


#: The station arrays in the order of the members of a side.
_SIDE_STATIONS = tuple(name for name in Side.__struct_fields__ if name in STATION_QUANTITIES)


def _side_builtins(side: Side) -> dict[str, Any]:
    """One side of ``_builtins``: its station lists as they are, the rest by msgspec."""
    stations = {}
    for name in _SIDE_STATIONS:
        value = getattr(side, name)
        if value is not msgspec.UNSET:
            stations[name] = value
    if not stations:
        built: dict[str, Any] = msgspec.to_builtins(side)
        return built
    rest = msgspec.to_builtins(
        msgspec.structs.replace(side, **dict.fromkeys(stations, msgspec.UNSET))
    )
    return {"name": rest.pop("name"), **stations, **rest}


def _options(case: Case) -> dict[str, str | float]:
    return {
        "laminar_method": (
            "keller_box_1970" + ("_mangler_1948" if case.body.kind == "axisymmetric" else "")
            if case.laminar.method == "finite_difference"
            else "thwaites_1949"
            + ("_rott_crabtree_1952" if case.body.kind == "axisymmetric" else "")
        ),
        "laminar_closure": case.laminar.closure,
        "separation_lambda": case.laminar.separation_lambda,
        "transition_criterion": case.transition.criterion,
        "bubble_criterion": "owen_klanfer_1953",
        "bubble_re_delta_star": transition.OWEN_KLANFER_RE_DELTA_STAR,
        "turbulent_method": turbulent.METHODS[case.turbulent.method].name,
        "skin_friction": turbulent.METHODS[case.turbulent.method].skin_friction
        or case.turbulent.skin_friction,
        "initial_shape_factor": case.turbulent.initial_shape_factor,
        "separation_shape_factor": case.turbulent.separation_shape_factor,
        "pressure_plateau": (
            "off"
            if not case.separation.pressure_plateau
            else ("on" if case.surface.s is None else "not_checked_without_contour")
        ),
    }


#: Several station arrays of one length: a list of them, or the rows of a 2-D array.
_Rows = list[NDArray[np.float64]] | NDArray[np.float64]


class _Lists:
    """Station arrays as Python lists."""

    @staticmethod
    def rows(columns: _Rows) -> list[Any]:
        """Each of several arrays of one length (or each row of a 2-D array)."""
        if isinstance(columns, np.ndarray):
            rows: list[Any] = columns.tolist()
            return rows
        return [column.tolist() for column in columns]

    @staticmethod
    def nullable(values: NDArray[np.float64], missing: tuple[int, ...] | None = None) -> Any:
        """NaN entries become None (``missing``: their indices, when known)."""
        out: list[float | None] = values.tolist()
        if missing is None:
            missing = tuple(np.flatnonzero(np.isnan(values)).tolist())
        for i in missing:
            out[i] = None
        return out

    @staticmethod
    def regime(laminar: int, turbulent: int) -> Any:
        return ["laminar"] * laminar + ["turbulent"] * turbulent


class _Json:
    """Station arrays as JSON fragments (the same text msgspec writes for the lists)."""

    @staticmethod
    def rows(columns: _Rows) -> list[Any]:
        """Each of several arrays of one length, or each row of a 2-D C-ordered array
        (finite values: orjson writes NaN as null)."""
        dumps, option = orjson.dumps, orjson.OPT_SERIALIZE_NUMPY
        if isinstance(columns, np.ndarray) and columns.flags.c_contiguous:
            return [msgspec.Raw(dumps(row, option=option)) for row in columns]
        return [msgspec.Raw(dumps(np.ascontiguousarray(c), option=option)) for c in columns]

    @staticmethod
    def nullable(values: NDArray[np.float64], missing: tuple[int, ...] | None = None) -> Any:
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


def _packed(values: _Rows) -> NDArray[np.void]:
    """Values (a 1-D array, or several of one length as rows) as packed float 64s."""
    out = np.empty(np.shape(values), dtype=_PACKED_FLOAT)
    out["marker"] = 0xCB
    out["value"] = values
    return out


class _Msgpack:
    """Station arrays as MessagePack fragments (the bytes msgspec writes for the lists:
    every float as a float 64, 0xcb and eight big-endian bytes; None as nil, 0xc0)."""

    @staticmethod
    def rows(columns: _Rows) -> list[Any]:
        """Each of several arrays of one length, or each row of a 2-D array (packed
        together)."""
        header = _msgpack_header(columns[0].size)
        return [msgspec.Raw(header + row.tobytes()) for row in _packed(columns)]

    @staticmethod
    def nullable(values: NDArray[np.float64], missing: tuple[int, ...] | None = None) -> Any:
        """NaN entries become nil (``missing``: their indices, when known)."""
        packed = _packed(values)
        nan = None if missing == () else np.isnan(values)
        if nan is not None and nan.any():
            packed["marker"][nan] = 0xC0
            kept = np.ones((values.size, 9), dtype=bool)
            kept[nan, 1:] = False  # nil is the marker alone
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
    """x and y at arc length s along the side's stations (linear); None without a contour.

    The definition of the positions of events; the results take them from its compiled
    twin, ``ibl.side_scalars.xy_at_compiled`` (``tests/test_compiled_results.py``)."""
    if side.x is None or side.y is None or not math.isfinite(s):
        return None, None
    i = min(max(int(side.s.searchsorted(s)), 1), side.s.size - 1)
    s0, s1 = side.s[i - 1 : i + 1].tolist()
    t = min(max((s - s0) / (s1 - s0), 0.0), 1.0)
    x0, x1 = side.x[i - 1 : i + 1].tolist()
    y0, y1 = side.y[i - 1 : i + 1].tolist()
    return x0 + (x1 - x0) * t, y0 + (y1 - y0) * t


def _side(
    side: SideInput,
    state: SideState,
    arrays: _Converter,
    warnings: list[Notice],
    pointer: str,
    found: Plateau | None = None,
    wanted: frozenset[str] = frozenset(STATION_QUANTITIES),
) -> Side:
    """The result document of one side; a notice in ``warnings`` if its stations were cut.

    Its scalars (event positions on the contour, margins, mesh advice, friction drag) come
    from one compiled pass, ``ibl.side_scalars.side_scalars``: the twin of ``_xy_at``,
    ``_margins``, ``_mesh`` and ``_friction``, which define them; its float station arrays
    from another, ``ibl.side_scalars.station_columns``, the twin of ``_column``."""
    keep = state.count
    contour = side.x is not None and side.y is not None
    side_x = side.x if side.x is not None and contour else _EMPTY
    side_y = side.y if side.y is not None and contour else _EMPTY
    offset = side.offset
    # In the order of ``ibl.side_scalars.Scalars``.
    (
        transition_x,
        transition_y,
        laminar_separation_x,
        laminar_separation_y,
        separation_x,
        separation_y,
        plateau_x,
        plateau_y,
        thin_layer_x,
        _,
        laminar,
        lambda_index,
        lambda_value,
        lambda_s,
        h_index,
        h_value,
        h_s,
        friction,
        cf_missing,
        cf_first_missing,
        u_tau_s,
        u_tau_x,
        u_tau_y,
        thickness,
        thickness_s,
        eddy_ratio_s,
    ) = side_scalars(
        side.s,
        side_x,
        side_y,
        side.r,
        contour,
        side.axisymmetric,
        offset,
        keep,
        state.s,
        state.ue,
        state.shape_factor,
        state.cf,
        state.turbulent,
        state.thwaites_lambda,
        state.delta99,
        (
            state.transition_s,
            state.laminar_separation_s,
            state.separation_s,
            math.nan if found is None else found.onset_s,
            state.thin_layer_s,
        ),
        state.max_u_tau,
        state.max_u_tau_index,
        state.max_delta99_index,
        state.max_eddy_viscosity_ratio_index,
    )
    if state.cut_non_finite:
        warnings.append(
            Notice(
                code="non_finite",
                message=f"{side.name}: stations from index {keep} on are left out: "
                "non-finite values",
                pointer=f"{pointer}/s/{keep}",
            )
        )
    if math.isfinite(state.thin_layer_s):
        x_limit = thin_layer_x if contour else None
        warnings.append(_thin_layer_notice(side, state, pointer, x_limit))
    tr = lsep = sep = plateau = None
    if math.isfinite(state.transition_s):
        tr = TransitionEvent(
            s=state.transition_s + offset,
            x=transition_x if contour else None,
            y=transition_y if contour else None,
            cause=state.transition_cause,  # type: ignore[arg-type]
            re_theta=state.transition_re_theta,
        )
    if math.isfinite(state.laminar_separation_s):
        lsep = LaminarSeparationEvent(
            s=state.laminar_separation_s + offset,
            x=laminar_separation_x if contour else None,
            y=laminar_separation_y if contour else None,
            bubble="short" if state.bubble_short else "long",
            re_delta_star=state.laminar_separation_re_delta_star,
        )
    if math.isfinite(state.separation_s):
        sep = SeparationEvent(
            s=state.separation_s + offset,
            x=separation_x if contour else None,
            y=separation_y if contour else None,
            regime="turbulent" if state.separation_turbulent else "laminar",
        )
    if found is not None:
        on = contour and math.isfinite(found.onset_s)
        plateau = PressurePlateauEvent(
            s=found.onset_s + offset,
            x=plateau_x if on else None,
            y=plateau_y if on else None,
            cp=found.cp,
            end_s=found.end_s + offset,
        )
    arrays_out: dict[str, Any] = {}
    if wanted:
        names = _COLUMN_NAMES[contour]
        picked = None
        if wanted != _ALL_STATIONS:
            picked = [i for i, name in enumerate(names) if name in wanted]
            names = tuple(names[i] for i in picked)
        if names:
            block = station_columns(
                contour,
                offset,
                keep,
                state.s,
                side_x,
                side_y,
                state.ue,
                state.theta,
                state.shape_factor,
                state.re_theta,
                state.delta99,
            )
            if picked is not None and len(picked) < block.shape[0]:
                block = block[picked]
            arrays_out.update(zip(names, arrays.rows(block), strict=True))
        if not contour:
            for name in ("x", "y"):
                if name in wanted:
                    arrays_out[name] = None
        if "cf" in wanted:
            missing = () if cf_missing == 0 else (cf_first_missing,) if cf_missing == 1 else None
            arrays_out["cf"] = arrays.nullable(state.cf, missing)
        if "regime" in wanted:
            arrays_out["regime"] = arrays.regime(laminar, keep - laminar)
    if keep == 0:  # not one finite station (see SideState.cut_non_finite)
        mesh_advice = _no_mesh_advice()
    else:
        cells = []
        u_tau = state.max_u_tau
        if math.isfinite(u_tau):
            # The smallest first cell for every y+ target is where u_tau is largest; its
            # height as ``mesh.first_cell_heights`` takes it.
            nu = side.nu
            x = u_tau_x if contour else None
            y = u_tau_y if contour else None
            cells = [
                FirstCell(y_plus=target, height=target * nu / u_tau, s=u_tau_s, x=x, y=y)
                for target in side.options.y_plus
            ]
        mesh_advice = MeshAdvice(
            first_cell=cells,
            max_thickness=thickness,
            max_thickness_s=thickness_s,
            max_eddy_viscosity_ratio=state.max_eddy_viscosity_ratio,
            max_eddy_viscosity_ratio_s=eddy_ratio_s,
        )
    return Side(
        name=side.name,
        **arrays_out,
        transition=tr,
        laminar_separation=lsep,
        separation=sep,
        pressure_plateau=plateau,
        margins=Margins(
            laminar=(
                LaminarMargin(thwaites_lambda=lambda_value, s=lambda_s)
                if lambda_index >= 0
                else None
            ),
            turbulent=(TurbulentMargin(shape_factor=h_value, s=h_s) if h_index >= 0 else None),
        ),
        mesh=mesh_advice,
        friction_drag=None if math.isnan(friction) else friction,
    )


_EMPTY = np.empty(0)


def _no_mesh_advice() -> MeshAdvice:
    """Mesh advice of a side without one finite station: no cells, NaN sizes."""
    nan = math.nan
    return MeshAdvice(
        first_cell=[],
        max_thickness=nan,
        max_thickness_s=nan,
        max_eddy_viscosity_ratio=nan,
        max_eddy_viscosity_ratio_s=nan,
    )


#: The float station arrays built by ``_Converter.rows`` (cf and regime have their own).
_FLOAT_STATIONS = tuple(n for n in STATION_QUANTITIES if n not in ("cf", "regime"))
_ALL_STATIONS = frozenset(STATION_QUANTITIES)
#: The rows of ``ibl.side_scalars.station_columns``: without a contour (False), x and y
#: are left out.
_COLUMN_NAMES = {
    True: _FLOAT_STATIONS,
    False: tuple(n for n in _FLOAT_STATIONS if n not in ("x", "y")),
}


def _wanted(output: Output) -> frozenset[str]:
    """The station arrays a case's ``output`` asks for."""
    stations = output.stations
    if stations is True:
        return _ALL_STATIONS
    if stations is False:
        return frozenset()
    return frozenset(stations)


def _column(name: str, side: SideInput, state: SideState, keep: int) -> NDArray[np.float64]:
    """One float station array of a marched side (x and y of a contour side only).

    The definition; the results take them all at once from the compiled twin,
    ``ibl.side_scalars.station_columns`` (``tests/test_compiled_results.py``)."""
    if name == "s":
        return state.s + side.offset
    if name == "x":
        assert side.x is not None
        return side.x[:keep]
    if name == "y":
        assert side.y is not None
        return side.y[:keep]
    if name == "edge_velocity":
        return state.ue
    if name == "delta_star":
        return state.theta * state.shape_factor
    value: NDArray[np.float64] = getattr(state, name)  # theta, shape_factor, re_theta, delta99
    return value


def _friction(side: SideInput, state: SideState) -> float | None:
    """The side's friction drag (see ``ibl.drag.friction_drag``), over its stations.

    The definition; the results take it from ``ibl.side_scalars.side_scalars``."""
    keep = state.count
    if keep < 2:
        return None
    x = side.x[:keep] if side.x is not None else state.s
    weight = 2.0 * math.pi * side.r[:keep] if side.axisymmetric else None
    return drag.friction_drag(state.s, x, state.ue, state.cf, weight)


def _one_body(sides: list[SideInput]) -> bool:
    """Whether the two sides of a body of revolution are the meridian given on both sides
    of the axis (the radius is |y| and the sides lie on opposite sides): they describe the
    same surface, not two surfaces (as the inner and outer side of a ring do)."""
    if len(sides) != 2 or sides[0].y is None or sides[1].y is None:
        return False
    middle = [float(np.median(side.y[1:])) for side in sides if side.y is not None]
    if not middle[0] * middle[1] < 0.0:
        return False
    scale = max(float(np.max(side.r)) for side in sides)
    return all(
        side.y is not None
        and bool(np.allclose(side.r, np.abs(side.y), rtol=0.0, atol=1e-6 * scale))
        for side in sides
    )


def _no_trailing_edge(p: Prepared, states: list[SideState]) -> str:
    """Why profile drag cannot be had from the state where the sides meet ("" if it can)."""
    sides = p.sides
    if p.stagnation is None or sides[0].x is None:
        return (
            "a single surface has no trailing edge: profile drag needs both sides of a "
            "section where they meet"
        )
    if len(sides) != 2:
        return "the contour yields one side only: profile drag needs both sides"
    if not p.closed:
        return "the contour is open: its sides end apart, with no trailing edge where they meet"
    for side, state in zip(sides, states, strict=True):
        name = side.name
        if math.isfinite(state.separation_s):
            regime = "turbulent" if state.separation_turbulent else "laminar"
            return (
                f"the {name} side separates ({regime}) at s = "
                f"{state.separation_s + side.offset:.4g}, before the trailing edge: the wake "
                "relation needs attached flow there"
            )
        if state.count < side.s.size:
            if math.isfinite(state.thin_layer_s):
                return (
                    f"the {name} side's stations end at the thin-layer limit of a body of "
                    "revolution (warning thin_layer_limit), before the tail"
                )
            return f"the {name} side's stations end before the trailing edge (see warnings)"
        if not float(state.ue[-1]) > 0.0:
            return "the edge velocity vanishes where the sides meet: a rear stagnation point"
        if side.axisymmetric and not float(side.r[-1]) > 0.0:
            return (
                "the tail closes on the axis: the momentum area there is not that of a thin layer"
            )
    return ""


#: Said of every friction drag.
_FRICTION_NOTE = (
    "Friction drag: wall shear projected on +x over the stations of each side, up to "
    "separation or the side's end (nothing beyond separation is counted)"
)


def _drag(p: Prepared, states: list[SideState], frictions: list[float | None]) -> Drag:
    """The case's drag: friction over the sides, and profile drag where the sides meet."""
    sides = p.sides
    axisymmetric = sides[0].axisymmetric
    one_body = axisymmetric and _one_body(sides)
    known = [f for f in frictions if f is not None]
    friction = (sum(known) / len(known) if one_body else sum(known)) if known else None
    note = _FRICTION_NOTE
    if p.stagnation is None:
        note += "; a single surface has no geometry: x is taken along s"
    if one_body:
        note += (
            "; the two sides are one body of revolution's meridian on both sides of the "
            "axis: the mean of the sides"
        )
    reason = _no_trailing_edge(p, states)
    if reason:
        return Drag(
            friction=friction,
            profile=None,
            profile_method=None,
            note=f"{note}. No profile drag: {reason}.",
        )
    shares = []
    for side, state in zip(sides, states, strict=True):
        theta, ue, h = (float(a[-1]) for a in (state.theta, state.ue, state.shape_factor))
        if axisymmetric:
            shares.append(drag.profile_drag_young_1939(float(side.r[-1]), theta, ue, h))
        else:
            shares.append(drag.profile_drag_squire_young_1938(theta, ue, h))
    profile = sum(shares) / 2.0 if one_body else sum(shares)
    method: Literal["squire_young_1938", "young_1939"] = (
        "young_1939" if axisymmetric else "squire_young_1938"
    )
    cite = "Young (1939)" if axisymmetric else "Squire & Young (1938)"
    return Drag(
        friction=friction,
        profile=profile,
        profile_method=method,
        note=f"{note}. Profile drag by {cite} from theta, H and Ue where the sides meet, "
        "summed over the two sides.",
    )


def _thin_layer_notice(side: SideInput, state: SideState, pointer: str, x: float | None) -> Notice:
    """The stations of a body of revolution end where the layer is no longer thin (``x``
    there, None without a contour)."""
    at = state.thin_layer_s
    where = f"s = {at + side.offset:.4g}" + (f" (x = {x:.4g})" if x is not None else "")
    last = state.count - 1
    ratio = kernel.THIN_LAYER_RATIO
    limit = "the body radius" if ratio == 1.0 else f"{ratio:g} times the body radius"
    return Notice(
        code="thin_layer_limit",
        message=f"{side.name}: downstream of the largest body radius, the boundary-layer "
        f"thickness delta99 reaches {limit} at {where}: the thin-layer equations of a body "
        "of revolution (delta99 small against r; transverse curvature neglected) do not "
        f"hold from there on, so the stations end at s = {float(state.s[last]) + side.offset:.4g}"
        " and nothing beyond is reported",
        pointer=f"{pointer}/s/{last}",
    )


def _plateau_notice(
    side: SideInput, state: SideState, found: Plateau, cut: bool, pointer: str
) -> Notice:
    """What the plateau means for the stations of the side."""
    offset = side.offset
    text = (
        f"{side.name}: the input pressure stops recovering and stays near Cp = {found.cp:.3g} "
        f"from s = {found.onset_s + offset:.4g} to {found.end_s + offset:.4g} while the wall "
        f"turns by {found.turning:.0f} deg: the data show separated flow there (a base-pressure "
        "plateau); "
    )
    if math.isfinite(state.separation_s):
        at = state.separation_s + offset
        if found.onset_s - state.separation_s <= PLATEAU_SAME_PLACE * float(side.s[-1]):
            text += f"the layer is predicted to separate there too (s = {at:.4g})"
        else:
            text += f"separation is predicted before it, at s = {at:.4g}"
    elif cut:
        text += "the stations end at its onset; the layer is attached up to it"
    else:
        text += "too few input points precede it to end the stations there"
    return Notice(code="pressure_plateau", message=text, pointer=f"{pointer}/pressure_plateau")


def _margins(side: SideInput, state: SideState) -> Margins:
    """The smallest Thwaites lambda over the laminar stations and the largest H over the
    turbulent ones, with where they occur (the laminar stations come first).

    The definition; the results take them from ``ibl.side_scalars.side_scalars``."""
    laminar = turbulent_margin = None
    count = state.count
    first_turbulent = count - int(np.count_nonzero(state.turbulent))
    lam = state.thwaites_lambda[:first_turbulent]
    if lam.size:
        i = int(lam.argmin())
        if not math.isfinite(lam[i]) and np.isfinite(lam).any():
            i = int(np.nanargmin(np.where(np.isfinite(lam), lam, np.nan)))
        if math.isfinite(lam[i]):
            laminar = LaminarMargin(
                thwaites_lambda=float(lam[i]), s=float(state.s[i]) + side.offset
            )
    h = state.shape_factor[first_turbulent:count]
    if h.size:
        i = int(h.argmax())
        if not math.isfinite(h[i]) and np.isfinite(h).any():
            i = int(np.nanargmax(np.where(np.isfinite(h), h, np.nan)))
        if math.isfinite(h[i]):
            j = first_turbulent + i
            turbulent_margin = TurbulentMargin(
                shape_factor=float(h[i]), s=float(state.s[j]) + side.offset
            )
    return Margins(laminar=laminar, turbulent=turbulent_margin)


def _near_separation(side: SideInput, state: SideState, margins: Margins) -> list[Notice]:
    """A side within ``NEAR_SEPARATION_FRACTION`` of a separation criterion, not crossing it."""
    notes = []
    options = side.options
    keep = 1.0 - NEAR_SEPARATION_FRACTION
    separated = math.isfinite(state.separation_s)
    lam = margins.laminar
    laminar_crossed = math.isfinite(state.laminar_separation_s) or (
        separated and not state.separation_turbulent
    )
    if (
        lam is not None
        and not laminar_crossed
        and lam.thwaites_lambda <= keep * options.separation_lambda
    ):
        notes.append(
            Notice(
                code="near_separation",
                message=f"{side.name}: Thwaites' lambda falls to {lam.thwaites_lambda:.3g} at "
                f"s = {lam.s:.4g}, within {NEAR_SEPARATION_FRACTION:.0%} of the laminar "
                f"separation value {options.separation_lambda:g} without reaching it: a small "
                "change in the pressure distribution may separate the laminar layer",
            )
        )
    turb = margins.turbulent
    h0, h_sep = options.initial_shape_factor, options.separation_shape_factor
    near_h = h_sep - NEAR_SEPARATION_FRACTION * (h_sep - h0)
    turbulent_crossed = separated and state.separation_turbulent
    if turb is not None and not turbulent_crossed and turb.shape_factor >= near_h:
        notes.append(
            Notice(
                code="near_separation",
                message=f"{side.name}: the turbulent shape factor rises to "
                f"{turb.shape_factor:.3g} at s = {turb.s:.4g}, within "
                f"{NEAR_SEPARATION_FRACTION:.0%} of the way from {h0:g} to the separation "
                f"value {h_sep:g} without reaching it; published criteria range from 1.8 to "
                "2.4, so the layer may be separating",
            )
        )
    return notes


def _mesh(side: SideInput, state: SideState) -> MeshAdvice:
    """The mesh advice of a side (the definition; the results build it in ``_side`` from
    ``ibl.side_scalars.side_scalars``)."""
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
        return _no_mesh_advice()
    i_thick = state.max_delta99_index
    i_ratio = state.max_eddy_viscosity_ratio_index
    return MeshAdvice(
        first_cell=cells,
        max_thickness=float(state.delta99[i_thick]),
        max_thickness_s=float(state.s[i_thick]) + side.offset,
        max_eddy_viscosity_ratio=state.max_eddy_viscosity_ratio,
        max_eddy_viscosity_ratio_s=float(state.s[i_ratio]) + side.offset,
    )


def _laminar_method_notice(side: SideInput, state: SideState) -> list[Notice]:
    """The finite-difference laminar march failed on a side: Thwaites' method was used."""
    if not state.laminar_failure:
        return []
    return [
        Notice(
            code="laminar_method_failed",
            message=f"{side.name}: the finite-difference laminar march failed "
            f"({state.laminar_failure}); this side's laminar layer is Thwaites' instead",
            pointer="/laminar/method",
        )
    ]


def _laminar_inflow_notice(side: SideInput, state: SideState) -> list[Notice]:
    """A laminar inflow whose shape factor disagrees with Thwaites' closure."""
    if side.start != "inflow" or side.turbulent_start or state.count == 0:
        return []
    closure = float(state.shape_factor[0])
    if abs(side.h0 - closure) <= INFLOW_H_TOLERANCE * closure:
        return []
    if state.laminar_method == "finite_difference":
        return [
            Notice(
                code="inflow_shape_factor_unused",
                message=f"{side.name}: a laminar inflow's shape factor is not used: the "
                "finite-difference march starts from the Blasius profile of the inflow theta "
                f"(H = 2.59), not from a profile of H = {side.h0:.3g}",
                pointer="/inflow/shape_factor",
            )
        ]
    return [
        Notice(
            code="inflow_shape_factor_unused",
            message=f"{side.name}: a laminar inflow's shape factor is not used: Thwaites' "
            f"method takes H from lambda = theta^2 Ue'/nu, which gives H = {closure:.3g} at the "
            f"first station, not {side.h0:.3g}; a laminar layer with that H is not of the "
            "one-parameter family, so theta alone is marched",
            pointer="/inflow/shape_factor",
        )
    ]


def _fitted_re_theta(method: str, skin_friction: str) -> tuple[float, float, str]:
    """The Re_theta range the skin-friction law of a turbulent method (with the case's
    ``skin_friction`` option) was fitted on, and the end of the warning that says so."""
    law_name = turbulent.METHODS[method].skin_friction
    if law_name is None:
        law_name = skin_friction
        lo, hi = turbulent.SKIN_FRICTION[law_name].validity["re_theta"]
    else:
        lo, hi = lag_entrainment.WINTER_GAUDET_RE_THETA
    return lo, hi, f"{law_name} law was fitted for {lo:g} to {hi:g}"


#: ``_fitted_re_theta`` of every turbulent method and skin-friction option.
_FITTED_RE_THETA = {
    (method, law): _fitted_re_theta(method, law)
    for method in turbulent.METHODS
    for law in turbulent.SKIN_FRICTION
}


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
                "too rough there for the turbulent equations; try pressure.smoothing",
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
        lo, hi, fitted = _FITTED_RE_THETA[options.turbulent_method, options.skin_friction]
        if low < lo or high > hi:
            notes.append(
                Notice(
                    code="skin_friction_extrapolated",
                    message=f"{name}: turbulent Re_theta spans {low:.3g} to {high:.3g}; the "
                    + fitted,
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
