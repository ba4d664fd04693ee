"""The case and result documents: one contract for the library, the CLI and the HTTP API.

Contents
--------
- ``Case`` and its parts (``Surface``, ``Pressure``, ``Flow``, ``Body``, ``TransitionOptions``,
  ``LaminarOptions``, ``TurbulentOptions``, ``SeparationOptions``, ``Inflow``, ``MeshOptions``,
  ``Output``): the input.
- ``Result`` and its parts (``Side``, events, ``PressurePlateauEvent``, ``Margins``,
  ``MeshAdvice``, ``Drag``, ``Notice``): the output.
- ``STATION_QUANTITIES``: the names of a side's station arrays (``Output.stations``).
- ``MAX_POINTS``: the largest number of points one surface may carry.

All lengths in a result are in the unit of the input coordinates; velocities are
ratios to the free-stream speed.  The structures are msgspec Structs, so that the
service can use them as wire types and publish their limits in its schema; the
library itself never imports the service.
"""

from __future__ import annotations

from typing import Annotated, Literal

import msgspec
from msgspec import UNSET, Meta, UnsetType

__all__ = [
    "MAX_LENGTH",
    "MAX_POINTS",
    "MAX_PRESSURE",
    "SENSITIVITY_QUANTITIES",
    "SMOOTHING_MAX",
    "STATION_QUANTITIES",
    "Body",
    "Case",
    "Drag",
    "FirstCell",
    "Flow",
    "Inflow",
    "LaminarMargin",
    "LaminarOptions",
    "LaminarSeparationEvent",
    "Margins",
    "MeshAdvice",
    "MeshOptions",
    "Notice",
    "Output",
    "Pressure",
    "PressurePlateauEvent",
    "Result",
    "Sensitivities",
    "SensitivityName",
    "SeparationEvent",
    "SeparationOptions",
    "Side",
    "Stagnation",
    "Surface",
    "TransitionEvent",
    "TransitionOptions",
    "TurbulentMargin",
    "TurbulentOptions",
]

#: Largest number of points accepted on one surface (a contour counts as one surface).
MAX_POINTS = 20_000
#: Largest admissible smoothing penalty (normalised; see ``Pressure.smoothing`` and
#: ``ibl.smoothing``).
SMOOTHING_MAX = 1e-7


class Struct(
    msgspec.Struct,
    forbid_unknown_fields=True,
    frozen=True,
    kw_only=True,
    omit_defaults=False,
    gc=False,
):
    """Common base: unknown fields are errors, instances are immutable, and (holding only
    numbers, strings and lists of them, never cycles) they stay out of the cyclic garbage
    collector, which otherwise rescans large batches of results."""


#: Largest magnitude of a coordinate, arc length or radius [length unit].
MAX_LENGTH = 1e9
Length = Annotated[float, Meta(ge=-MAX_LENGTH, le=MAX_LENGTH)]
Points = Annotated[list[Length], Meta(min_length=3, max_length=MAX_POINTS)]
CpValue = Annotated[float, Meta(ge=-1e4, le=1e4)]
SpeedRatio = Annotated[float, Meta(ge=-100.0, le=100.0)]
#: Largest magnitude of a pressure, absolute or gauge [Pa].
MAX_PRESSURE = 1e9
Pascals = Annotated[float, Meta(ge=-MAX_PRESSURE, le=MAX_PRESSURE)]


class Surface(Struct, frozen=True):
    """Geometry: a contour ``x``/``y`` or one surface given by arc length ``s``."""

    x: Annotated[
        Points | None,
        Meta(description="Contour x, points in order along the wetted contour [length unit]"),
    ] = None
    y: Annotated[Points | None, Meta(description="Contour y, one per x [length unit]")] = None
    s: Annotated[
        Points | None,
        Meta(
            description="Arc length along one surface from its leading edge or stagnation "
            "point, strictly increasing [length unit]"
        ),
    ] = None


