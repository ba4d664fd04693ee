"""A digest of the results of a fixed corpus of cases, to show that a change of code
left every number as it was.

    python tests/bench/fingerprint.py            # one line per case, then the total digest
    python tests/bench/fingerprint.py --quiet    # the total digest only

Run it before and after a change meant to keep results (a faster scheme, a restructure):
the digests must be equal. The corpus covers contours and single surfaces, sections and
bodies of revolution, every transition criterion, both laminar and both turbulent methods,
trips, inflow, noisy taps with smoothing, pressure plateaus, answer shapes and derivatives.
Results are compared as their JSON encoding, so a change in the last bit of any float shows.
"""

from __future__ import annotations

import argparse
import copy
import hashlib
import json
import math
import sys
from pathlib import Path
from typing import Any

import msgspec
import numpy as np

ROOT = Path(__file__).resolve().parents[2]
# The checkout this script is in, not whichever ``ibl`` the environment installed.
sys.path.insert(0, str(ROOT))

from ibl.analysis import parse_case, run_batch  # noqa: E402
from ibl.bench import ellipse_case  # noqa: E402
from ibl.schema import Result  # noqa: E402


def _with(doc: dict[str, Any], **members: Any) -> dict[str, Any]:
    out = copy.deepcopy(doc)
    for path, value in members.items():
        *head, last = path.split("__")
        node = out
        for key in head:
            node = node.setdefault(key, {})
        node[last] = value
    return out


def _joukowski(alpha_deg: float, n: int = 161) -> dict[str, Any]:
    """Exact potential flow round a symmetric Joukowski section (invented size)."""
    alpha = math.radians(alpha_deg)
    eps, a = 0.08, 1.08
    c0 = -eps + 0j
    th = np.linspace(0.0, 2.0 * math.pi, n)
    zeta = c0 + a * np.exp(1j * th)
    z = zeta + 1.0 / zeta
    beta = 0.0
    with np.errstate(divide="ignore", invalid="ignore"):
        w = (
            np.exp(-1j * alpha)
            - a**2 * np.exp(1j * alpha) / (zeta - c0) ** 2
            + 2j * a * math.sin(alpha + beta) / (zeta - c0)
        ) / (1.0 - 1.0 / zeta**2)
    w[[0, -1]] = w[1]  # trailing edge: finite, replaced by a neighbour
    cp = 1.0 - np.abs(w) ** 2
    cp[[0, -1]] = cp[1]
    return {
        "name": f"joukowski {alpha_deg}",
        "surface": {"x": z.real[:-1].tolist(), "y": z.imag[:-1].tolist()},
        "pressure": {"cp": cp[:-1].tolist()},
        "flow": {"reynolds": 3e6},
    }


def _plate(n: int = 120, gradient: float = 0.0) -> dict[str, Any]:
    s = np.linspace(0.0, 1.0, n)
    return {
        "surface": {"s": s.tolist()},
        "pressure": {"edge_velocity": (1.0 - gradient * s).tolist()},
        "flow": {"reynolds": 2e6},
    }


def _sphere(n: int = 121) -> dict[str, Any]:
    phi = np.linspace(0.0, math.pi, n)
    return {
        "surface": {"x": (-np.cos(phi)).tolist(), "y": np.sin(phi).tolist()},
        "pressure": {"cp": (1.0 - 2.25 * np.sin(phi) ** 2).tolist()},
        "flow": {"reynolds": 2e5},
        "body": {"kind": "axisymmetric"},
    }


def _cylinder_taps() -> dict[str, Any]:
    path = ROOT / "tests/reference/cylinder_subcritical_cp.csv"
    lines = [line for line in path.read_text().splitlines() if not line.startswith("#")]
    rows = np.array([[float(v) for v in line.split(",")[:2]] for line in lines[1:]])
    deg, cp = rows[:, 0], rows[:, 1]
    deg = np.concatenate([deg, 360.0 - deg[::-1][1:-1]])
    cp = np.concatenate([cp, cp[::-1][1:-1]])
    t = np.radians(deg)
    return {
        "surface": {"x": (-np.cos(t)).tolist(), "y": np.sin(t).tolist()},
        "pressure": {"cp": cp.tolist()},
        "flow": {"reynolds": 1e5},
    }


