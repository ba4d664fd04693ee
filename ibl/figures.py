"""Figures of a result document (matplotlib, rendered off-screen).

Contents
--------
- ``render(result, fmt, *, units, outline)``: the figure of one result as PNG or SVG bytes:
  per side, theta, H and Cf against arc length with transition, laminar separation (bubble
  class) and separation marked; above them the body contour with the same events, laminar and
  turbulent stretches told apart and the stagnation point (a line along s for single-surface
  input); the caution in the footer.
- ``length_unit(case_doc)``: the case's length unit (``ibl.units``, the one rule).
- ``FORMATS``, ``format_of(path)``: the supported formats and the format named by a file suffix.

Shared by the command line and the HTTP service.  The figures are built on
``matplotlib.figure.Figure`` with the Agg canvas, so neither pyplot's global state nor a display
is involved and rendering is safe in worker threads.
"""

from __future__ import annotations

import io
import math
import textwrap
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Any, Literal

import msgspec
import numpy as np
from matplotlib import rc_context
from matplotlib.axes import Axes
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure
from matplotlib.layout_engine import ConstrainedLayoutEngine
from matplotlib.lines import Line2D
from matplotlib.typing import LineStyleType
from numpy.typing import NDArray

from ibl.analysis import CAUTION
from ibl.schema import Result
from ibl.sweep import VARIABLES, Sweep
from ibl.units import COORDINATE_UNIT, length_unit

if TYPE_CHECKING:
    from ibl.validation import Check

__all__ = [
    "FORMATS",
    "Format",
    "build",
    "build_sweep",
    "build_validation",
    "format_of",
    "length_unit",
    "render",
    "render_sweep",
    "render_validation",
]

Format = Literal["png", "svg"]
FORMATS: tuple[Format, ...] = ("png", "svg")
Array = NDArray[np.float64]

LAMINAR_COLOUR = "#1f77b4"
TURBULENT_COLOUR = "#d62728"
#: A validation comparison outside its tolerance by a known shortcoming of the method.
KNOWN_MISS_COLOUR = "#8c8c8c"
_DPI = 110
_FOOTER_FONT = 7.5


@dataclass(frozen=True)
class _Style:
    """How one kind of event is drawn: marker, colour, line style of its vertical line."""

    label: str
    marker: str
    colour: str
    linestyle: LineStyleType
    size: float
    filled: bool = True


_EVENTS = {
    # Sizes decrease so that coinciding events stay visible as concentric marks.
    "turbulent": _Style("turbulent separation", "o", "black", "-", 12.0, filled=False),
    "laminar": _Style("laminar separation (layer ends)", "s", "black", "-", 11.0, filled=False),
    "transition": _Style("transition", "D", "#2ca02c", "--", 8.5, filled=False),
    "short": _Style("laminar separation, short bubble", "^", "#9467bd", ":", 6.5),
    "long": _Style("laminar separation, long bubble (bursts)", "v", "#9467bd", ":", 6.5),
    "plateau": _Style(
        "plateau onset (separated in the data)", "X", "#8c564b", (0, (6, 2, 1, 2)), 9.0
    ),
}
#: The closest approach to separation on each regime (margins), marked on the H panel.
_MARGIN = _Style("nearest to separation (min lambda, max H)", "o", "#555555", "-", 5.0)
_STAGNATION = _Style("stagnation point", "*", "#ff9900", "-", 13.0)


def format_of(path: Path) -> Format:
    """The figure format named by the suffix of ``path`` (.png or .svg).

    Raises
    ------
    ValueError
        For any other suffix.
    """
    suffix = path.suffix.lower().lstrip(".")
    for fmt in FORMATS:
        if suffix == fmt:
            return fmt
    raise ValueError(f"{path}: a figure file ends in .png or .svg")


# ------------------------------------------------------------------------ building blocks


def new_figure(width: float, height: float) -> Figure:
    """A figure on the Agg canvas with constrained layout."""
    fig = Figure(figsize=(width, height), dpi=_DPI, layout="constrained")
    FigureCanvasAgg(fig)
    return fig