class Pressure(Struct, frozen=True):
    """Surface pressure: Cp, edge velocity or pressure [Pa], one value per point."""

    cp: Annotated[Points | None, Meta(description="Pressure coefficient Cp [-], one per point")] = (
        None
    )
    edge_velocity: Annotated[
        Annotated[list[SpeedRatio], Meta(min_length=3, max_length=MAX_POINTS)] | None,
        Meta(
            description="Edge velocity Ue/U_inf [-], one per point (on a contour its sign is "
            "ignored; on a single surface a change of sign is refused)"
        ),
    ] = None
    p: Annotated[
        Annotated[list[Pascals], Meta(min_length=3, max_length=MAX_POINTS)] | None,
        Meta(
            description="Surface static pressure [Pa], absolute or gauge (on the same basis as "
            "reference_pressure), one per point; converted to Cp = (p - p_inf) / q_inf"
        ),
    ] = None
    reference_pressure: Annotated[
        Pascals | None,
        Meta(
            description="Free-stream static pressure p_inf [Pa], on the same basis as p; "
            "required with p"
        ),
    ] = None
    dynamic_pressure: Annotated[
        Annotated[float, Meta(gt=0.0, le=MAX_PRESSURE)] | None,
        Meta(
            description="Free-stream dynamic pressure q_inf = 0.5 rho_inf U_inf^2 [Pa], with p; "
            "may instead come from flow.density and flow.speed. At Mach > 0 it is still "
            "0.5 rho_inf U_inf^2 (= gamma p_inf M^2 / 2), not the pitot rise p0 - p_inf"
        ),
    ] = None
    smoothing: Annotated[
        Annotated[float, Meta(ge=0.0, le=SMOOTHING_MAX)] | Literal["auto"] | None,
        Meta(
            description="Smoothing of noisy tap data by a cubic smoothing spline of "
            "(Ue/U_inf)^2: null for none, 'auto' for the penalty chosen by generalised "
            "cross-validation, or a penalty from 0 to 1e-7. The penalty is on normalised "
            "data (arc length scaled to 0..1, (Ue/U_inf)^2 to its largest value, the fit "
            "term averaged over the points): a sinusoid of wavelength w (fraction of the arc "
            "length) is halved at penalty (w / 2 pi)^4, so 1e-7 halves one of 0.11"
        ),
    ] = None


class Flow(Struct, frozen=True):
    """Free-stream conditions: a Reynolds number per unit length, or speed and viscosity."""

    reynolds: Annotated[
        Annotated[float, Meta(ge=1.0, le=1e12)] | None,
        Meta(description="Re = U_inf L / nu, L the unit of the coordinates [-]"),
    ] = None
    speed: Annotated[
        Annotated[float, Meta(gt=0.0, le=1e4)] | None,
        Meta(description="Free-stream speed U_inf [m/s]"),
    ] = None
    kinematic_viscosity: Annotated[
        Annotated[float, Meta(ge=1e-12, le=10.0)] | None,
        Meta(description="Kinematic viscosity nu [m^2/s]"),
    ] = None
    turbulence_intensity: Annotated[
        Annotated[float, Meta(ge=0.0, le=0.2)] | None,
        Meta(description="Free-stream turbulence intensity Tu, a fraction [-]"),
    ] = None
    mach: Annotated[float, Meta(ge=0.0, lt=1.0, description="Free-stream Mach number [-]")] = 0.0
    density: Annotated[
        Annotated[float, Meta(gt=0.0, le=1e5)] | None,
        Meta(
            description="Free-stream static density rho_inf [kg/m^3]; with speed it gives the "
            "dynamic pressure 0.5 rho_inf U_inf^2 that converts pressure.p to Cp (at any Mach)"
        ),
    ] = None


class Body(Struct, frozen=True):
    """Planar section or body of revolution (axis along x)."""

    kind: Literal["planar", "axisymmetric"] = "planar"
    radius: Annotated[
        Points | None,
        Meta(description="Local body radius per point [length unit]; default |y|"),
    ] = None


class TransitionOptions(Struct, frozen=True):
    """Transition criterion and optional trips."""

    criterion: Literal["michel", "granville", "abu_ghannam_shaw", "none"] = "michel"
    trip: Annotated[
        dict[Literal["upper", "lower", "surface"], Length] | None,
        Meta(
            description="Forced transition per side name, as a position in the s of the "
            "results [length unit]: arc length from the stagnation point (>= 0) on a "
            "contour's upper and lower sides; s as given in surface.s on a single surface. "
            "At the side's start it makes the side turbulent from there; a trip outside the "
            "side's stations is reported in the warnings"
        ),
    ] = None


