"""Figures for the pages: spectra, QC heat-maps, colloid series, chronoamperograms, charts.

Each ``*_figure`` function draws numbers that ``qc.analysis`` computed (or that were stored
from it) and returns a matplotlib ``Figure``; :func:`figure_bytes` turns it into SVG or PNG.
Nothing here judges, fits or filters: a plot shows results, it does not make them.  The Agg
backend is used through ``matplotlib.figure.Figure`` directly (no pyplot global state), so
figures are safe to draw from several request threads at once.
"""

from __future__ import annotations

import io
from collections.abc import Sequence
from dataclasses import dataclass

import matplotlib

matplotlib.use("Agg")

import numpy as np
from matplotlib.figure import Figure
from matplotlib.ticker import MaxNLocator

# The project's own palette (same tokens as bench/templates/base.html).
INK = "#1b2a2f"
TEAL = "#0b5d66"
AMBER = "#b0510f"
RED = "#a11d2b"
GREEN = "#236b3c"
GRID = "#d9d4c7"
SERIES = ("#0b5d66", "#b0510f", "#5a3e85", "#236b3c", "#7a6a12", "#a11d2b")

FORMATS = {"svg": "image/svg+xml", "png": "image/png"}
MAX_NODES_PER_LAYER = 24  # a recall graph can fan out to thousands; the page lists them all


def _figure(width_in: float = 7.0, height_in: float = 3.6, rows: int = 1, **kwargs):
    figure = Figure(figsize=(width_in, height_in), layout="constrained")
    axes = figure.subplots(rows, 1, squeeze=False, **kwargs)[:, 0]
    for ax in axes:
        ax.grid(True, color=GRID, linewidth=0.6)
        ax.set_axisbelow(True)
        for side in ("top", "right"):
            ax.spines[side].set_visible(False)
    return figure, axes


def figure_bytes(figure: Figure, fmt: str = "svg") -> bytes:
    """The figure as SVG (default) or PNG bytes."""
    if fmt not in FORMATS:
        raise ValueError(f"format must be one of {sorted(FORMATS)}, not {fmt!r}")
    buffer = io.BytesIO()
    figure.savefig(buffer, format=fmt, dpi=110, metadata={"Date": None} if fmt == "svg" else None)
    return buffer.getvalue()


def message_figure(text: str) -> Figure:
    """A small figure that says why there is no plot (e.g. too few results for a chart)."""
    figure = Figure(figsize=(6.0, 1.2))
    figure.text(0.5, 0.5, text, ha="center", va="center", color=INK, wrap=True)
    return figure


# --------------------------------------------------------------------------------------
# Raman QC
# --------------------------------------------------------------------------------------


@dataclass(frozen=True)
class BandCurve:
    """The part of a band fit a plot draws (stored results carry no whole ``BandFit``)."""

    window_shift_cm1: object
    fitted_curve: object
    position_cm1: float
    fwhm_cm1: float


def raman_spectrum_figure(shift_cm1, intensity, band, *, title: str,
                          band_center_cm1: float | None = None,
                          spread: tuple | None = None) -> Figure:
    """A processed spectrum (counts/(mW·s)) with the fitted reference band on top.

    ``band`` is a ``qc.analysis.bands.BandFit`` or a ``BandCurve`` (window axis and fitted
    curve); ``spread`` an optional (label, lower, upper) band drawn behind a map's mean.
    """
    figure, (ax,) = _figure()
    if spread is not None:
        label, lower, upper = spread
        ax.fill_between(shift_cm1, lower, upper, color=TEAL, alpha=0.18, linewidth=0,
                        label=label)
    ax.plot(shift_cm1, intensity, color=INK, linewidth=0.9, label="processed spectrum")
    ax.plot(band.window_shift_cm1, band.fitted_curve, color=AMBER, linewidth=2.0,
            label=f"fitted band {band.position_cm1:.1f} cm⁻¹, FWHM {band.fwhm_cm1:.1f} cm⁻¹")
    if band_center_cm1 is not None:
        ax.axvline(band_center_cm1, color=TEAL, linestyle="--", linewidth=1.0,
                   label=f"expected {band_center_cm1:g} cm⁻¹")
    ax.set_xlabel("Raman shift (cm⁻¹)")
    ax.set_ylabel("intensity (counts/(mW·s))")
    ax.set_title(title, loc="left", fontsize=11)
    ax.legend(frameon=False, fontsize=8)
    return figure