def add_footer(fig: Figure, text: str) -> None:
    """Wrap ``text`` across the bottom of ``fig`` and keep the layout clear of it."""
    # DejaVu Sans averages about 0.55 em per character; 0.62 leaves a margin.
    width_chars = int(fig.get_figwidth() * 72.0 / (0.62 * _FOOTER_FONT))
    lines = textwrap.wrap(text, width=width_chars)
    height_in = (len(lines) * 1.35 * _FOOTER_FONT + 10.0) / 72.0
    fraction = min(0.3, height_in / fig.get_figheight())
    fig.text(
        0.01, 0.006, "\n".join(lines), fontsize=_FOOTER_FONT, va="bottom", ha="left", color="#444"
    )
    engine = fig.get_layout_engine()
    if isinstance(engine, ConstrainedLayoutEngine):
        engine.set(rect=(0.0, fraction, 1.0, 1.0 - fraction))


def caution_footer(extra: str = "") -> str:
    """The caution as figure footer text, after an optional note."""
    return (extra + "  " if extra else "") + "CAUTION: " + CAUTION


def to_bytes(fig: Figure, fmt: Format) -> bytes:
    """Encode a figure as PNG or SVG (text kept as text, so that it can be searched)."""
    buffer = io.BytesIO()
    metadata = {"Software": "ibl"} if fmt == "png" else {"Creator": "ibl"}
    with rc_context({"svg.fonttype": "none", "svg.hashsalt": "ibl"}):
        fig.savefig(buffer, format=fmt, metadata=metadata)
    return buffer.getvalue()


def _floats(values: Sequence[float | None] | None) -> Array:
    if values is None:
        return np.zeros(0)
    return np.array([math.nan if v is None else v for v in values], dtype=float)


def _power(values: Array) -> int:
    """Power of ten, a multiple of 1, that brings the largest |value| into [1, 10)."""
    finite = np.abs(values[np.isfinite(values)])
    top = float(finite.max()) if finite.size else 0.0
    return math.floor(math.log10(top)) if top > 0.0 else 0


def _scaled_label(symbol: str, power: int, unit: str) -> str:
    scale = rf" \times 10^{{{-power}}}" if power else ""
    return f"${symbol}{scale}$ [{unit}]"


def _turbulent_mask(side: Mapping[str, Any]) -> NDArray[np.bool_]:
    return np.array([r == "turbulent" for r in side["regime"]], dtype=bool)


def _regime_lines(
    ax: Axes, u: Array, v: Array, turbulent: NDArray[np.bool_], *, join: bool = True
) -> None:
    """Draw v(u) blue where laminar and red where turbulent; ``join`` closes the gap between
    the last laminar and the first turbulent station (for quantities continuous there)."""
    laminar_v = np.where(~turbulent, v, np.nan)
    if join:
        joins = np.flatnonzero(np.diff(turbulent.astype(int)) == 1) + 1
        laminar_v[joins] = v[joins]
    turbulent_v = np.where(turbulent, v, np.nan)
    ax.plot(u, laminar_v, color=LAMINAR_COLOUR, lw=1.6)
    ax.plot(u, turbulent_v, color=TURBULENT_COLOUR, lw=2.2)


def _events(side: Mapping[str, Any]) -> list[tuple[_Style, float, float | None]]:
    """(style, s, x) of each event on a side."""
    out: list[tuple[_Style, float, float | None]] = []
    tr = side.get("transition")
    if tr is not None:
        out.append((_EVENTS["transition"], tr["s"], tr.get("x")))
    ls = side.get("laminar_separation")
    if ls is not None:
        out.append((_EVENTS[ls["bubble"]], ls["s"], ls.get("x")))
    sep = side.get("separation")
    if sep is not None:
        out.append((_EVENTS[sep["regime"]], sep["s"], sep.get("x")))
    plateau = side.get("pressure_plateau")
    if plateau is not None:
        out.append((_EVENTS["plateau"], plateau["s"], plateau.get("x")))
    return out


def _mark(ax: Axes, style: _Style, u: float, v: float) -> None:
    ax.plot(
        [u],
        [v],
        linestyle="none",
        marker=style.marker,
        markersize=style.size,
        markeredgecolor=style.colour,
        markerfacecolor=style.colour if style.filled else "none",
        markeredgewidth=1.5,
        # Smaller marks on top: a bubble's laminar separation at the transition it causes
        # stays visible inside the transition mark.
        zorder=5.0 + 1.0 / style.size,
    )