class LaminarOptions(Struct, frozen=True):
    """The laminar method and the options of Thwaites' method."""

    method: Annotated[
        Literal["thwaites", "finite_difference"],
        Meta(
            description="Laminar method: Thwaites' integral method (Thwaites 1949; Rott & "
            "Crabtree 1952 on a body of revolution), or the laminar boundary-layer equations "
            "marched by Keller's box scheme (Keller 1970; Mangler's transformation on a body "
            "of revolution) to separation or transition. separation_lambda and closure "
            "apply to Thwaites' method only"
        ),
    ] = "thwaites"

    separation_lambda: Annotated[
        float,
        Meta(
            ge=-0.1,
            le=-0.05,
            description="Thwaites parameter at laminar separation: -0.09 (Thwaites 1949) "
            "or -0.082 (Curle & Skan 1957) [-]",
        ),
    ] = -0.09
    closure: Literal["cebeci_bradshaw", "white"] = "cebeci_bradshaw"


class TurbulentOptions(Struct, frozen=True):
    """Options of the turbulent integral method."""

    method: Annotated[
        Literal["head", "lag_entrainment"],
        Meta(
            description="Turbulent method: Head's entrainment method (1958) or the "
            "lag-entrainment method of Green, Weeks & Brooman (1977), whose skin friction "
            "is Winter & Gaudet's law (skin_friction is then not used)"
        ),
    ] = "head"
    initial_shape_factor: Annotated[
        float, Meta(ge=1.2, le=1.8, description="Shape factor H just after transition [-]")
    ] = 1.4
    separation_shape_factor: Annotated[
        float, Meta(ge=1.8, le=2.8, description="Shape factor H at turbulent separation [-]")
    ] = 2.4
    skin_friction: Literal["ludwieg_tillmann", "white"] = "ludwieg_tillmann"


class SeparationOptions(Struct, frozen=True):
    """How separation already present in the input data is treated."""

    pressure_plateau: Annotated[
        bool,
        Meta(
            description="Look for a constant-pressure (separated, base-pressure) region "
            "downstream of the suction peak of each side of a contour, report it and end the "
            "attached stations at its onset; a rule of practice (see the documentation)"
        ),
    ] = True


class Inflow(Struct, frozen=True):
    """A measured state at the first station of a single surface, to march from."""

    theta: Annotated[
        float, Meta(gt=0.0, le=MAX_LENGTH, description="Momentum thickness [length unit]")
    ]
    shape_factor: Annotated[
        float,
        Meta(
            gt=1.1,
            le=4.0,
            description="Shape factor H [-]; above 1.1, where Head's H1(H) is defined. Used "
            "by a turbulent inflow; a laminar one takes H from Thwaites' closure (a warning "
            "says when the value given differs)",
        ),
    ]
    regime: Literal["laminar", "turbulent"] = "laminar"


class MeshOptions(Struct, frozen=True):
    """Targets for near-wall mesh advice."""

    y_plus: Annotated[
        list[Annotated[float, Meta(gt=0.0, le=1000.0)]],
        Meta(min_length=1, max_length=16, description="Target first-cell y+ values [-]"),
    ] = msgspec.field(default_factory=lambda: [1.0, 30.0])


#: A side's station arrays, by name (``Output.stations``; the members of ``Side``).
StationName = Literal[
    "s",
    "x",
    "y",
    "edge_velocity",
    "theta",
    "delta_star",
    "shape_factor",
    "cf",
    "re_theta",
    "delta99",
    "regime",
]
STATION_QUANTITIES: tuple[str, ...] = StationName.__args__  # type: ignore[attr-defined]

#: The quantities whose derivatives a case may ask for (``Output.sensitivities``).
SensitivityName = Literal[
    "transition", "laminar_separation", "separation", "friction_drag", "profile_drag"
]
SENSITIVITY_QUANTITIES: tuple[str, ...] = SensitivityName.__args__  # type: ignore[attr-defined]


