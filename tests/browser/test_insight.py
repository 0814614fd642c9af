"""The insight page in a real browser: the verdict, plots that render, and a point that opens
its substrate when clicked (on the planted demo of insight/demo.py)."""

from __future__ import annotations

import re

import pytest

from tests.insight.test_demo_recovery import demo  # noqa: F401  (the planted demo fixture)

pytestmark = pytest.mark.browser


def test_insight_plots_render_and_a_point_opens_its_substrate(page, sign_in, screenshot,
                                                              demo, viewer):  # noqa: F811
    sign_in(viewer, "viewer")
    page.goto("/insight/", timeout=120_000)
    verdict = page.locator("#insight-verdict")
    assert "passed QC first time" in verdict.inner_text()
    plot = page.locator("figure.insight-plot img").first
    plot.wait_for()
    # Rendered: the browser decoded the image to its full size.
    assert plot.evaluate("img => img.complete && img.naturalWidth") > 300
    assert page.locator("figure.insight-plot").count() >= 2
    screenshot("insight-page")
    area = page.locator("figure.insight-plot map area").first
    href = area.get_attribute("href")
    x, y, _ = (int(v) for v in area.get_attribute("coords").split(","))
    plot.scroll_into_view_if_needed()
    box = plot.bounding_box()
    page.mouse.click(box["x"] + x, box["y"] + y)  # the point as a person clicks it
    page.wait_for_url(re.compile(re.escape(href) + "$"))
    code = href.strip("/").split("/")[-1]
    assert code in page.locator("h1").inner_text()
    screenshot("insight-point-substrate")