def _legend_handles(result: Mapping[str, Any], h_sep: float | None) -> list[Line2D]:
    regimes = {r for side in result["sides"] for r in side["regime"]}
    handles = []
    if "laminar" in regimes:
        label = f"laminar ({laminar_method_name(result)})"
        handles.append(Line2D([], [], color=LAMINAR_COLOUR, lw=1.6, label=label))
    if "turbulent" in regimes:
        handles.append(Line2D([], [], color=TURBULENT_COLOUR, lw=2.2, label="turbulent"))
    seen: list[_Style] = []
    if result.get("stagnation"):
        seen.append(_STAGNATION)
    for side in result["sides"]:
        seen.extend(style for style, _, _ in _events(side) if style not in seen)
    order = [
        _STAGNATION,
        *(_EVENTS[k] for k in ("transition", "short", "long", "laminar", "turbulent", "plateau")),
    ]
    for style in sorted(seen, key=order.index):
        handles.append(
            Line2D(
                [],
                [],
                color=style.colour,
                linestyle="none",
                marker=style.marker,
                markersize=style.size * 0.8,
                markerfacecolor=style.colour if style.filled else "none",
                markeredgewidth=1.5,
                label=style.label,
            )
        )
    handles.extend(_vline_handles(seen))
    if any(_margin_points(side) for side in result["sides"]):
        handles.append(
            Line2D(
                [],
                [],
                color=_MARGIN.colour,
                linestyle="none",
                marker=_MARGIN.marker,
                markersize=_MARGIN.size,
                markerfacecolor="white",
                label=_MARGIN.label,
            )
        )
    if h_sep is not None and "turbulent" in regimes:
        handles.append(
            Line2D(
                [],
                [],
                color="grey",
                lw=0.9,
                linestyle="-.",
                label=f"H = {h_sep:g}, turbulent separation criterion",
            )
        )
    return handles


#: What each vertical line of the s panels marks, by the line style of its events.
_VLINE_LABELS = {
    "transition": "transition (vertical line)",
    "separation": "separation, stations end (vertical line)",
    "bubble": "laminar separation, bubble (vertical line)",
    "plateau": "plateau onset (vertical line)",
}


def _vline_handles(seen: Sequence[_Style]) -> list[Line2D]:
    """Legend entries for the vertical lines drawn at the events in ``seen``."""
    kinds = {
        "transition": [_EVENTS["transition"]],
        "separation": [_EVENTS["laminar"], _EVENTS["turbulent"]],
        "bubble": [_EVENTS["short"], _EVENTS["long"]],
        "plateau": [_EVENTS["plateau"]],
    }
    handles = []
    for kind, styles in kinds.items():
        present = [style for style in styles if style in seen]
        if present:
            style = present[0]
            handles.append(
                Line2D(
                    [],
                    [],
                    color=style.colour,
                    linestyle=style.linestyle,
                    lw=1.2,
                    label=_VLINE_LABELS[kind],
                )
            )
    return handles


def _legend_columns(handles: list[Line2D], sides: int) -> int:
    """Legend columns: as many as fit the width of the figure's sides."""
    return max(1, min(3 if sides < 2 else 4, len(handles)))


def _legend_panel(ax: Axes, handles: list[Line2D], columns: int) -> None:
    ax.axis("off")
    ax.legend(handles=handles, loc="center", ncols=columns, fontsize=8.5, frameon=False)


# ---------------------------------------------------------------------------- contour


def _contour_panel(
    ax: Axes,
    result: Mapping[str, Any],
    units: str,
    outline: tuple[Sequence[float], Sequence[float]] | None,
) -> None:
    method_name = str(result.get("options", {}).get("laminar_method", ""))
    axisymmetric = "rott_crabtree" in method_name or "mangler" in method_name
    if outline is not None:
        ax.plot(outline[0], outline[1], color="#bbbbbb", lw=1.0, zorder=1)
    for side in result["sides"]:
        x, y = _floats(side["x"]), _floats(side["y"])
        _regime_lines(ax, x, y, _turbulent_mask(side))
        s = _floats(side["s"])
        for style, s_event, x_event in _events(side):
            xe = x_event if x_event is not None else float(np.interp(s_event, s, x))
            _mark(ax, style, xe, float(np.interp(s_event, s, y)))
    stag = result.get("stagnation")
    if stag:
        _mark(ax, _STAGNATION, stag["x"], stag["y"])
    if axisymmetric:
        ax.axhline(0.0, color="grey", lw=0.8, linestyle=(0, (8, 3, 2, 3)), zorder=0)
    ax.set_aspect("equal", adjustable="box")
    ax.set_xlabel(f"x [{units}]")
    ax.set_ylabel(f"y [{units}]")
    title = "meridian of the body of revolution (axis: x)" if axisymmetric else "body contour"
    if outline is not None:
        title += " (grey: beyond the analysed stations)"
    ax.set_title(title, fontsize=9)
    ax.grid(True, lw=0.3, alpha=0.5)