class Output(Struct, frozen=True):
    """What the result carries: all station arrays (the default), none, or some."""

    stations: Annotated[
        bool | Annotated[list[StationName], Meta(max_length=len(STATION_QUANTITIES))],
        Meta(
            description="Station arrays of each side in the result: true for all (the "
            "default); false for none, the summary answer (stagnation point, events, drag, "
            "mesh advice, warnings), cheaper to compute and much smaller; or a list of the "
            "names wanted (s, x, y, edge_velocity, theta, delta_star, shape_factor, cf, "
            "re_theta, delta99, regime). Arrays left out are absent from the sides"
        ),
    ] = True
    sensitivities: Annotated[
        list[SensitivityName],
        Meta(
            max_length=len(SENSITIVITY_QUANTITIES),
            description="Quantities whose derivatives with respect to every input pressure "
            "value (the Cp, p or edge_velocity given, per input point) each side carries in "
            "its sensitivities member: transition, laminar_separation, separation (the "
            "event's s), friction_drag (the side's), profile_drag. Computed by reverse-mode "
            "differentiation of the discrete march. Held fixed: the surface, the flow, the "
            "turbulent march's step sizes that do not end on a station, which stations are "
            "laminar or turbulent and how many are kept. They do not exist where an event "
            "changes cause (transition by criterion against laminar separation or a trip), "
            "where a criterion is crossed tangentially, where two neighbouring edge "
            "velocities are equal (the interpolant's slope limiter switches), where "
            "separation crosses a station (friction_drag), or at a stagnation point of a "
            "single surface (Ue = 0; that entry is 0); a trip's position has derivative "
            "zero, and so has the position where a contour side is cut because its edge "
            "velocity vanishes again (held; the points beyond it have zero derivatives). "
            "Covered: single surfaces (surface.s), planar or axisymmetric (stations "
            "that end at the thin-layer limit held), edge_velocity, cp or p at any Mach "
            "number, smoothed "
            "(the penalty held fixed) or not, with every transition criterion; contours "
            "(x, y), smoothed or not, where the stagnation point, its slope and so every "
            "station's s follow the nose values its model is fitted to; profile_drag (the "
            "side's share, through theta, H and Ue at the trailing edge; null where the "
            "case has no profile drag). Elsewhere (a nose of equal values, a laminar "
            "trailing edge, ...) the arrays are null with a "
            "sensitivities_unavailable warning saying why. Empty (the default): none",
        ),
    ] = msgspec.field(default_factory=list)


class Case(Struct, frozen=True):
    """One analysis: geometry, pressure, flow and options."""

    surface: Surface
    pressure: Pressure
    flow: Flow
    body: Body = msgspec.field(default_factory=Body)
    transition: TransitionOptions = msgspec.field(default_factory=TransitionOptions)
    laminar: LaminarOptions = msgspec.field(default_factory=LaminarOptions)
    turbulent: TurbulentOptions = msgspec.field(default_factory=TurbulentOptions)
    separation: SeparationOptions = msgspec.field(default_factory=SeparationOptions)
    inflow: Inflow | None = None
    mesh: MeshOptions = msgspec.field(default_factory=MeshOptions)
    name: (
        Annotated[str, Meta(max_length=200, description="A label carried into the result")] | None
    ) = None
    output: Output = msgspec.field(default_factory=Output)


# ----------------------------------------------------------------------------- result


class Stagnation(Struct, frozen=True):
    """Stagnation point located between input points."""

    x: float
    y: float
    s: Annotated[
        float,
        Meta(
            description="Arc length along the input contour from its first point to the "
            "stagnation point [length unit]"
        ),
    ]
    position: Annotated[
        float, Meta(description="The same place as a fractional index into the input points")
    ]


class TransitionEvent(Struct, frozen=True):
    """Onset of turbulent flow."""

    s: float
    x: float | None
    y: float | None
    cause: Literal["criterion", "trip", "laminar_separation"]
    re_theta: float


class LaminarSeparationEvent(Struct, frozen=True):
    """Laminar separation, with the Owen-Klanfer bubble class."""

    s: float
    x: float | None
    y: float | None
    bubble: Literal["short", "long"]
    re_delta_star: float


