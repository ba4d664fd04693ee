"""Figures of results, sweeps and the validation report: content, units, events, legibility."""

from __future__ import annotations

import itertools
import json
import math
import xml.etree.ElementTree as ET
from pathlib import Path
from typing import Any

import numpy as np
import pytest
from matplotlib.figure import Figure
from matplotlib.lines import Line2D
from matplotlib.text import Text
from similarity import surface_case

import ibl
from ibl.analysis import CAUTION
from ibl.cli import main
from ibl.figures import build, format_of, length_unit, render

EXAMPLE = Path(__file__).resolve().parents[1] / "examples" / "strut.json"
PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"


def _circle(cp_factor: float, **extra: Any) -> dict[str, Any]:
    """Unit circle, 360 points, flow along +x, Cp = 1 - k sin^2(phi) (k = 4 cylinder,
    2.25 sphere)."""
    t = np.linspace(0.0, 2.0 * np.pi, 361)
    return {
        "surface": {"x": np.cos(t).tolist(), "y": np.sin(t).tolist()},
        "pressure": {"cp": (1.0 - cp_factor * np.sin(np.pi - t) ** 2).tolist()},
        **extra,
    }


def _cases() -> dict[str, dict[str, Any]]:
    s = np.linspace(0.0, 1.0, 401)
    plate = surface_case(s, np.ones_like(s), 3e6, criterion="michel")
    plate["name"] = "flat plate"
    return {
        "strut": json.loads(EXAMPLE.read_text()),
        "plate": plate,
        "sphere": _circle(
            2.25, flow={"reynolds": 5e5}, body={"kind": "axisymmetric"}, name="sphere"
        ),
        "cylinder_laminar": _circle(
            4.0, flow={"reynolds": 1e5}, transition={"criterion": "none"}, name="cylinder"
        ),
    }


CASES = _cases()


def _outline(case: dict[str, Any]) -> tuple[list[float], list[float]] | None:
    surface = case["surface"]
    return (surface["x"], surface["y"]) if "x" in surface else None


def _figure(name: str) -> tuple[Figure, dict[str, Any]]:
    case = CASES[name]
    result = ibl.analyze(case)
    return build(result, units=length_unit(case), outline=_outline(case)), result


def _texts(fig: Figure) -> list[Text]:
    """Every non-empty text that is drawn: titles, labels, tick labels in view, legends."""
    fig.canvas.draw()
    texts: list[Text] = list(fig.texts)
    for ax in fig.axes:
        texts += [ax.title, ax.xaxis.label, ax.yaxis.label]
        legend = ax.get_legend()
        if legend is not None:
            texts += legend.get_texts()
        for axis, limits in ((ax.xaxis, ax.get_xlim()), (ax.yaxis, ax.get_ylim())):
            low, high = min(limits), max(limits)
            for tick in axis.get_major_ticks():
                if low <= tick.get_loc() <= high:
                    texts += [t for t in (tick.label1, tick.label2) if t.get_visible()]
    unique = {id(t): t for t in texts}
    return [t for t in unique.values() if t.get_visible() and t.get_text().strip()]


def _overlapping_texts(fig: Figure) -> list[tuple[str, str]]:
    renderer = fig.canvas.get_renderer()  # type: ignore[attr-defined]
    boxes = [(t.get_text(), t.get_window_extent(renderer)) for t in _texts(fig)]
    return [
        (a[:40], b[:40])
        for (a, box_a), (b, box_b) in itertools.combinations(boxes, 2)
        if box_a.shrunk(0.98, 0.9).overlaps(box_b.shrunk(0.98, 0.9))
    ]


def _outside(fig: Figure) -> list[str]:
    renderer = fig.canvas.get_renderer()  # type: ignore[attr-defined]
    width, height = fig.canvas.get_width_height()
    out = []
    for text in _texts(fig):
        box = text.get_window_extent(renderer)
        if box.x0 < -1 or box.y0 < -1 or box.x1 > width + 1 or box.y1 > height + 1:
            out.append(text.get_text()[:40])
    return out


# ------------------------------------------------------------------------------ legibility


@pytest.mark.parametrize("name", list(CASES))
def test_no_text_overlaps_or_leaves_the_figure(name: str) -> None:
    fig, _ = _figure(name)
    assert _overlapping_texts(fig) == []
    assert _outside(fig) == []


def test_long_case_name_is_wrapped_inside_the_figure() -> None:
    case = dict(CASES["plate"], name="a very long case name " * 9)
    fig = build(ibl.analyze(case))
    assert _overlapping_texts(fig) == []
    assert _outside(fig) == []


@pytest.mark.parametrize("name", list(CASES))
def test_caution_and_title_are_in_the_figure(name: str) -> None:
    fig, _ = _figure(name)
    text = " ".join(t.get_text().replace("\n", " ") for t in _texts(fig))
    assert " ".join(CAUTION.split()) in " ".join(text.split())
    assert CASES[name]["name"] in text


# ---------------------------------------------------------------------------------- units


def test_length_unit_follows_the_flow_given() -> None:
    assert length_unit({"flow": {"speed": 18.0, "kinematic_viscosity": 1.5e-5}}) == "m"
    assert length_unit({"flow": {"reynolds": 1e6}}) == "coordinate unit"
    assert length_unit({}) == "coordinate unit"


