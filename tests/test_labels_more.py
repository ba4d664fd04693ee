"""Labels say exactly what they mean: units of length by one rule, the swept Reynolds number
with its length, the sweep's last station, the figure's criteria and lines, the stagnation
point's x/c, the short-bubble simplification, and help text with a unit for every option."""

from __future__ import annotations

import argparse
import json
import math
import re
from pathlib import Path
from typing import Any

import numpy as np
import pytest
from matplotlib.axes import Axes
from matplotlib.figure import Figure
from similarity import surface_case

import ibl
from ibl.cli import BUBBLE_SIMPLIFICATION, _parser, chord_position, summary
from ibl.figures import build, build_sweep
from ibl.sweep import sweep, sweep_csv, sweep_notes, sweep_text
from ibl.table import stations_csv, stations_notes
from ibl.units import COORDINATE_UNIT, METRE, length_unit, lengths_note

ROOT = Path(__file__).resolve().parents[1]
STRUT = json.loads((ROOT / "examples" / "strut.json").read_text())
README = (ROOT / "README.md").read_text()


def _circle(reynolds: float, points: int = 72) -> dict[str, Any]:
    """Circle of radius 0.5 about the origin, flow along +x, potential-flow pressure
    Cp = 1 - 4 sin^2(phi) (textbook potential flow about a cylinder), given by Re."""
    t = np.linspace(0.0, 2.0 * np.pi, points + 1)
    return {
        "name": "cylinder",
        "surface": {"x": (0.5 * np.cos(t)).tolist(), "y": (0.5 * np.sin(t)).tolist()},
        "pressure": {"cp": (1.0 - 4.0 * np.sin(t) ** 2).tolist()},
        "flow": {"reynolds": reynolds},
        "transition": {"criterion": "none"},
    }


def _plate() -> dict[str, Any]:
    s = np.linspace(0.0, 1.0, 201)
    return surface_case(s, np.ones_like(s), 3e6, criterion="michel")


# ------------------------------------------------------------------------------ help text

#: A unit in square brackets, e.g. [m/s], [-], [Pa].
_UNIT = re.compile(r"\[[^\]]+\]")


def _numeric(action: argparse.Action) -> bool:
    """Whether an option takes a number: by type, by a VALUE metavar (sweepable flags take a
    number or a range) or as the smoothing penalty ('auto' or a number)."""
    metavar = action.metavar if isinstance(action.metavar, str) else ""
    return action.type in (int, float) or "VALUE" in metavar or action.dest == "smoothing"


def _problems(parser: argparse.ArgumentParser, path: str = "ibl") -> list[str]:
    """Every option of ``parser`` and its subcommands without help, or numeric without a unit
    in brackets (or the word dimensionless)."""
    out = []
    for action in parser._actions:
        if isinstance(action, argparse._SubParsersAction):
            for name, sub in action.choices.items():
                out += _problems(sub, f"{path} {name}")
            continue
        if isinstance(action, argparse._HelpAction):
            continue
        name = "/".join(action.option_strings) or action.dest
        text = action.help
        if not text or text == argparse.SUPPRESS:
            out.append(f"{path} {name}: no help")
        elif _numeric(action) and not (_UNIT.search(text) or "dimensionless" in text):
            out.append(f"{path} {name}: numeric, no unit in brackets")
    return out


def test_every_option_says_what_it_is_and_its_unit() -> None:
    assert _problems(_parser()) == []


def test_the_help_check_can_fail() -> None:
    parser = argparse.ArgumentParser(prog="x")
    commands = parser.add_subparsers()
    sub = commands.add_parser("sub")
    sub.add_argument("--bare", type=float)
    sub.add_argument("--no-unit", type=int, help="a count")
    sub.add_argument("--fine", type=float, help="a speed [m/s]")
    assert _problems(parser, "x") == [
        "x sub --bare: no help",
        "x sub --no-unit: numeric, no unit in brackets",
    ]


@pytest.mark.parametrize("option", ["--mach", "--repeat"])
def test_options_once_without_help_have_it(option: str) -> None:
    commands = next(a for a in _parser()._actions if isinstance(a, argparse._SubParsersAction))
    found = [
        action.help
        for sub in commands.choices.values()
        for action in sub._actions
        if option in action.option_strings
    ]
    assert found and all(text and _UNIT.search(text) for text in found)


# -------------------------------------------------------------------------- length unit