class SeparationEvent(Struct, frozen=True):
    """Separation that ends the attached boundary layer."""

    s: float
    x: float | None
    y: float | None
    regime: Literal["laminar", "turbulent"]


class PressurePlateauEvent(Struct, frozen=True):
    """A constant-pressure region in the input: the separated wake the data already show."""

    s: Annotated[
        float, Meta(description="Onset, where the pressure recovery stops (between input points)")
    ]
    x: float | None
    y: float | None
    cp: Annotated[float, Meta(description="Mean pressure coefficient over the plateau [-]")]
    end_s: Annotated[float, Meta(description="Last input point on the plateau")]


class LaminarMargin(Struct, frozen=True):
    """Closest approach to laminar separation: the smallest Thwaites lambda and where."""

    thwaites_lambda: float = msgspec.field(name="lambda")
    s: float


class TurbulentMargin(Struct, frozen=True):
    """Closest approach to turbulent separation: the largest shape factor H and where."""

    shape_factor: float
    s: float


class Margins(Struct, frozen=True):
    """How close each regime of a side comes to its separation criterion (null: no station
    of that regime)."""

    laminar: LaminarMargin | None
    turbulent: TurbulentMargin | None


class FirstCell(Struct, frozen=True):
    """Smallest first-cell height on a side for a y+ target."""

    y_plus: float
    height: Annotated[float, Meta(description="First-cell height [length unit]")]
    s: float
    x: float | None
    y: float | None


class MeshAdvice(Struct, frozen=True):
    """Near-wall mesh figures of one side."""

    first_cell: list[FirstCell]
    max_thickness: Annotated[
        float, Meta(description="Largest delta99 estimate on the side [length unit]")
    ]
    max_thickness_s: float
    max_eddy_viscosity_ratio: Annotated[
        float, Meta(description="Peak outer eddy-to-molecular viscosity ratio [-]")
    ]
    max_eddy_viscosity_ratio_s: float


class Sensitivities(Struct, frozen=True, kw_only=True):
    """Derivatives of a side's events, friction drag and profile drag share with respect
    to each input pressure value (one entry per input point of the case); members the case's
    ``output.sensitivities`` does not ask for are absent, null where the event does not
    occur or the derivative is not available (then with a warning)."""

    with_respect_to: Annotated[
        Literal["edge_velocity", "cp", "p"],
        Meta(
            description="The input the derivatives are taken with respect to: the case's "
            "pressure.edge_velocity (Ue/U_inf), pressure.cp or pressure.p [Pa]"
        ),
    ]
    transition: Annotated[
        list[float] | UnsetType | None,
        Meta(description="d(transition s)/d(input value) [length unit per input unit]"),
    ] = UNSET
    laminar_separation: Annotated[
        list[float] | UnsetType | None,
        Meta(description="d(laminar separation s)/d(input value) [length unit per input unit]"),
    ] = UNSET
    separation: Annotated[
        list[float] | UnsetType | None,
        Meta(description="d(separation s)/d(input value) [length unit per input unit]"),
    ] = UNSET
    friction_drag: Annotated[
        list[float] | UnsetType | None,
        Meta(description="d(friction_drag of the side)/d(input value) [per input unit]"),
    ] = UNSET
    profile_drag: Annotated[
        list[float] | UnsetType | None,
        Meta(
            description="d(the side's share of the profile drag)/d(input value) [per "
            "input unit]; the shares of the sides sum to the case's drag.profile"
        ),
    ] = UNSET