@pytest.mark.parametrize(("name", "unit"), [("strut", "m"), ("plate", "coordinate unit")])
def test_axis_labels_carry_the_unit(name: str, unit: str) -> None:
    fig, _ = _figure(name)
    labels = {ax.get_xlabel() for ax in fig.axes} | {ax.get_ylabel() for ax in fig.axes}
    assert f"s [{unit}]" in labels
    assert any(label.endswith(f"[{unit}]") and "theta" in label for label in labels)


# --------------------------------------------------------------------------------- events


def _markers(ax: Any, marker: str) -> list[tuple[float, float]]:
    points = []
    for line in ax.get_lines():
        if (
            isinstance(line, Line2D)
            and line.get_marker() == marker
            and line.get_linestyle()
            in (
                "None",
                "none",
                "",
            )
        ):
            points += list(zip(line.get_xdata(), line.get_ydata(), strict=True))
    return [(float(x), float(y)) for x, y in points]


def _contour_axes(fig: Figure) -> Any:
    return next(ax for ax in fig.axes if ax.get_xlabel().startswith("x ["))


@pytest.mark.parametrize("name", ["strut", "sphere"])
def test_contour_marks_stagnation_and_events_where_the_result_puts_them(name: str) -> None:
    fig, result = _figure(name)
    ax = _contour_axes(fig)
    stag = result["stagnation"]
    assert _markers(ax, "*") == [pytest.approx((stag["x"], stag["y"]))]
    diamonds = _markers(ax, "D")
    for side in result["sides"]:
        tr = side["transition"]
        y = float(np.interp(tr["s"], side["s"], side["y"]))
        assert any(math.isclose(x, tr["x"]) and math.isclose(yy, y) for x, yy in diamonds)


def test_laminar_and_turbulent_stretches_are_drawn_apart() -> None:
    """On the contour, the blue curve holds the laminar stations and the red one the
    turbulent stations (plus the joining point)."""
    fig, result = _figure("strut")
    ax = _contour_axes(fig)
    lines = [line for line in ax.get_lines() if line.get_marker() in ("None", "none", "")]
    blue = [line for line in lines if line.get_color() == "#1f77b4"]
    red = [line for line in lines if line.get_color() == "#d62728"]
    for side, b, r in zip(result["sides"], blue, red, strict=True):
        regime = np.array(side["regime"])
        laminar_y = np.asarray(b.get_ydata(), dtype=float)
        turbulent_y = np.asarray(r.get_ydata(), dtype=float)
        assert np.isfinite(turbulent_y).sum() == (regime == "turbulent").sum()
        assert np.isfinite(laminar_y).sum() == (regime == "laminar").sum() + 1


def test_single_surface_draws_a_line_along_s() -> None:
    fig, result = _figure("plate")
    assert not any(ax.get_xlabel().startswith("x [") for ax in fig.axes)
    strip = fig.axes[1]
    tr = result["sides"][0]["transition"]
    assert _markers(strip, "D") == [pytest.approx((tr["s"], 0.0))]


def test_laminar_separation_without_transition_is_marked() -> None:
    fig, result = _figure("cylinder_laminar")
    ax = _contour_axes(fig)
    squares = _markers(ax, "s")
    for side in result["sides"]:
        assert side["transition"] is None and side["separation"]["regime"] == "laminar"
        y = float(np.interp(side["separation"]["s"], side["s"], side["y"]))
        assert any(math.isclose(yy, y) for _, yy in squares)


# -------------------------------------------------------------------------------- formats


def test_png_and_svg_bytes() -> None:
    result = ibl.analyze(CASES["strut"])
    png = render(result, "png", units="m")
    assert png.startswith(PNG_SIGNATURE)
    svg = render(result, "svg", units="m")
    root = ET.fromstring(svg)
    assert root.tag.endswith("svg")
    assert "CAUTION" in svg.decode()
    with pytest.raises(ValueError, match="png, svg"):
        render(result, "pdf", units="m")  # type: ignore[arg-type]


def test_format_of_suffix() -> None:
    assert format_of(Path("a/b.PNG")) == "png"
    assert format_of(Path("b.svg")) == "svg"
    with pytest.raises(ValueError):
        format_of(Path("b.pdf"))


def test_png_is_not_blank() -> None:
    from io import BytesIO

    import matplotlib.image

    png = render(ibl.analyze(CASES["sphere"]), "png")
    pixels = matplotlib.image.imread(BytesIO(png), format="png")
    assert pixels.shape[0] > 500 and pixels.shape[1] > 500
    assert float(np.std(pixels[..., :3])) > 0.05


# ------------------------------------------------------------------------------------ CLI


def test_demo_plot_writes_png(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    path = tmp_path / "demo.png"
    assert main(["demo", "--plot", str(path)]) == 0
    assert path.read_bytes().startswith(PNG_SIGNATURE)
    out = capsys.readouterr()
    assert "CAUTION" in out.out and str(path) in out.err


def test_run_plot_svg_has_the_case_name(tmp_path: Path) -> None:
    path = tmp_path / "strut.svg"
    assert main(["run", str(EXAMPLE), "--plot", str(path), "--format", "json"]) == 0
    assert "survey-mast stay fairing" in path.read_text()


def test_plot_with_unknown_suffix_exits_2(tmp_path: Path, capsys: pytest.CaptureFixture[str]):
    assert main(["demo", "--plot", str(tmp_path / "demo.pdf")]) == 2
    assert ".png or .svg" in capsys.readouterr().err
    assert not (tmp_path / "demo.pdf").exists()
