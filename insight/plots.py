"""Insight figures: an outcome against a setting (every point a link to its substrate) and
groups of a categorical setting with their intervals.

Drawn in the project's palette (the colour tokens of bench/templates/base.html; insight sits
beside bench, so it keeps its own two small helpers rather than import bench's).  The page
shows PNG with an HTML image map (``png_with_links``): a click on a point opens that
substrate.
"""

from __future__ import annotations

from collections.abc import Sequence

import matplotlib

matplotlib.use("Agg")

import numpy as np  # noqa: E402
from matplotlib.figure import Figure  # noqa: E402

from .analysis.groups import GroupSummary  # noqa: E402
from .analysis.trend import Trend  # noqa: E402
from .analysis.window import OperatingWindow  # noqa: E402

__all__ = ["groups_figure", "message_figure", "png_with_links", "setting_figure"]

SCATTER_MARGINS = {"left": 0.09, "right": 0.98, "bottom": 0.13, "top": 0.83}
INK, TEAL, AMBER, RED, GREEN, GRID = (
    "#1b2a2f", "#0b5d66", "#b0510f", "#a11d2b", "#236b3c", "#d9d4c7")


def _figure(width_in: float, height_in: float, margins: dict | None = None):
    """One axes with the house grid and open top and right sides (Agg, no pyplot state).

    ``margins`` (``subplots_adjust`` fractions) fix the layout; without them matplotlib's
    constrained layout places the axes, at the cost of drawing the figure twice.
    """
    figure = Figure(figsize=(width_in, height_in),
                    layout=None if margins else "constrained")
    ax = figure.subplots()
    if margins:
        figure.subplots_adjust(**margins)
    ax.grid(True, color=GRID, linewidth=0.6)
    ax.set_axisbelow(True)
    ax.spines[["top", "right"]].set_visible(False)
    return figure, (ax,)


def message_figure(text: str) -> Figure:
    """A small figure that says why there is no plot."""
    figure = Figure(figsize=(6.0, 1.2))
    figure.text(0.5, 0.5, text, ha="center", va="center", color=INK, wrap=True)
    return figure


def setting_figure(x, y, passed, *, xlabel: str, ylabel: str,
                   trend: Trend | None, limit: float | None = None,
                   window: OperatingWindow | None = None, title: str = ""):
    """Scatter of ``y`` against ``x`` (passed green circles, failed red crosses, untested grey),
    the LOWESS trend with its band, the lab's limit and the operating window.

    Returns the figure and its axes (for :func:`png_with_links`, which maps each point to its
    link)."""
    # Fixed margins, the legend above the axes: with thousands of points, constrained layout
    # (a second draw) and a legend placed "best" (tested against every point) cost more
    # than the scatter itself.  Markers are a line's (Agg stamps one marker image per point),
    # not a scatter collection's (a path per point): a third of the drawing time.
    figure, (ax,) = _figure(7.0, 3.7, SCATTER_MARGINS)
    x = np.asarray(x, dtype=float)
    y = np.asarray(y, dtype=float)
    verdict = np.asarray([np.nan if p is None else float(p) for p in passed], dtype=float)
    if window is not None:
        ax.axvspan(window.low, window.high, color=GREEN, alpha=0.12, linewidth=0,
                   label=f"operating window (pass ≥ {window.target:.0%})")
    groups = ((verdict == 1, "o", GREEN, "passed"), (verdict == 0, "x", RED, "failed"),
              (np.isnan(verdict), ".", INK, "not judged"))
    for chosen, marker, colour, name in groups:
        chosen = chosen & np.isfinite(x) & np.isfinite(y)
        if chosen.any():
            ax.plot(x[chosen], y[chosen], linestyle="none", marker=marker, markersize=4,
                    color=colour, markeredgewidth=1.0,
                    label=f"{name} ({int(chosen.sum())})", zorder=3)
    if trend is not None:
        ax.fill_between(trend.grid, trend.low, trend.high, color=TEAL, alpha=0.18, linewidth=0,
                        label="95 % band")
        ax.plot(trend.grid, trend.fit, color=TEAL, linewidth=1.8, label="trend (LOWESS)")
    if limit is not None:
        ax.axhline(limit, color=AMBER, linestyle="--", linewidth=1.2, label=f"limit {limit:g}")
    ax.set_xlabel(xlabel)
    ax.set_ylabel(ylabel)
    if title:
        ax.set_title(title, loc="left", fontsize=11)
    ax.legend(frameon=False, fontsize=7, ncol=4, loc="lower left", bbox_to_anchor=(0, 1.0),
              borderaxespad=0.2)
    return figure, ax


def groups_figure(groups: Sequence[GroupSummary], *, ylabel: str, title: str = "",
                  limit: float | None = None) -> Figure:
    """Mean outcome of each group with its 95 % interval; groups too small are listed, not drawn."""
    shown = [g for g in groups if g.mean is not None]
    if not shown:
        return message_figure("not enough data: no group has 10 or more substrates")
    height_in = 0.9 + 0.32 * len(shown)  # fixed margins in inches: one draw, not two
    figure, (ax,) = _figure(7.0, height_in, {"left": 0.28, "right": 0.97,
                                             "bottom": 0.55 / height_in,
                                             "top": 1 - 0.35 / height_in})
    positions = np.arange(len(shown))
    means = np.array([g.mean for g in shown])
    errors = np.array([[g.mean - g.ci_low for g in shown], [g.ci_high - g.mean for g in shown]])
    ax.errorbar(means, positions, xerr=errors, fmt="o", color=TEAL, ecolor=INK, capsize=3)
    ax.set_yticks(positions, [f"{g.label} (n = {g.n})" for g in shown], fontsize=8)
    ax.invert_yaxis()
    if limit is not None:
        ax.axvline(limit, color=AMBER, linestyle="--", linewidth=1.2, label=f"limit {limit:g}")
        ax.legend(frameon=False, fontsize=7)
    ax.set_xlabel(ylabel + " (mean, 95 % CI)")
    if title:
        ax.set_title(title, loc="left", fontsize=11)
    return figure


PAGE_DPI = 110  # the dpi qc.plots.figure_bytes saves at; the image map is in these pixels
POINT_RADIUS_PX = 5


def png_with_links(figure: Figure, ax=None, x=(), y=()) -> tuple[bytes, np.ndarray]:
    """The figure as PNG and the pixel position of each point ``(x[i], y[i])`` (data units).

    Returns the PNG and an ``(n, 2)`` integer array of image-map pixels (from the top left);
    a row of -1 marks a point not drawn (a value missing).  The figure is saved at the page
    dpi with no cropping, so the pixels are those of the saved image.
    """
    import io

    figure.set_dpi(PAGE_DPI)
    buffer = io.BytesIO()
    figure.savefig(buffer, format="png", dpi=PAGE_DPI)  # draws once; transforms are final
    points = np.column_stack([np.asarray(x, dtype=float), np.asarray(y, dtype=float)])
    pixels = np.full((len(points), 2), -1, dtype=int)
    if ax is not None and len(points):
        xy = ax.transData.transform(points)
        shown = np.isfinite(xy).all(axis=1)
        pixels[shown, 0] = np.rint(xy[shown, 0])
        pixels[shown, 1] = np.rint(figure.bbox.height - xy[shown, 1])
    return buffer.getvalue(), pixels