def _contour_height(result: Mapping[str, Any], width: float) -> float:
    """Height [in] of the contour panel: the body's aspect ratio, within 1.8 to 4.2 in."""
    x = np.concatenate([_floats(side["x"]) for side in result["sides"]])
    y = np.concatenate([_floats(side["y"]) for side in result["sides"]])
    span_x, span_y = float(np.nanmax(x) - np.nanmin(x)), float(np.nanmax(y) - np.nanmin(y))
    aspect = span_y / span_x if span_x > 0.0 else 1.0
    return min(4.2, max(1.8, 1.1 * aspect * (width - 1.0) + 0.9))


def _strip_panel(ax: Axes, result: Mapping[str, Any], units: str) -> None:
    """Single-surface input: the surface drawn as a line along s."""
    for side in result["sides"]:
        s = _floats(side["s"])
        _regime_lines(ax, s, np.zeros_like(s), _turbulent_mask(side))
        for style, s_event, _ in _events(side):
            _mark(ax, style, s_event, 0.0)
    ax.set_ylim(-1.0, 1.0)
    ax.set_yticks([])
    ax.set_xlabel(f"s [{units}]")
    ax.set_title("surface given by arc length (no contour): regimes and events along s", fontsize=9)
    ax.grid(True, axis="x", lw=0.3, alpha=0.5)


# ------------------------------------------------------------------------- s panels


def _margin_points(side: Mapping[str, Any]) -> list[tuple[float, str]]:
    """(s, label) of the closest approach to laminar and to turbulent separation."""
    margins = side.get("margins") or {}
    out = []
    lam, turb = margins.get("laminar"), margins.get("turbulent")
    if lam is not None:
        out.append((float(lam["s"]), f"min $\\lambda$ = {lam['lambda']:.3g}"))
    if turb is not None:
        out.append((float(turb["s"]), f"max $H$ = {turb['shape_factor']:.3g}"))
    return out


def _margin_marks(ax: Axes, side: Mapping[str, Any], s: Array, h: Array) -> None:
    """Mark the closest approaches on the H panel and name them in its corner."""
    points = _margin_points(side)
    if not points or not s.size:
        return
    for s_m, _ in points:
        ax.plot(
            [s_m],
            [float(np.interp(s_m, s, h))],
            linestyle="none",
            marker=_MARGIN.marker,
            markersize=_MARGIN.size,
            markeredgecolor=_MARGIN.colour,
            markerfacecolor="white",
            zorder=6,
        )
    ax.text(
        0.01,
        0.96,
        ", ".join(label for _, label in points),
        transform=ax.transAxes,
        fontsize=7.5,
        va="top",
        ha="left",
        color="#333333",
    )


def _vlines(ax: Axes, side: Mapping[str, Any]) -> None:
    for style, s_event, _ in _events(side):
        ax.axvline(s_event, color=style.colour, linestyle=style.linestyle, lw=0.9, zorder=0)


def _quantity_panels(
    axes: Sequence[Axes], side: Mapping[str, Any], units: str, powers: tuple[int, int], h_sep: float
) -> None:
    s = _floats(side["s"])
    turbulent = _turbulent_mask(side)
    theta = _floats(side["theta"]) * 10.0 ** (-powers[0])
    h = _floats(side["shape_factor"])
    cf = _floats(side["cf"]) * 10.0 ** (-powers[1])
    for ax, v, join in zip(axes, (theta, h, cf), (True, False, False), strict=True):
        _regime_lines(ax, s, v, turbulent, join=join)
        _vlines(ax, side)
        ax.grid(True, lw=0.3, alpha=0.5)
    if turbulent.any():
        # The criterion applies to the turbulent layer only (a laminar H above it is normal):
        # drawn over the turbulent stations.
        axes[1].plot(s, np.where(turbulent, h_sep, np.nan), color="grey", lw=0.9, linestyle="-.")
    _margin_marks(axes[1], side, s, h)
    axes[2].set_xlabel(f"s [{units}]")