def corpus() -> list[dict[str, Any]]:
    """The cases, as documents."""
    docs: list[dict[str, Any]] = []
    for name in ("strut.json", "mast.json"):
        docs.append(json.loads((ROOT / "examples" / name).read_text()))
    noisy = json.loads((ROOT / "tests/cases/section_noisy_taps.json").read_text())
    docs.append(noisy)
    for smoothing in ("auto", 1e-9):
        docs.append(_with(noisy, pressure__smoothing=smoothing))
    ellipse = ellipse_case(200)
    docs += [ellipse, ellipse_case(57), ellipse_case(400, reynolds=3e5)]
    for criterion in ("granville", "abu_ghannam_shaw", "none"):
        docs.append(
            _with(ellipse, transition__criterion=criterion, flow__turbulence_intensity=0.01)
        )
    docs.append(_with(ellipse, transition__trip={"upper": 0.3, "lower": 0.5}))
    docs.append(_with(ellipse, laminar__closure="white", turbulent__skin_friction="white"))
    docs.append(_with(ellipse, laminar__method="finite_difference"))
    docs.append(_with(ellipse, turbulent__method="lag_entrainment"))
    docs.append(_with(ellipse, output={"stations": False}))
    docs.append(_with(ellipse, output={"stations": ["s", "cf", "regime"]}))
    docs.append(
        _with(
            ellipse,
            output={
                "stations": False,
                "sensitivities": [
                    "transition",
                    "laminar_separation",
                    "separation",
                    "friction_drag",
                    "profile_drag",
                ],
            },
        )
    )
    for alpha in (0.0, 2.0, 6.0):
        docs.append(_joukowski(alpha))
    docs.append(_with(_joukowski(2.0), output={"sensitivities": ["transition", "profile_drag"]}))
    for gradient in (0.0, 0.3, 0.6):
        docs.append(_plate(gradient=gradient))
    docs.append(
        _with(
            _plate(gradient=0.3),
            output={"sensitivities": ["transition", "separation", "friction_drag"]},
        )
    )
    noisy_plate = _plate(gradient=0.3)
    wobble = 1e-3 * np.sin(np.arange(len(noisy_plate["surface"]["s"])) * 2.1)
    noisy_plate["pressure"]["edge_velocity"] = (
        np.asarray(noisy_plate["pressure"]["edge_velocity"]) + wobble
    ).tolist()
    docs.append(_with(noisy_plate, pressure__smoothing="auto"))
    docs.append(
        _with(
            noisy_plate,
            pressure__smoothing="auto",
            output={"sensitivities": ["transition", "separation", "friction_drag"]},
        )
    )
    docs.append(_with(_plate(), inflow={"theta": 1e-3, "shape_factor": 1.4, "regime": "turbulent"}))
    docs.append(_sphere())
    docs.append(_with(_sphere(), laminar__method="finite_difference"))
    docs.append(
        _with(
            _sphere(),
            transition__trip={"upper": 0.5},
            turbulent__method="lag_entrainment",
        )
    )
    docs.append(_cylinder_taps())
    docs.append(_with(_cylinder_taps(), separation__pressure_plateau=False))
    return docs


def _difference(old: Any, new: Any, where: str) -> tuple[float, str]:
    """The largest relative difference between two result documents, and where it is
    (infinite where their structure or a non-number differs)."""
    if isinstance(old, dict) and isinstance(new, dict):
        if old.keys() != new.keys():
            return math.inf, f"{where} (members {sorted(old.keys() ^ new.keys())})"
        pairs = [(old[k], new[k], f"{where}/{k}") for k in old]
    elif isinstance(old, list) and isinstance(new, list):
        if len(old) != len(new):
            return math.inf, f"{where} (length {len(old)} against {len(new)})"
        pairs = [(a, b, f"{where}/{i}") for i, (a, b) in enumerate(zip(old, new, strict=True))]
    elif isinstance(old, float | int) and isinstance(new, float | int):
        if old == new:
            return 0.0, where
        return abs(old - new) / max(abs(old), abs(new)), where
    else:
        return (0.0, where) if old == new else (math.inf, where)
    worst, at = 0.0, where
    for a, b, w in pairs:
        d, w2 = _difference(a, b, w)
        if d > worst:
            worst, at = d, w2
    return worst, at


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quiet", action="store_true", help="print the total digest only")
    parser.add_argument("--save", metavar="FILE", help="also write the results as JSON")
    parser.add_argument(
        "--compare", metavar="FILE", help="report the largest difference from saved results"
    )
    args = parser.parse_args(argv)
    cases = []
    for doc in corpus():
        cases.append(parse_case(doc))
    total = hashlib.sha256()
    results = run_batch(cases)
    documents = [msgspec.to_builtins(r) if isinstance(r, Result) else str(r) for r in results]
    if args.save:
        Path(args.save).write_text(json.dumps(documents))
    if args.compare:
        saved = json.loads(Path(args.compare).read_text())
        for index, (old, new) in enumerate(zip(saved, documents, strict=True)):
            worst, where = _difference(old, new, "")
            if worst > 0.0:
                print(f"{index:3d} differs: largest relative difference {worst:.3g} at {where}")
    for index, result in enumerate(results):
        # A refused case is part of the corpus too: its message must not change either.
        blob = msgspec.json.encode(result if isinstance(result, Result) else str(result))
        total.update(blob)
        if not args.quiet:
            print(f"{index:3d} {hashlib.sha256(blob).hexdigest()[:16]} {cases[index].name or ''}")
    print(f"total {total.hexdigest()}  ({len(cases)} cases)")
    return 0


if __name__ == "__main__":
    sys.exit(main())
