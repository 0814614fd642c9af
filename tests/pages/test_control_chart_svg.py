"""Control charts: readable text at phone width, a physical lower limit, points that link."""

from __future__ import annotations

import re
from datetime import date

import numpy as np
import pytest

from bench import plots
from qc.analysis.control_charts import individuals_chart
from qc.selectors.raman import CHART_FLOORS, ControlChartSeries

# A 390 px phone less the page's side padding (1.2rem each) and the figure's (.5rem and a
# 1 px border each), base.html.
PHONE_FIGURE_PX = 390 - 2 * 19.2 - 2 * 8 - 2
RSD_VALUES = [9.5, 35.0, 20.0]  # the three fixture maps' RSDs (fixtures/raman/generate.py)


def _series(values, metric="rsd_percent", codes=("QCM-00001", "QCM-00002", "QCM-00003")):
    return ControlChartSeries(
        product_kind="film", metric=metric, label="RSD %", codes=tuple(codes),
        measured_on=(date(2026, 1, 1),) * len(values), substrate_codes=("SUB-1",) * len(values),
        chart=individuals_chart(values), physical_floor=CHART_FLOORS.get(metric))


def test_an_rsd_lower_limit_below_zero_is_drawn_at_zero_and_says_so():
    series = _series(RSD_VALUES)
    # Individuals chart, Montgomery (2012) §6.4: LCL = x̄ − 2.66·MR̄ (2.66 = 3/d2, d2 = 1.128).
    mean, mr_bar = np.mean(RSD_VALUES), np.mean(np.abs(np.diff(RSD_VALUES)))
    assert series.chart.lower_limit == pytest.approx(mean - 3 / 1.128 * mr_bar, rel=1e-9)
    assert series.chart.lower_limit < 0
    assert series.lower_limit_shown == 0.0
    assert "cannot be negative" in series.lower_limit_note
    svg = plots.linked_svg(plots.control_chart_figure(series)).decode()
    assert "LCL 0" in svg and "cannot be negative" in svg


def test_log10_ef_keeps_its_computed_lower_limit():
    series = _series([6.1, 5.2, 6.8], metric="log10_enhancement_factor")
    assert series.lower_limit_shown == series.chart.lower_limit and not series.lower_limit_note


def test_text_is_at_least_11_px_at_phone_width_and_points_link_to_records():
    series = _series(RSD_VALUES)
    urls = [f"/r/{code}/" for code in series.codes]
    svg = plots.linked_svg(plots.control_chart_figure(series, point_urls=urls)).decode()
    view_box_width = float(re.search(r'viewBox="0 0 ([\d.]+) ', svg).group(1))
    width_px = float(re.search(r'<svg[^>]* width="([\d.]+)pt"', svg).group(1)) * 96 / 72
    sizes = [float(size) for size in re.findall(r"font-size: ([\d.]+)px", svg)]
    assert sizes, "text must be SVG text, not paths"
    shown_width = min(width_px, PHONE_FIGURE_PX)
    assert min(sizes) * shown_width / view_box_width >= 11.0
    assert re.findall(r'<a xlink:href="([^"]+)" target="_top">', svg) == urls

