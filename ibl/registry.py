"""The catalogue of methods: every method and criterion with its options, defaults,
validity ranges and published source, as JSON-ready data.

Contents
--------
- ``catalogue()``: the catalogue (served by the HTTP API at ``GET /v1/methods``).
- ``method_names(kind)``: the valid names of one kind of choice, for error messages.
"""

from __future__ import annotations

from typing import Any

from ibl import finite_difference, laminar, plateau, transition, turbulent
from ibl.analysis import NEAR_SEPARATION_FRACTION
from ibl.methods import methods
from ibl.schema import (
    LaminarOptions,
    MeshOptions,
    SeparationOptions,
    TransitionOptions,
    TurbulentOptions,
)

__all__ = ["catalogue", "method_names"]


#: How user-facing text spells out a value or law recalled from the literature but not
#: re-checked against the original (the source code marks them "[memory]").
RECALLED = "(recalled, not re-checked against the original)"


def spell_out(text: str) -> str:
    """User-facing text with every "[memory]" mark spelled out as ``RECALLED``."""
    return text.replace("[memory]", RECALLED)


def _spell_all(value: Any) -> Any:
    if isinstance(value, str):
        return spell_out(value)
    if isinstance(value, dict):
        return {key: _spell_all(item) for key, item in value.items()}
    if isinstance(value, list | tuple):
        return [_spell_all(item) for item in value]
    return value


def _range(pair: tuple[float, float]) -> dict[str, float]:
    return {"min": pair[0], "max": pair[1]}


def catalogue() -> dict[str, Any]:
    """Every method with its options, defaults, validity ranges and source."""
    spelled: dict[str, Any] = _spell_all(_catalogue())
    return spelled


