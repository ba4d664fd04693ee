"""The length unit of a case: one rule for every output (summary, tables, sweeps, figures).

Contents
--------
- ``METRE``, ``COORDINATE_UNIT``: the two length units a case can be in.
- ``length_unit(case_doc)``: which of the two a case document is in.
- ``LENGTH_RULE``: the rule in words.
- ``lengths_note(unit)``: the sentence that closes a summary or table, saying the unit and why.
- ``reynolds_label(unit)``: what the Reynolds number of ``flow.reynolds`` is, in that unit.

The rule: the Reynolds number ``flow.reynolds`` is U_inf L / nu with L one unit of the input
coordinates, so every length (s, x, y, thicknesses, first-cell heights) is in that unit.  A
flow given by speed [m/s] and kinematic viscosity [m^2/s] is in SI, so the coordinates are
read in metres.  A sweep of the Reynolds number of such a case keeps its coordinates, and
so its metres.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

__all__ = [
    "COORDINATE_UNIT",
    "LENGTH_RULE",
    "METRE",
    "length_unit",
    "lengths_note",
    "reynolds_label",
]

METRE = "m"
COORDINATE_UNIT = "coordinate unit"

LENGTH_RULE = (
    "Lengths are in metres when the flow is given by speed [m/s] and kinematic viscosity "
    "[m^2/s]; when it is given by a Reynolds number, they are in the unit of the input "
    "coordinates, the length L of Re = U_inf L/nu."
)


def length_unit(case_doc: Mapping[str, Any]) -> str:
    """``METRE`` when the case document's flow gives speed and kinematic viscosity, else
    ``COORDINATE_UNIT`` (see ``LENGTH_RULE``).

    >>> length_unit({"flow": {"speed": 18.0, "kinematic_viscosity": 1.5e-5}})
    'm'
    >>> length_unit({"flow": {"reynolds": 1e6}})
    'coordinate unit'
    """
    flow = case_doc.get("flow") or {}
    if not isinstance(flow, Mapping):
        return COORDINATE_UNIT
    if flow.get("speed") is not None and flow.get("kinematic_viscosity") is not None:
        return METRE
    return COORDINATE_UNIT


def lengths_note(unit: str) -> str:
    """The sentence saying which unit the lengths of an output are in, and why.

    >>> lengths_note("m")
    'Lengths are in m (the flow is given by speed [m/s] and kinematic viscosity [m^2/s]).'
    """
    if unit == METRE:
        return (
            "Lengths are in m (the flow is given by speed [m/s] and kinematic viscosity [m^2/s])."
        )
    return (
        "Lengths are in the unit of the input coordinates (the flow is given by a Reynolds "
        "number Re = U_inf L/nu, L one coordinate unit)."
    )


def reynolds_label(unit: str) -> str:
    """The Reynolds number of ``flow.reynolds`` named with its reference length.

    >>> reynolds_label("m")
    'Re = U_inf L/nu, L = 1 m [-]'
    """
    return f"Re = U_inf L/nu, L = 1 {unit} [-]"