def rsd_heatmap_figure(rows, *, x_um: Sequence[float], y_um: Sequence[float],
                       rsd_percent: float | None, title: str) -> Figure:
    """Heat-map of the per-point band height over a QC map grid (rows = ascending y).

    ``rows`` is the stored image (``QcMeasurement.point_values["image"]["rows"]``), shape
    (map_ny, map_nx); cells are shown at their stage positions.
    """
    image = np.asarray(rows, dtype=float)
    figure, (ax,) = _figure(5.6, 4.4)
    ax.grid(False)
    extent = _extent(np.asarray(x_um, float), np.asarray(y_um, float))
    shown = ax.imshow(image, origin="lower", extent=extent, cmap="cividis",
                      interpolation="nearest", aspect="equal")
    bar = figure.colorbar(shown, ax=ax)
    bar.set_label("band height (counts/(mW·s))")
    ax.set_xlabel("x (µm)")
    ax.set_ylabel("y (µm)")
    rsd = f" — RSD {rsd_percent:.1f} %" if rsd_percent is not None else ""
    ax.set_title(f"{title}{rsd}", loc="left", fontsize=11)
    return figure


def _extent(xs: np.ndarray, ys: np.ndarray) -> tuple[float, float, float, float]:
    """Cell edges half a step beyond the first and last positions (1 µm for one column)."""
    def edges(axis):
        half = (axis[1] - axis[0]) / 2 if axis.size > 1 else 0.5
        return float(axis[0] - half), float(axis[-1] + half)
    return (*edges(xs), *edges(ys))


# --------------------------------------------------------------------------------------
# Colloids and deposition
# --------------------------------------------------------------------------------------


@dataclass(frozen=True)
class UvVisTrace:
    """One UV-vis record to draw: its label and ``qc.selectors.UvVisCurves``."""

    label: str
    curves: object


def uvvis_series_figure(traces: Sequence[UvVisTrace], *, title: str) -> Figure:
    """Measured absorbance (undiluted, 1 cm) of each record with its fitted Mie curve."""
    figure, (ax,) = _figure(7.0, 4.0)
    for index, trace in enumerate(traces):
        colour = SERIES[index % len(SERIES)]
        curves = trace.curves
        ax.plot(curves.wavelength_nm, curves.absorbance_1cm, color=colour, linewidth=1.2,
                label=f"{trace.label} measured")
        ax.plot(curves.model_wavelength_nm, curves.model_absorbance_1cm, color=colour,
                linewidth=1.0, linestyle="--", label=f"{trace.label} Mie fit")
    ax.set_xlabel("wavelength (nm)")
    ax.set_ylabel("absorbance (undiluted, 1 cm)")
    ax.set_title(title, loc="left", fontsize=11)
    ax.legend(frameon=False, fontsize=7, ncol=2)
    return figure