@pytest.mark.parametrize(
    ("case", "unit"), [(STRUT, METRE), (_circle(1e5), COORDINATE_UNIT)], ids=["SI", "Re"]
)
def test_one_length_rule_in_every_output(case: dict[str, Any], unit: str) -> None:
    """A flow in SI (speed [m/s], kinematic viscosity [m^2/s]) makes the coordinates metres;
    a Reynolds number leaves them in the coordinate unit (Re = U L/nu, L one unit): the
    summary, station table, sweep text and CSV and the figures all say the same."""
    assert length_unit(case) == unit
    note = lengths_note(unit)
    result = ibl.analyze(case)
    surface = case["surface"]
    text = summary(result, units=unit, outline=(surface["x"], surface["y"]))
    assert note in text
    assert note in stations_notes(result, units=unit)
    assert f"s [{unit}]" in stations_csv(result, units=unit).splitlines()[0]
    swept = sweep(case, "reynolds", [2e5, 4e5])
    assert swept.length_unit == unit
    assert note in sweep_text(swept).replace("\n", " ")
    assert note in sweep_notes(swept)
    assert f"separation_s [{unit}]" in sweep_csv(swept).splitlines()[0]
    labels = {ax.get_xlabel() for ax in build(result, units=unit).axes}
    assert f"s [{unit}]" in labels
    assert f"s [{unit}]" in build_sweep(swept).axes[0].get_ylabel()
    if unit == METRE:
        assert "unit of the input coordinates" not in text


def test_readme_states_the_rule_once() -> None:
    assert README.count("**Units of length.**") == 1
    assert "Lengths are in the unit of the input coordinates." not in README


# ------------------------------------------------------------------------------ sweeps


@pytest.mark.parametrize(("case", "unit"), [(STRUT, "m"), (_circle(1e5), COORDINATE_UNIT)])
def test_swept_reynolds_number_names_its_length(case: dict[str, Any], unit: str) -> None:
    """Re = U_inf L/nu is dimensionless only with L named: a Reynolds number "per unit
    length" has the dimension 1/length (dimensional analysis)."""
    swept = sweep(case, "reynolds", [2e5, 4e5])
    assert swept.label == f"Re = U_inf L/nu, L = 1 {unit} [-]"
    document = json.loads(json.dumps(__import__("msgspec").to_builtins(swept)))
    assert document["label"] == swept.label and document["length_unit"] == unit
    text = sweep_text(swept)
    assert "per unit length" not in text + sweep_csv(swept) + sweep_notes(swept)
    assert text.startswith("Sweep of the Reynolds number") and "Sweep of reynolds" not in text
    fig = build_sweep(swept)
    assert all(ax.get_xlabel() == swept.label for ax in fig.axes if ax.get_xlabel())
    assert "sweep of the Reynolds number" in fig.get_suptitle()


def test_trip_sweep_label_carries_the_length_unit() -> None:
    swept = sweep(STRUT, "trip_upper", [0.02, 0.04])
    assert swept.label.endswith("[m]")


def test_last_station_is_named_and_documented() -> None:
    """The strut's upper side separates between its last two stations (found by
    interpolation), so separation_s exceeds last_station_s: the header says why."""
    swept = sweep(STRUT, "reynolds", [1.2e6])
    upper = swept.points[0].sides[0]
    assert upper.separation_s is not None and upper.separation_s > upper.last_station_s
    header = sweep_csv(swept).splitlines()[0].split(",")
    assert "last_station_s [m]" in header and not any(n.startswith("end_s") for n in header)
    notes = sweep_notes(swept).splitlines()
    assert any(line.startswith("# last_station_s:") and "beyond" in line for line in notes)
    assert "`last_station_s`" in README


# ----------------------------------------------------------------------------- figures


def _h_axes(fig: Figure) -> list[Axes]:
    return [ax for ax in fig.axes if ax.get_ylabel() == "$H$ [-]" or _is_h_panel(ax, fig)]


def _is_h_panel(ax: Axes, fig: Figure) -> bool:
    """The H panels share their y axis with the one labelled H."""
    labelled = next(a for a in fig.axes if a.get_ylabel() == "$H$ [-]")
    return ax is not labelled and labelled.get_shared_y_axes().joined(ax, labelled)


def test_turbulent_criterion_drawn_over_turbulent_stations_only() -> None:
    """Head's H criterion applies to the turbulent layer; a laminar layer has H of 2.59 on a
    flat plate (Blasius) and about 3.5 near separation (common practice), above 2.4."""
    result = ibl.analyze(STRUT)
    fig = build(result, units="m")
    h_sep = float(result["options"]["separation_shape_factor"])
    panels = _h_axes(fig)
    assert len(panels) == len(result["sides"])
    for ax, side in zip(panels, result["sides"], strict=True):
        s = np.array(side["s"])
        turbulent = np.array(side["regime"]) == "turbulent"
        criterion = [
            line
            for line in ax.get_lines()
            if line.get_linestyle() == "-."
            and np.allclose(np.nan_to_num(line.get_ydata(), nan=h_sep), h_sep)
        ]
        assert len(criterion) == 1
        x = np.asarray(criterion[0].get_xdata(), dtype=float)
        y = np.asarray(criterion[0].get_ydata(), dtype=float)
        drawn = x[np.isfinite(y)]
        assert drawn.size == turbulent.sum() > 0
        assert drawn.min() >= s[turbulent].min() and drawn.max() <= s[turbulent].max()
        assert not any(drawn < s[~turbulent].max())


