"""A big QC map in a real browser: the upload answers at once and the page shows its progress
(waiting, parsing, analysing, judging) until the judged result appears.

The map is invented here (a 40 × 40 grid of 1,024-point spectra, about 8 MB: over the 5 MB
default for analysis inside the request); a worker thread runs the task's body on each
queued import, as the worker ``serve_demo`` starts beside the server does.
"""

from __future__ import annotations

import re
import threading
import time

import numpy as np
import pytest
from django.db import connection

from qc.models import QcImport
from qc.services import background
from qc.tasks import analyse_qc_import
from tests.make.builders import QcLab

pytestmark = pytest.mark.browser


def _big_map(path, side: int = 40) -> None:
    """Flat background, the 1073 cm⁻¹ band of the analyte and Poisson noise, per point."""
    rng = np.random.default_rng(7)
    shift = np.linspace(400.0, 1800.0, 1024)
    band = 1.0 / (1.0 + ((shift - 1073.0) / 6.0) ** 2)  # Lorentzian, 12 cm⁻¹ FWHM
    heights = rng.normal(3000.0, 150.0, side * side)
    counts = rng.poisson(2000.0 + heights[:, None] * band[None, :])
    ys, xs = np.divmod(np.arange(side * side), side)
    with path.open("w") as handle:
        handle.write("x_um,y_um," + ",".join(f"{s:.2f}" for s in shift) + "\n")
        np.savetxt(handle, np.column_stack([xs * 2.0, ys * 2.0, counts + 0.5]), fmt="%.1f",
                   delimiter=",")


@pytest.fixture
def worker(monkeypatch):
    """A database-backend worker in a thread; each progress step lingers so a person (and
    the test) can see it."""
    report = background._report

    def slow_report(pending_id, worker_id, state):
        report(pending_id, worker_id, state)
        time.sleep(1.5)

    monkeypatch.setattr(background, "_report", slow_report)
    stop = threading.Event()

    def run():  # the task's body (db_worker itself wants the main thread for its signals)
        try:
            while not stop.is_set():
                for pending_id in QcImport.objects.filter(state=QcImport.State.QUEUED) \
                        .values_list("pk", flat=True):
                    analyse_qc_import.func(str(pending_id))
                time.sleep(0.3)
        finally:
            connection.close()

    thread = threading.Thread(target=run, daemon=True)
    yield thread
    stop.set()
    thread.join(timeout=60)


def test_the_upload_page_shows_progress_for_a_big_map(page, sign_in, screenshot, chain,
                                                      administrator, worker, tmp_path,
                                                      settings):
    assert settings.SERSLEDGER_INLINE_ANALYSIS_BYTES == 5 * 1024 * 1024
    lab = QcLab(chain, administrator)
    substrate = chain.decorated_substrate()
    big = tmp_path / "big_substrate_map.csv"
    _big_map(big)
    assert big.stat().st_size > settings.SERSLEDGER_INLINE_ANALYSIS_BYTES
    sign_in(chain.maker, "maker")
    page.goto("/make/qc/")
    page.get_by_label("Substrate measured").select_option(substrate.code)
    assert page.get_by_label("Reference-analyte lot").input_value() == lab.lot.code
    page.get_by_label(re.compile("^Raman file")).set_input_files(big)
    page.get_by_label("Laser wavelength (nm)").fill("785")
    page.get_by_label("Laser power at the sample (mW)").fill("2.0")
    page.get_by_label("Integration time per accumulation (s)").fill("1.0")
    # The test chain's run has no chronoamperogram: the factor is entered with its source.
    page.get_by_label(re.compile("^Metal surface area ÷ projected area")).fill("1.5")
    page.get_by_label(re.compile("^Where that factor comes from")).fill(
        "electrochemical surface area (invented for the test)")
    page.get_by_role("button", name=re.compile("^Save")).press("Enter")
    page.wait_for_url(re.compile(r"/qc/imports/[0-9a-f-]+/"))
    verdict = page.locator("#verdict")
    assert "Waiting for a worker" in verdict.inner_text()
    assert "not ready" in page.locator("main").inner_text()
    screenshot("qc-import-queued")
    worker.start()
    page.wait_for_function(
        "document.getElementById('verdict') && "
        "document.getElementById('verdict').dataset.state === 'analysing'", timeout=120_000)
    assert "Analysing the spectra" in verdict.inner_text()
    assert int(page.locator("#progress").get_attribute("value") or 0) >= 20 or \
        page.evaluate("document.getElementById('progress').value") >= 20
    screenshot("qc-import-analysing")
    page.wait_for_url(re.compile("/make/done/QCM-"), timeout=180_000)
    assert page.locator("#verdict").inner_text() in ("PASS", "FAIL")
    screenshot("qc-import-judged")