def chronoamperogram_figure(time_s, current_A, *, charge_C: float | None,
                            start_s: float | None, end_s: float | None,
                            title: str) -> Figure:
    """Current against time, with the integration window shaded and the stored charge."""
    time = np.asarray(time_s, dtype=float)
    current_mA = np.asarray(current_A, dtype=float) * 1e3
    figure, (ax,) = _figure()
    ax.plot(time, current_mA, color=INK, linewidth=1.0)
    low = time[0] if start_s is None else start_s
    high = time[-1] if end_s is None else end_s
    inside = (time >= low) & (time <= high)
    charge = f"integrated charge {charge_C * 1e3:.1f} mC" if charge_C is not None \
        else "charge not computed"
    ax.fill_between(time[inside], current_mA[inside], 0.0, color=TEAL, alpha=0.25,
                    label=f"{charge} ({low:g}–{high:g} s)")
    ax.axhline(0.0, color=GRID, linewidth=0.8)
    ax.set_xlabel("time (s)")
    ax.set_ylabel("current (mA)")
    ax.set_title(title, loc="left", fontsize=11)
    ax.legend(frameon=False, fontsize=8)
    return figure


# --------------------------------------------------------------------------------------
# Trends
# --------------------------------------------------------------------------------------


# Control charts are shown at up to their own width and shrink to fit a phone: 4.8 in is
# 461 CSS px; a 390 px phone leaves about 333 px inside the page and figure padding, where
# 12 pt text (16 px at full size) still shows at 11.6 px.
CHART_WIDTH_IN = 4.8
CHART_FONT_PT = 12


def control_chart_figure(series, *, point_urls: Sequence[str] = ()) -> Figure:
    """Individuals and moving-range chart of a ``qc.selectors.ControlChartSeries``.

    Points breaking a run rule (as ``qc.analysis.control_charts`` reported) are ringed red.
    ``point_urls`` (one per result, in order) make each point a link to its record in SVG.
    The limits are labelled on the chart itself (no legend to shrink); a lower limit the
    metric cannot reach is drawn at its floor and the x-axis label says so.
    """
    chart = series.chart
    if chart is None:
        return message_figure(f"{series.label}, {series.product_kind}: fewer than three QC "
                              "results so far.")
    figure, (ax, ax_mr) = _figure(CHART_WIDTH_IN, 4.4, rows=2, sharex=True,
                                  gridspec_kw={"height_ratios": [2, 1]})
    index = np.arange(1, chart.values.size + 1)
    ax.plot(index, chart.values, color=TEAL, linewidth=1.0)
    points = ax.scatter(index, chart.values, s=28, color=TEAL, zorder=3)
    if point_urls:
        points.set_urls(list(point_urls))
    lower = series.lower_limit_shown
    for value, name in ((chart.centre, "centre"), (chart.upper_limit, "UCL"), (lower, "LCL")):
        ax.axhline(value, color=INK if name == "centre" else AMBER,
                   linestyle="-" if name == "centre" else "--", linewidth=1.0)
        ax.annotate(f"{name} {value:.3g}", xy=(1.0, value), xycoords=("axes fraction", "data"),
                    xytext=(3, 0), textcoords="offset points", va="center",
                    fontsize=CHART_FONT_PT, color=INK)
    broken = sorted({v.index for v in chart.violations if v.index < chart.values.size})
    if broken:
        ax.scatter(index[broken], chart.values[broken], s=110, facecolors="none",
                   edgecolors=RED, linewidths=1.8, zorder=4)
    ax.set_ylabel(series.label, fontsize=CHART_FONT_PT)
    ringed = f"; {len(broken)} ringed: run rule" if broken else ""
    ax.set_title(f"{series.label}, {series.product_kind}: {chart.values.size} results{ringed}",
                 loc="left", fontsize=CHART_FONT_PT)
    ax_mr.plot(index[1:], chart.moving_ranges, marker="o", markersize=3, color=INK,
               linewidth=0.8)
    ax_mr.axhline(chart.mr_upper_limit, color=AMBER, linestyle="--", linewidth=1.0)
    ax_mr.set_ylabel("moving range", fontsize=CHART_FONT_PT)
    note = series.lower_limit_note
    ax_mr.set_xlabel("result number (in order measured)" + (f"\n{note}" if note else ""),
                     fontsize=CHART_FONT_PT)
    ax_mr.xaxis.set_major_locator(MaxNLocator(integer=True))
    for axes in (ax, ax_mr):
        axes.tick_params(labelsize=CHART_FONT_PT)
    return figure