def _cf_top(result: Mapping[str, Any]) -> float:
    """Top of the Cf axis.  Cf grows without bound towards a stagnation point or sharp leading
    edge, so the axis ends at 1.3 times the largest value beyond the first fifth of each side."""
    tops = []
    for side in result["sides"]:
        s, cf = _floats(side["s"]), _floats(side["cf"])
        far = np.isfinite(cf) & (s >= 0.2 * s[-1])
        if far.any():
            tops.append(float(cf[far].max()))
    return 1.3 * max(tops, default=0.01)


def _all(result: Mapping[str, Any], key: str) -> Array:
    return np.concatenate([_floats(side[key]) for side in result["sides"]])


#: How figures name the laminar methods (``laminar.method`` of a case).
LAMINAR_NAMES = {
    "thwaites": "Thwaites",
    "finite_difference": "finite difference (Keller box)",
}


def laminar_method_name(result: Mapping[str, Any]) -> str:
    """The laminar method of a result document as figures name it."""
    method = str(result.get("options", {}).get("laminar_method", ""))
    return LAMINAR_NAMES["finite_difference" if method.startswith("keller") else "thwaites"]


def _subtitle(result: Mapping[str, Any]) -> str:
    o = result.get("options", {})
    method = str(o.get("laminar_method", "?"))
    laminar = (
        f"{method} (finite difference)"
        if method.startswith("keller")
        else f"{method} (lambda_sep = {o.get('separation_lambda', '?')})"
    )
    return (
        f"{laminar}, "
        f"transition: {o.get('transition_criterion', '?')}, "
        f"{o.get('turbulent_method', '?')} with {o.get('skin_friction', '?')}"
    )


def _footer_text(result: Mapping[str, Any]) -> str:
    count = len(result.get("warnings", []))
    note = (
        f"{count} warning{'s' if count != 1 else ''}: see `warnings` in the result document."
        if count
        else ""
    )
    return caution_footer(note)


# ----------------------------------------------------------------------------- render


def render(
    result: Mapping[str, Any] | Result,
    fmt: Format = "png",
    *,
    units: str = COORDINATE_UNIT,
    outline: tuple[Sequence[float], Sequence[float]] | None = None,
) -> bytes:
    """The figure of a result document, as PNG or SVG bytes.

    Parameters
    ----------
    result
        A result document (``ibl.analyze`` output, the same decoded from JSON, or an
        ``ibl.Result``).
    fmt
        "png" or "svg" (SVG keeps its text as text).
    units
        The length unit for axis labels: "m" when the case gave speed and viscosity
        (``length_unit``), else "coordinate unit".
    outline
        Optional input contour (x, y), drawn in grey beneath the analysed stations so that the
        body is complete past separation.
    """
    _check_format(fmt)
    return to_bytes(build(result, units=units, outline=outline), fmt)


def _check_format(fmt: str) -> None:
    if fmt not in FORMATS:
        raise ValueError(f"format {fmt!r}: use one of {', '.join(FORMATS)}")


#: The station arrays a figure is drawn from.
_NEEDED = ("s", "x", "y", "theta", "shape_factor", "cf", "regime")