def _legend_entries(fig: Figure) -> dict[str, Any]:
    legend = next(ax.get_legend() for ax in fig.axes if ax.get_legend() is not None)
    return {t.get_text(): h for t, h in zip(legend.get_texts(), legend.legend_handles, strict=True)}


def test_legend_names_the_vertical_lines() -> None:
    fig = build(ibl.analyze(STRUT), units="m")
    entries = _legend_entries(fig)
    dashed = [
        k
        for k, h in entries.items()
        if h.get_linestyle() == "--" and h.get_marker() in ("None", "none", "")
    ]
    solid = [
        k
        for k, h in entries.items()
        if h.get_linestyle() == "-"
        and h.get_color() == "black"
        and h.get_marker() in ("None", "none", "")
    ]
    assert any("transition" in k and "vertical line" in k for k in dashed)
    assert any("separation" in k and "vertical line" in k for k in solid)
    # The lines drawn at transition and separation have the legend's styles.
    s_axes = [ax for ax in fig.axes if ax.get_xlabel() == "s [m]"]
    styles = {line.get_linestyle() for ax in s_axes for line in ax.get_lines()}
    assert {"--", "-"} <= styles


def test_laminar_separation_mark_stays_on_top_of_transition() -> None:
    """On the strut both sides undergo transition at a short bubble: the two marks coincide and
    the smaller bubble mark is drawn above the transition mark."""
    result = ibl.analyze(STRUT)
    assert all(side["transition"]["cause"] == "laminar_separation" for side in result["sides"])
    fig = build(result, units="m", outline=(STRUT["surface"]["x"], STRUT["surface"]["y"]))
    contour = next(ax for ax in fig.axes if ax.get_xlabel() == "x [m]")
    marks = {
        line.get_marker(): line for line in contour.get_lines() if line.get_linestyle() == "None"
    }
    diamond, triangle = marks["D"], marks["^"]
    assert triangle.get_zorder() > diamond.get_zorder()
    assert triangle.get_markersize() < diamond.get_markersize()


# ------------------------------------------------------------------- stagnation, bubble


def test_chord_position_on_known_geometry() -> None:
    """A circle of radius R: c = 2R, the front point at x/c = 0, the top at 0.5, the rear at 1;
    a rectangle inclined by 30 deg: x/c measured along its diagonal chord. Exact geometry;
    tolerance of rounding."""
    t = np.linspace(0.0, 2.0 * np.pi, 361)
    circle = (2.0 * np.cos(t), 2.0 * np.sin(t))
    for point, expected in (((-2.0, 0.0), 0.0), ((0.0, 2.0), 0.5), ((2.0, 0.0), 1.0)):
        got = chord_position(circle, *point)
        assert got is not None
        assert got[0] == pytest.approx(expected, abs=1e-12) and got[1] == pytest.approx(4.0)
    open_arc = (np.cos(t[:90]), np.sin(t[:90]))
    assert chord_position(open_arc, 0.0, 1.0) is None
    assert chord_position(None, 0.0, 0.0) is None


def test_summary_gives_stagnation_x_over_chord() -> None:
    """Potential flow about a cylinder stagnates at its front point: x/c = 0 with c the
    diameter (the taps are symmetric about the stagnation point, so it is found on a tap)."""
    case = _circle(1e5)
    result = ibl.analyze(case)
    surface = case["surface"]
    text = summary(result, units=COORDINATE_UNIT, outline=(surface["x"], surface["y"]))
    line = next(line for line in text.splitlines() if line.startswith("Stagnation point"))
    value = float(re.search(r"x/c = (\S+),", line).group(1))  # type: ignore[union-attr]
    assert math.isclose(value, 0.0, abs_tol=1e-6)
    assert "index" in line and line.index("x/c") < line.index("index")
    assert "chord c = 1," in text and "smallest x" in text
    assert "x/c" not in summary(result)  # without the contour, no chord is claimed


def test_short_bubble_simplification_is_said() -> None:
    strut = ibl.analyze(STRUT)
    assert BUBBLE_SIMPLIFICATION in summary(strut, units="m")
    plate = ibl.analyze(_plate())
    assert plate["sides"][0]["transition"]["cause"] == "criterion"
    assert BUBBLE_SIMPLIFICATION not in summary(plate)
    assert "reattachment and length are not modelled" in README.replace("\n", " ")