def linked_svg(figure: Figure) -> bytes:
    """SVG with real text and links that open in the page, not a new tab (for ``<object>``).

    Text stays text (``svg.fonttype`` none), so its size is what the browser draws and a
    reader can select it; matplotlib marks links ``target="_blank"``, made ``_top`` here so a
    click on a point inside an embedded chart opens the record in the same tab.
    """
    with matplotlib.rc_context({"svg.fonttype": "none"}):
        body = figure_bytes(figure, "svg")
    return body.replace(b'target="_blank"', b'target="_top"')


# --------------------------------------------------------------------------------------
# Lineage
# --------------------------------------------------------------------------------------


@dataclass(frozen=True)
class GraphLayer:
    """Codes at one signed depth (negative: ancestors, positive: descendants)."""

    depth: int
    codes: tuple[str, ...]
    hidden: int  # codes left out of the picture (listed on the page instead)


def lineage_layers(root_code: str, ancestor_depth: dict[str, int],
                   descendant_depth: dict[str, int]) -> list[GraphLayer]:
    """Group codes by signed depth from the root, capped at ``MAX_NODES_PER_LAYER`` each."""
    by_depth: dict[int, list[str]] = {0: [root_code]}
    for code, depth in ancestor_depth.items():
        by_depth.setdefault(-depth, []).append(code)
    for code, depth in descendant_depth.items():
        by_depth.setdefault(depth, []).append(code)
    layers = []
    for depth in sorted(by_depth):
        codes = sorted(by_depth[depth])
        layers.append(GraphLayer(depth, tuple(codes[:MAX_NODES_PER_LAYER]),
                                 max(0, len(codes) - MAX_NODES_PER_LAYER)))
    return layers


def lineage_figure(layers: Sequence[GraphLayer],
                   edges: Sequence[tuple[str, str]], *, root_code: str) -> Figure:
    """The lineage drawn in columns by depth: inputs on the left, products on the right.

    ``edges`` are (parent_code, child_code) pairs; edges to codes left out of a capped layer
    are not drawn.
    """
    tallest = max(len(layer.codes) + (1 if layer.hidden else 0) for layer in layers)
    figure = Figure(figsize=(max(4.0, 2.0 * len(layers)), max(2.0, 0.42 * tallest + 0.8)),
                    layout="constrained")
    ax = figure.subplots()
    ax.set_axis_off()
    position: dict[str, tuple[float, float]] = {}
    for column, layer in enumerate(layers):
        count = len(layer.codes) + (1 if layer.hidden else 0)
        for row, code in enumerate(layer.codes):
            position[code] = (column, (count - 1) / 2 - row)
        if layer.hidden:
            ax.text(column, (count - 1) / 2 - len(layer.codes), f"+{layer.hidden} more",
                    ha="center", va="center", fontsize=8, color=INK, style="italic")
    for parent, child in edges:
        if parent in position and child in position:
            (x0, y0), (x1, y1) = position[parent], position[child]
            ax.annotate("", xy=(x1 - 0.32, y1), xytext=(x0 + 0.32, y0),
                        arrowprops={"arrowstyle": "->", "color": "#7d8a8e", "linewidth": 0.8})
    for code, (x, y) in position.items():
        is_root = code == root_code
        ax.text(x, y, code, ha="center", va="center", fontsize=8,
                color="#ffffff" if is_root else INK,
                bbox={"boxstyle": "round,pad=0.3", "linewidth": 0.8,
                      "facecolor": TEAL if is_root else "#ffffff", "edgecolor": TEAL})
    ax.set_xlim(-0.6, len(layers) - 0.4)
    ax.set_ylim(-(tallest / 2) - 0.2, tallest / 2 + 0.2)
    return figure