def _catalogue() -> dict[str, Any]:
    lam_defaults = LaminarOptions()
    turb_defaults = TurbulentOptions()
    return {
        "laminar": {
            "method": methods("laminar")["thwaites"].label,
            "summary": "Thwaites' integral method; axisymmetric bodies by the Rott-Crabtree "
            "(Mangler) form; analytic start at a stagnation point or sharp leading edge",
            "reference": methods("laminar")["thwaites"].reference,
            "options": {
                "method": {
                    "default": lam_defaults.method,
                    "choices": LAMINAR_METHODS,
                },
                "separation_lambda": {
                    "note": "Thwaites' method only",
                    "default": lam_defaults.separation_lambda,
                    "choices": {
                        "-0.09": "Thwaites (1949)",
                        "-0.082": "Curle & Skan (1957) [memory]",
                    },
                },
                "closure": {
                    "note": "Thwaites' method only",
                    "default": lam_defaults.closure,
                    "choices": {
                        name: {"validity": {"lambda": _range(c.validity)}, "reference": c.reference}
                        for name, c in laminar.CLOSURES.items()
                    },
                },
            },
        },
        "transition": {
            "default": TransitionOptions().criterion,
            "criteria": {
                name: {
                    "summary": c.summary,
                    "validity": {key: _range(v) for key, v in c.validity.items()},
                    "reference": c.reference,
                }
                for name, c in transition.CRITERIA.items()
            },
            "trip": "forced transition at a given arc length per side (common practice)",
            "laminar_separation_bubble": {
                "criterion": "owen_klanfer_1953",
                "summary": "Re_delta* at laminar separation above the threshold: short bubble "
                "(transition, reattachment); below: long bubble, likely to burst (separation)",
                "re_delta_star_threshold": transition.OWEN_KLANFER_RE_DELTA_STAR,
                "reference": "Owen & Klanfer (1953) RAE Report Aero 2508 [memory]",
            },
        },
        "turbulent": {
            "method": turbulent.METHODS[turb_defaults.method].name,
            "summary": turbulent.METHODS[turb_defaults.method].summary,
            "reference": turbulent.METHODS[turb_defaults.method].reference,
            "options": {
                "method": {
                    "default": turb_defaults.method,
                    "choices": {
                        name: {
                            "name": m.name,
                            "summary": m.summary,
                            "reference": m.reference,
                            "skin_friction": m.skin_friction or "option skin_friction",
                        }
                        for name, m in turbulent.METHODS.items()
                    },
                },
                "initial_shape_factor": {"default": turb_defaults.initial_shape_factor},
                "separation_shape_factor": {
                    "default": turb_defaults.separation_shape_factor,
                    "note": "texts give 1.8 to 2.4",
                },
                "skin_friction": {
                    "default": turb_defaults.skin_friction,
                    "choices": {
                        name: {
                            "validity": {k: _range(v) for k, v in law.validity.items()},
                            "reference": law.reference,
                        }
                        for name, law in turbulent.SKIN_FRICTION.items()
                    },
                },
            },
        },
        "separation": {
            "pressure_plateau": {
                "default": SeparationOptions().pressure_plateau,
                "summary": "a constant-pressure region downstream of the suction peak of a "
                "contour side, while the wall turns, is separated flow already in the data "
                "(base-pressure plateau): reported, and the stations end at its onset; not "
                "checked on single-surface input (rule of practice)",
                "thresholds": {
                    "band_of_cp_range": plateau.PLATEAU_BAND,
                    "min_length_of_side": plateau.PLATEAU_MIN_LENGTH,
                    "min_points": plateau.PLATEAU_MIN_POINTS,
                    "min_turning_deg": plateau.PLATEAU_MIN_TURNING,
                },
                "reference": "after the free-streamline model of Roshko (1954) NACA TN 3169 "
                "[memory]",
            },
            "near_separation_fraction": NEAR_SEPARATION_FRACTION,
        },
        "mesh": {
            "y_plus_default": MeshOptions().y_plus,
            "first_cell_height": "y+ nu / u_tau, u_tau = Ue sqrt(Cf/2) (common practice)",
            "thickness": "delta99: 7.39 theta laminar (Blasius ratio); power-law profile "
            "theta H (H + 1)/(H - 1) turbulent [derived]",
            "eddy_viscosity": "Clauser outer value 0.0168 Ue delta* (Cebeci & Smith 1974) [memory]",
        },
        "edge_velocity": {
            "incompressible": "Ue/U_inf = sqrt(1 - Cp) (Bernoulli)",
            "compressible": "isentropic edge for mach > 0; the boundary-layer methods stay "
            "incompressible",
        },
    }


#: What the catalogue adds to a laminar method's row of ``ibl.methods.REGISTRY``.
_LAMINAR_DETAILS: dict[str, dict[str, Any]] = {
    "finite_difference": {
        "grid": {
            "eta_points": finite_difference.N_ETA,
            "eta_max": finite_difference.ETA_MAX,
            "eta_stretch": finite_difference.STRETCH,
        },
        "accuracy": "grid error below 0.3 % in separation position and 1 % in theta on "
        "the cylinder, sphere, Howarth and cone flows (grid study in "
        "ibl.finite_difference)",
    },
}

#: The laminar methods (``laminar.method`` of a case), with their sources: the rows of
#: the registry of methods (``ibl.methods``).
LAMINAR_METHODS: dict[str, dict[str, Any]] = {
    name: {"summary": m.summary, "reference": m.reference, **_LAMINAR_DETAILS.get(name, {})}
    for name, m in methods("laminar").items()
}


def method_names(kind: str) -> list[str]:
    """Valid names for ``criterion``, ``closure``, ``skin_friction``, ``method`` (the turbulent
    method) or ``laminar_method``.

    >>> method_names("criterion")
    ['michel', 'granville', 'abu_ghannam_shaw', 'none']
    """
    table: dict[str, Any] = {
        "criterion": transition.CRITERIA,
        "closure": laminar.CLOSURES,
        "skin_friction": turbulent.SKIN_FRICTION,
        "method": turbulent.METHODS,
        "laminar_method": LAMINAR_METHODS,
    }
    return list(table[kind])