def build(
    document: Mapping[str, Any] | Result,
    *,
    units: str = COORDINATE_UNIT,
    outline: tuple[Sequence[float], Sequence[float]] | None = None,
) -> Figure:
    """The matplotlib ``Figure`` that ``render`` encodes (``result`` may be an ``ibl.Result``)."""
    result: Mapping[str, Any] = (
        document if isinstance(document, Mapping) else msgspec.to_builtins(document)
    )
    sides = result["sides"]
    missing = [name for name in _NEEDED if any(name not in side for side in sides)]
    if missing:
        raise ValueError(
            f"the figure is drawn from the station arrays; the result lacks {', '.join(missing)}"
            ": analyse the case with output.stations = true"
        )
    contour = any(side.get("x") is not None for side in sides)
    ncols = len(sides)
    width = 6.2 * ncols + 1.6 / ncols
    top_height = _contour_height(result, width) if contour else 1.1
    h_sep = float(result.get("options", {}).get("separation_shape_factor", 2.4))
    handles = _legend_handles(result, h_sep)
    rows = math.ceil(len(handles) / _legend_columns(handles, ncols))
    heights = [0.25 + 0.2 * rows, top_height, 2.1, 2.1, 2.1]
    fig = new_figure(width, sum(heights) + 1.4)
    grid = fig.add_gridspec(len(heights), ncols, height_ratios=heights)
    _legend_panel(fig.add_subplot(grid[0, :]), handles, _legend_columns(handles, ncols))
    top = fig.add_subplot(grid[1, :])
    if contour:
        _contour_panel(top, result, units, outline)
    else:
        _strip_panel(top, result, units)
    cf_top = _cf_top(result)
    powers = (_power(_all(result, "theta")), _power(np.array([cf_top])))
    first: list[Axes] = []
    for col, side in enumerate(sides):
        axes = [
            fig.add_subplot(grid[row, col], sharey=first[row - 2] if first else None)
            for row in (2, 3, 4)
        ]
        for ax in axes[:2]:
            ax.sharex(axes[2])
            ax.tick_params(labelbottom=False)
        if not first:
            first = axes
        _quantity_panels(axes, side, units, powers, h_sep)
        axes[0].set_title(f"{side['name']} side" if side["name"] != "surface" else "surface")
    first[0].set_ylabel(_scaled_label(r"\theta", powers[0], units))
    first[1].set_ylabel("$H$ [-]")
    first[2].set_ylabel(_scaled_label("C_f", powers[1], "-"))
    first[2].set_ylim(0.0, cf_top * 10.0 ** (-powers[1]))
    title = [result.get("name") or "(unnamed case)", _subtitle(result)]
    chars = int(width * 72.0 / (0.6 * 11.0))
    fig.suptitle("\n".join(line for t in title for line in textwrap.wrap(t, chars)), fontsize=11)
    add_footer(fig, _footer_text(result))
    return fig


# ------------------------------------------------------------------------------ sweeps


def _series(sweep: Sweep, side: str, key: str, method: str | None = None) -> tuple[Array, Array]:
    """Swept values and ``key`` (an attribute of SidePositions) on one side, None as nan;
    only the points of laminar method ``method`` when the sweep has several."""
    values, out = [], []
    for point in sweep.points:
        if point.laminar_method != method:
            continue
        for positions in point.sides:
            if positions.side == side:
                got = getattr(positions, key)
                values.append(point.value)
                out.append(math.nan if got is None else float(got))
    return np.array(values, dtype=float), np.array(out, dtype=float)


def _regime_split(sweep: Sweep, side: str, method: str | None = None) -> tuple[Array, Array, Array]:
    """Separation s split into turbulent and laminar separations (nan elsewhere)."""
    values, s = _series(sweep, side, "separation_s", method)
    regimes = [
        p.separation_regime
        for point in sweep.points
        if point.laminar_method == method
        for p in point.sides
        if p.side == side
    ]
    laminar = np.array([r == "laminar" for r in regimes], dtype=bool)
    return values, np.where(laminar, np.nan, s), np.where(laminar, s, np.nan)


_SWEEP_LABELS = {"transition": "transition", "short": "laminar separation (start of a bubble)"}


#: Line styles of the laminar methods of a sweep that runs them as a swept choice.
_METHOD_LINES = {"thwaites": "-", "finite_difference": ":"}
#: Short names of the laminar methods in a sweep's legend.
_METHOD_SHORT = {"thwaites": "Thwaites", "finite_difference": "finite diff."}


def _sweep_panel(ax: Axes, sweep: Sweep, side: str) -> None:
    methods: list[str | None] = [*sweep.methods] if sweep.methods else [None]
    for method in methods:
        suffix = f" [{_METHOD_SHORT.get(method, method)}]" if method is not None else ""
        line = _METHOD_LINES.get(method or "", None)
        for key, style in (("transition_s", "transition"), ("laminar_separation_s", "short")):
            v, s = _series(sweep, side, key, method)
            _sweep_line(ax, v, s, _EVENTS[style], _SWEEP_LABELS[style] + suffix, line)
        v, turbulent, laminar = _regime_split(sweep, side, method)
        _sweep_line(ax, v, turbulent, _EVENTS["turbulent"], "turbulent separation" + suffix, line)
        _sweep_line(
            ax, v, laminar, _EVENTS["laminar"], "laminar separation (layer ends)" + suffix, line
        )
    v, plateau = _series(sweep, side, "pressure_plateau_s", methods[0])
    _sweep_line(ax, v, plateau, _EVENTS["plateau"], "pressure plateau onset (in the data)")
    if VARIABLES[sweep.variable].log:
        ax.set_xscale("log")
    _swept_limits(ax, [point.value for point in sweep.points], VARIABLES[sweep.variable].log)
    ax.set_xlabel(sweep.label)
    ax.set_title(f"{side} side" if side != "surface" else "surface")
    ax.grid(True, which="both", lw=0.3, alpha=0.5)


