"""Shared code for the reference tests; the reference solvers live in ``ibl.references``.

``ibl.references`` holds the exact similarity solutions of the boundary-layer equations (scipy
``solve_bvp``: Falkner & Skan 1931, Blasius 1908, Hiemenz 1911, Homann 1936), the
finite-difference march to separation (Howarth 1938, circular cylinder after Terrill 1960,
Hiemenz's measured cylinder distribution, the sphere) and the closed forms of Thwaites' method
(Thwaites 1949; Cebeci & Bradshaw 1977; Rott & Crabtree 1952).  They are re-exported here so
that the tests read as before; this module adds the reference tables of tests/reference and
accessors of result documents.
"""

from __future__ import annotations

import csv
import json
from pathlib import Path
from typing import Any

import numpy as np

from ibl.references import (
    FLOWS,
    March,
    Similarity,
    blasius,
    cebeci_bradshaw_h,
    cebeci_bradshaw_l,
    exact_march,
    falkner_skan,
    hiemenz,
    hiemenz_fit,
    hiemenz_fit_slope,
    homann,
    howarth_separation,
    march_to_separation,
    surface_case,
    thwaites_separation,
    thwaites_theta2,
    thwaites_wedge,
)

__all__ = [
    "FLOWS",
    "REFERENCE_DIR",
    "March",
    "Similarity",
    "arrays",
    "blasius",
    "cebeci_bradshaw_h",
    "cebeci_bradshaw_l",
    "exact_march",
    "falkner_skan",
    "hiemenz",
    "hiemenz_fit",
    "hiemenz_fit_slope",
    "homann",
    "howarth_separation",
    "load_csv",
    "load_json",
    "march_to_separation",
    "reference",
    "side",
    "surface_case",
    "thwaites_separation",
    "thwaites_theta2",
    "thwaites_wedge",
]

REFERENCE_DIR = Path(__file__).parent / "reference"

# --------------------------------------------------------------------------- reference data


def load_csv(name: str) -> list[dict[str, str]]:
    """Rows of ``tests/reference/<name>`` (a CSV with a header line; '#' lines are comments)."""
    with open(REFERENCE_DIR / name, newline="") as fh:
        lines = [ln for ln in fh if not ln.lstrip().startswith("#")]
    return list(csv.DictReader(lines))


def load_json(name: str) -> Any:
    with open(REFERENCE_DIR / name) as fh:
        return json.load(fh)


def reference(name: str) -> dict[str, dict[str, str]]:
    """The rows of a reference CSV keyed by their ``id`` column."""
    return {row["id"]: row for row in load_csv(name)}


# --------------------------------------------------------------------------- result documents


def side(result: dict[str, Any], name: str) -> dict[str, Any]:
    """The side called ``name`` in a result document."""
    for sd in result["sides"]:
        if sd["name"] == name:
            return sd
    raise KeyError(
        f"no side {name!r} in result; sides are {[sd['name'] for sd in result['sides']]}"
    )


def arrays(sd: dict[str, Any], *names: str) -> list[np.ndarray]:
    return [np.asarray(sd[n], dtype=float) for n in names]