class Side(Struct, frozen=True, kw_only=True):
    """Station arrays and events of one side, from its start to separation, to the onset of a
    pressure plateau in the input, or to its end.

    The station arrays (``s`` to ``regime``) are present as the case's ``output.stations``
    asks (all of them by default) and absent otherwise."""

    name: Literal["upper", "lower", "surface"]
    s: Annotated[
        list[float] | UnsetType,
        Meta(description="Arc length of each station in the s of the results [length unit]"),
    ] = UNSET
    x: Annotated[
        list[float] | UnsetType | None,
        Meta(description="x of each station [length unit]; null for a single surface"),
    ] = UNSET
    y: Annotated[
        list[float] | UnsetType | None,
        Meta(description="y of each station [length unit]; null for a single surface"),
    ] = UNSET
    edge_velocity: Annotated[
        list[float] | UnsetType, Meta(description="Edge velocity Ue/U_inf [-]")
    ] = UNSET
    theta: Annotated[
        list[float] | UnsetType, Meta(description="Momentum thickness [length unit]")
    ] = UNSET
    delta_star: Annotated[
        list[float] | UnsetType, Meta(description="Displacement thickness [length unit]")
    ] = UNSET
    shape_factor: Annotated[
        list[float] | UnsetType, Meta(description="Shape factor H = delta*/theta [-]")
    ] = UNSET
    cf: Annotated[
        list[float | None] | UnsetType,
        Meta(
            description="Skin-friction coefficient tau_w / (0.5 rho Ue^2) [-]; null where it is "
            "undefined (Ue = 0 at a stagnation point, theta = 0 at a sharp leading edge)"
        ),
    ] = UNSET
    re_theta: Annotated[
        list[float] | UnsetType, Meta(description="Reynolds number Ue theta / nu [-]")
    ] = UNSET
    delta99: Annotated[
        list[float] | UnsetType,
        Meta(description="Boundary-layer thickness delta99 estimate [length unit]"),
    ] = UNSET
    regime: list[Literal["laminar", "turbulent"]] | UnsetType = UNSET
    transition: TransitionEvent | None
    laminar_separation: LaminarSeparationEvent | None
    separation: SeparationEvent | None
    pressure_plateau: Annotated[
        PressurePlateauEvent | None,
        Meta(
            description="Constant-pressure (separated) region found in the input; when no "
            "separation is predicted before it, the stations end at its onset"
        ),
    ]
    margins: Margins
    mesh: MeshAdvice
    friction_drag: Annotated[
        float | None,
        Meta(
            description="Friction drag of the side: the wall shear projected on the free-stream "
            "direction (+x), the integral of tau_w dx/ds ds over the stations, from the start "
            "to separation or the end (nothing is counted beyond separation), referred to the "
            "free-stream dynamic pressure q_inf. Planar: D_f/(q_inf L) per unit span, L the "
            "unit of the coordinates. Body of revolution: over the wetted area 2 pi r ds of "
            "the surface this side's meridian sweeps, D_f/(q_inf L^2). Single surface (no "
            "geometry): x is taken along s. Null with fewer than two stations"
        ),
    ]
    sensitivities: Annotated[
        Sensitivities | UnsetType,
        Meta(
            description="Derivatives with respect to every input pressure value, as the "
            "case's output.sensitivities asks; absent when it asks for none"
        ),
    ] = UNSET


class Notice(Struct, frozen=True):
    """A warning: a machine-readable code, a message and, where it applies, a JSON pointer."""

    code: str
    message: str
    pointer: str | None = None


class Drag(Struct, frozen=True):
    """Drag estimates of the case, referred to the free-stream dynamic pressure q_inf and the
    unit of the coordinates L: D/(q_inf L) per unit span for a planar section,
    D/(q_inf L^2) for a body of revolution."""

    friction: Annotated[
        float | None,
        Meta(
            description="Friction drag: the sides' friction_drag summed (on a body of "
            "revolution whose meridian is given on both sides of the axis, the two sides "
            "describe one body and their mean is taken); counted up to separation only; null "
            "when no side has a value"
        ),
    ]
    profile: Annotated[
        float | None,
        Meta(
            description="Profile drag (friction and pressure drag) from the momentum "
            "thickness at the trailing edge: Squire & Young (1938), 2 theta (Ue/U_inf)^((H + "
            "5)/2) per side, summed, for a planar section; Young (1939), 4 pi r theta "
            "(Ue/U_inf)^((H + 5)/2), for a body of revolution. Only when both sides reach "
            "the point where they meet without separating; null otherwise, with the reason "
            "in note"
        ),
    ]
    profile_method: Literal["squire_young_1938", "young_1939"] | None
    note: Annotated[str, Meta(description="How the figures were obtained, or why profile is null")]


class Result(Struct, frozen=True):
    """The result document."""

    name: str | None
    stagnation: Stagnation | None
    sides: list[Side]
    drag: Drag
    options: dict[str, str | float]
    warnings: list[Notice]
    caution: str