def _swept_limits(ax: Axes, swept: list[float], log: bool) -> None:
    """Horizontal limits covering every swept value, also those where nothing occurs."""
    low, high = min(swept), max(swept)
    if high <= low:
        return
    if log:
        pad = (high / low) ** 0.03
        ax.set_xlim(low / pad, high * pad)
    else:
        pad = 0.03 * (high - low)
        ax.set_xlim(low - pad, high + pad)


def _sweep_line(
    ax: Axes, values: Array, s: Array, style: _Style, label: str, line: str | None = None
) -> None:
    if not np.isfinite(s).any():
        return
    ax.plot(
        values,
        s,
        color=style.colour,
        linestyle=line or style.linestyle,
        lw=1.0,
        marker=style.marker,
        markersize=style.size * 0.7,
        markerfacecolor=style.colour if style.filled else "none",
        label=label,
    )


def render_sweep(sweep: Sweep, fmt: Format = "png", *, units: str | None = None) -> bytes:
    """Transition and separation positions against the swept variable, one panel per side."""
    _check_format(fmt)
    return to_bytes(build_sweep(sweep, units=units), fmt)


def build_sweep(sweep: Sweep, *, units: str | None = None) -> Figure:
    """The matplotlib ``Figure`` that ``render_sweep`` encodes; ``units`` defaults to the
    sweep's ``length_unit``."""
    units = units or sweep.length_unit
    sides = list(dict.fromkeys(p.side for point in sweep.points for p in point.sides))
    width = 6.2 * max(1, len(sides)) + 1.6 / max(1, len(sides))
    fig = new_figure(width, 6.0)
    ncols = max(1, len(sides))
    grid = fig.add_gridspec(2, ncols, height_ratios=[0.9 if sweep.methods else 0.35, 4.6])
    axes: list[Axes] = []
    for col in range(ncols):
        axes.append(fig.add_subplot(grid[1, col], sharey=axes[0] if axes else None))
    for ax, side in zip(axes, sides, strict=False):
        _sweep_panel(ax, sweep, side)
    axes[0].set_ylabel(f"s [{units}] (from the stagnation point or leading edge)")
    handles, labels = [], []
    for ax in axes:
        for handle, label in zip(*ax.get_legend_handles_labels(), strict=True):
            if label not in labels:
                handles.append(handle)
                labels.append(label)
    legend = fig.add_subplot(grid[0, :])
    legend.axis("off")
    if handles:
        ncols_legend = 2 if sweep.methods else 4
        legend.legend(
            handles, labels, loc="center", ncols=ncols_legend, fontsize=8.5, frameon=False
        )
    failed = sum(1 for point in sweep.points if point.error is not None)
    note = f"{failed} swept case(s) could not be analysed (see the table)." if failed else ""
    info = VARIABLES.get(sweep.variable)
    quantity = info.name if info is not None and info.name else sweep.variable
    title = (
        f"{sweep.name or '(unnamed case)'}: sweep of the {quantity} "
        f"(turbulent: {sweep.turbulent_method})"
    )
    if sweep.methods:
        names = " and ".join(LAMINAR_NAMES.get(m, m) for m in sweep.methods)
        title += f", laminar layer by {names}"
    chars = int(width * 72.0 / (0.6 * 11.0))
    fig.suptitle("\n".join(textwrap.wrap(title, chars)), fontsize=11)
    add_footer(fig, caution_footer(note))
    return fig


# -------------------------------------------------------------------------- validation


def _check_label(check: Check) -> str:
    case = check.case.split(",")[0].removesuffix(" [finite difference]")
    quantity = check.quantity.split(" (")[0]
    method = " [FD]" if check.method == "finite_difference" else ""
    # The turbulent method, where the case names it after its first comma.
    for name, short in (("lag-entrainment", " [lag]"), ("Head's method", " [Head]")):
        if check.case.endswith(name):
            method += short
    return f"{case}{method}: {quantity} vs {check.against}"


