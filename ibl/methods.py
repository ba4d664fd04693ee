"""The registry of the boundary-layer methods: one row per method.

Every laminar and turbulent method of the march is a row of ``REGISTRY``: the kind of
layer it computes, its name (the value of the case's ``laminar.method`` or
``turbulent.method``, ``ibl.schema``), its code in the compiled march (the
``laminar_method`` and ``turbulent_method`` columns of the kernel's ``ints``,
``ibl.columns``), the module holding its compiled functions and their entry, its name in
results, its skin friction, a one-line description and its published source.
``ibl.turbulent.METHODS``, the kernel's method codes (``ibl.step_control``,
``ibl.kernel``) and the method catalogue (``ibl.registry``, ``GET /v1/methods``) read
this table; adding a method is a module and a row here (DEVELOPERS.md, "Adding a
method").  This module imports nothing of the package, so that every other module can
read it.
"""

from __future__ import annotations

from typing import Literal, NamedTuple

__all__ = ["REGISTRY", "Method", "code", "methods"]

Kind = Literal["laminar", "turbulent"]


class Method(NamedTuple):
    """One method of the march."""

    #: "laminar" or "turbulent".
    kind: Kind
    #: The option value naming it in a case (``laminar.method``, ``turbulent.method``).
    name: str
    #: Its code in the compiled march (unique within its kind; the first row of a kind,
    #: code 0, is the default).
    code: int
    #: The module holding its compiled functions.
    module: str
    #: The compiled entry of the method in that module: the right-hand side of its
    #: equations for a turbulent method (marched by ``ibl.step_control``), the function
    #: giving the layer at the stations for a laminar one.
    entry: str
    #: Its name in results and in the catalogue.
    label: str
    #: Its skin-friction law, or None when the case's ``skin_friction`` option chooses.
    skin_friction: str | None
    #: What it computes (the catalogue's summary).
    summary: str
    #: Its published source.
    reference: str


#: Every method, laminar first; within a kind in code order.
REGISTRY: tuple[Method, ...] = (
    Method(
        "laminar",
        "thwaites",
        0,
        "ibl.thwaites",
        "layer",
        "thwaites_1949",
        None,
        "Thwaites' integral method (one-parameter closure in lambda = theta^2 "
        "Ue'/nu); bodies of revolution by the Rott-Crabtree (Mangler) form; laminar "
        "separation at lambda = separation_lambda",
        "Thwaites (1949) Aeronaut. Q. 1, 245-280; Rott & Crabtree (1952) J. Aeronaut. Sci. 19, 553",
    ),
    Method(
        "laminar",
        "finite_difference",
        1,
        "ibl.laminar_fd",
        "solve_side",
        "keller_box_1970",
        None,
        "the laminar boundary-layer equations in Goertler's variables, marched by "
        "Keller's box scheme with Newton iteration from the Hiemenz, Homann or Blasius "
        "profile to separation (zero wall shear) or the end of the side; bodies of "
        "revolution by Mangler's transformation; transition criteria, trips, the bubble "
        "class and Head's start use its theta, H and Re_theta; delta99 is estimated as "
        "7.39 theta (Blasius ratio); a march that fails leaves the side to Thwaites' "
        "method with the warning laminar_method_failed",
        "Keller (1970) in Numerical Solution of Partial Differential Equations "
        "II, Academic Press; Cebeci & Bradshaw (1977) Momentum Transfer in Boundary Layers, "
        "Hemisphere; Mangler (1948) [memory]",
    ),
    Method(
        "turbulent",
        "head",
        0,
        "ibl.head",
        "_rhs",
        "head_1958",
        None,
        "Head's entrainment method, planar and axisymmetric (thin layers)",
        "Head (1958) ARC R&M 3152; fits of Cebeci & Bradshaw (1977)",
    ),
    Method(
        "turbulent",
        "lag_entrainment",
        1,
        "ibl.lag_entrainment",
        "_rhs",
        "green_weeks_brooman_1977",
        "winter_gaudet_1973",
        "Lag-entrainment method (momentum, entrainment and a lag equation for the "
        "entrainment coefficient), incompressible, planar and axisymmetric (thin layers); "
        "skin friction of Winter & Gaudet; constants [memory]",
        "Green, Weeks & Brooman (1977) ARC R&M 3791; Winter & Gaudet (1973) ARC R&M 3712",
    ),
)


def methods(kind: Kind) -> dict[str, Method]:
    """The methods of one kind by name, in code order (the default first).

    >>> list(methods("turbulent"))
    ['head', 'lag_entrainment']
    """
    rows = sorted((m for m in REGISTRY if m.kind == kind), key=lambda m: m.code)
    return {m.name: m for m in rows}


def code(kind: Kind, name: str) -> int:
    """The compiled march's code of a method.

    >>> code("turbulent", "lag_entrainment")
    1
    """
    return methods(kind)[name].code
