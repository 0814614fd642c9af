"""Plots render valid SVG and PNG from analysis results; the heat-map has the map's grid."""

from __future__ import annotations

from xml.etree import ElementTree

import numpy as np
import pytest
from django.urls import reverse

from bench import plots
from qc.analysis import control_charts, qc_pipeline
from qc.analysis.readers import read_map
from qc.selectors.raman import ControlChartSeries

from .conftest import MAP_SETTINGS, fixture_bytes

PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"  # PNG specification (ISO/IEC 15948), file signature


def _is_svg(content: bytes) -> bool:
    root = ElementTree.fromstring(content)
    return root.tag == "{http://www.w3.org/2000/svg}svg"


def test_heatmap_grid_has_the_dimensions_of_the_analysed_map():
    raman_map = read_map(fixture_bytes("raman", "good_substrate_map.csv"))
    result = qc_pipeline.analyse_qc_map(raman_map.shift_cm1, raman_map.intensity,
                                        band_center_cm1=1073.0, band_window_cm1=40.0,
                                        grid_shape=raman_map.grid_shape,
                                        power_mW=MAP_SETTINGS["power_mW"],
                                        integration_s=MAP_SETTINGS["integration_s"])
    xs, ys = raman_map.grid_axes()
    image = raman_map.image(result.height_per_point)
    figure = plots.rsd_heatmap_figure(image.tolist(), x_um=xs, y_um=ys,
                                      rsd_percent=result.rsd_percent, title="map")
    shown = figure.axes[0].images[0].get_array()
    assert shown.shape == result.uniformity.heat_map.shape == raman_map.grid_shape
    np.testing.assert_allclose(np.asarray(shown), result.uniformity.heat_map)
    assert _is_svg(plots.figure_bytes(figure, "svg"))
    assert plots.figure_bytes(figure, "png").startswith(PNG_SIGNATURE)


def test_control_chart_marks_the_points_the_run_rules_flag():
    values = [5.0, 5.1, 4.9, 5.0, 5.05, 4.95, 5.0, 6.5]  # last point far outside 3 sigma
    chart = control_charts.individuals_chart(values)
    series = ControlChartSeries(
        product_kind="particles", metric="log10_enhancement_factor", label="log10 EF",
        codes=tuple(f"QC-{n:05d}" for n in range(len(values))), measured_on=(),
        substrate_codes=(), chart=chart)
    figure = plots.control_chart_figure(series)
    ringed = figure.axes[0].collections[-1].get_offsets()  # drawn last, over the points
    flagged = sorted({v.index for v in chart.violations})
    assert flagged and [int(x) - 1 for x, _ in ringed] == flagged
    assert _is_svg(plots.figure_bytes(figure))


def test_lineage_layers_put_inputs_left_and_cap_wide_layers():
    ancestors = {"RGT-00001": 1, "SPH-00001": 2}
    descendants = {f"DS-{n:05d}": 1 for n in range(plots.MAX_NODES_PER_LAYER + 5)}
    layers = plots.lineage_layers("SUB-00001", ancestors, descendants)
    assert [layer.depth for layer in layers] == [-2, -1, 0, 1]
    assert layers[2].codes == ("SUB-00001",)
    assert len(layers[3].codes) == plots.MAX_NODES_PER_LAYER and layers[3].hidden == 5
    figure = plots.lineage_figure(layers, [("RGT-00001", "SUB-00001")], root_code="SUB-00001")
    assert _is_svg(plots.figure_bytes(figure))


def test_unknown_format_is_refused():
    with pytest.raises(ValueError, match="format"):
        plots.figure_bytes(plots.message_figure("x"), "gif")


def test_plot_views_serve_svg_and_png(lab, login):
    client = login(lab, "viewer")
    urls = [
        reverse("plot_raman", args=[lab.qc_good.code]),
        reverse("plot_raman", args=[lab.reference.code]),
        reverse("plot_heatmap", args=[lab.qc_failed.code]),
        reverse("plot_uvvis", args=[lab.batch.code]),
        reverse("plot_chronoamperogram", args=[lab.run.code]),
        reverse("plot_control_chart", args=["particles", "log10_enhancement_factor"]),
        reverse("plot_control_chart", args=["film", "rsd_percent"]),
        reverse("trace_graph", args=[lab.good.code]),
    ]
    for url in urls:
        svg = client.get(url)
        assert svg.status_code == 200 and svg["Content-Type"] == "image/svg+xml", url
        assert _is_svg(svg.content), url
    png = client.get(urls[2], {"format": "png"})
    assert png["Content-Type"] == "image/png" and png.content.startswith(PNG_SIGNATURE)


def test_heatmap_view_draws_the_stored_grid(lab, login, monkeypatch):
    """The served heat-map has one cell per map point, as map_nx × map_ny stored at import."""
    client = login(lab, "viewer")
    captured = {}
    original = plots.rsd_heatmap_figure

    def spy(rows, **kwargs):
        figure = original(rows, **kwargs)
        captured["shape"] = figure.axes[0].images[0].get_array().shape
        return figure

    monkeypatch.setattr(plots, "rsd_heatmap_figure", spy)
    assert client.get(reverse("plot_heatmap", args=[lab.qc_good.code])).status_code == 200
    raman_map = read_map(fixture_bytes("raman", "good_substrate_map.csv"))
    assert captured["shape"] == (lab.qc_good.map_ny, lab.qc_good.map_nx) == raman_map.grid_shape


def test_raman_plot_redraws_the_band_the_import_stored(lab):
    """Re-running the pipeline on the stored file gives the band position stored at import."""
    from bench.views.review import _raman_rerun

    _shift, _intensity, band, what = _raman_rerun(lab.qc_good)
    assert what == "mean of map"
    assert band.position_cm1 == lab.qc_good.band_position_cm1