def _deviation_panel(ax: Axes, checks: Sequence[Check]) -> None:
    """Each comparison's deviation as a fraction of its tolerance (within: |bar| <= 1)."""
    ratios = []
    for c in checks:
        deviation = (
            c.computed / c.reference - 1.0
            if c.tolerance_kind == "rel"
            else c.computed - c.reference
        )
        ratios.append(deviation / c.tolerance)
    rows = np.arange(len(checks))[::-1]
    colours = [
        "#2ca02c" if c.within else KNOWN_MISS_COLOUR if c.known_miss else TURBULENT_COLOUR
        for c in checks
    ]
    ax.barh(rows, ratios, color=colours, height=0.7)
    ax.axvline(-1.0, color="grey", lw=0.9, linestyle="--")
    ax.axvline(1.0, color="grey", lw=0.9, linestyle="--")
    ax.axvline(0.0, color="black", lw=0.6)
    solvers = sum(1 for c in checks if c.group == "reference solver")
    if 0 < solvers < len(checks):
        ax.axhline(len(checks) - solvers - 0.5, color="black", lw=0.8)
    ax.set_yticks(rows, [_check_label(c) for c in checks], fontsize=7.5)
    ax.set_ylim(-0.7, len(checks) - 0.3)
    reach = max([1.3, *(min(abs(r), 4.0) * 1.05 for r in ratios if math.isfinite(r))])
    ax.set_xlim(-reach, reach)
    ax.set_xlabel(
        "(computed - reference) / tolerance  [within tolerance: -1 to 1; grey: a known miss "
        "of the method, see its reason]"
    )
    ax.set_title("every comparison of the report", fontsize=10)
    ax.grid(True, axis="x", lw=0.3, alpha=0.5)


_FAMILY = {
    "theta": r"$\theta/x\,\sqrt{Re_x}$ [-]",
    "shape_factor": "$H$ [-]",
    "cf": r"$C_f\,\sqrt{Re_x}$ [-]",
}


def _family_panels(axes: Sequence[Axes], family: Mapping[str, Array]) -> None:
    for ax, (key, label) in zip(axes, _FAMILY.items(), strict=True):
        ax.plot(family["beta_exact"], family[key + "_exact"], color="black", lw=1.4,
                label="exact (Falkner & Skan 1931, solve_bvp)")  # fmt: skip
        low = family[key] - family[key + "_low"]
        high = family[key + "_high"] - family[key]
        ax.errorbar(family["beta"], family[key], yerr=np.vstack([low, high]), fmt="o",
                    color=LAMINAR_COLOUR, markersize=5, capsize=3,
                    label="ibl (Thwaites; median and range, s in [0.25, 1])")  # fmt: skip
        ax.set_ylabel(label)
        ax.grid(True, lw=0.3, alpha=0.5)
    axes[0].set_title("Falkner-Skan wedge flows Ue = C x^m", fontsize=10)
    axes[0].legend(fontsize=7.5, frameon=False)
    axes[-1].set_xlabel(r"$\beta = 2m/(m+1)$")


def render_validation(
    checks: Sequence[Check], family: Mapping[str, Array], fmt: Format = "png"
) -> bytes:
    """The validation report as a figure: deviations against tolerances, and the Falkner-Skan
    family (``ibl.validation.falkner_skan_family``)."""
    _check_format(fmt)
    return to_bytes(build_validation(checks, family), fmt)


def build_validation(checks: Sequence[Check], family: Mapping[str, Array]) -> Figure:
    """The matplotlib ``Figure`` that ``render_validation`` encodes."""
    height = max(7.0, 0.2 * len(checks) + 1.8)
    fig = new_figure(15.0, height)
    grid = fig.add_gridspec(3, 2, width_ratios=[1.5, 1.0])
    _deviation_panel(fig.add_subplot(grid[:, 0]), checks)
    family_axes = [fig.add_subplot(grid[row, 1]) for row in range(3)]
    for ax in family_axes[:2]:
        ax.sharex(family_axes[2])
        ax.tick_params(labelbottom=False)
    _family_panels(family_axes, family)
    passed = sum(1 for c in checks if c.within)
    known = sum(1 for c in checks if not c.within and c.known_miss)
    fig.suptitle(
        f"ibl validation: {passed} of {len(checks)} comparisons within tolerance, "
        f"{known} known misses of the methods (grey)"
    )
    add_footer(fig, caution_footer("Sources and tolerances: `ibl validate`."))
    return fig
