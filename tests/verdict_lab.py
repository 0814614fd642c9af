"""Records for the verdict-first page tests (pages and browser), built through the services.

Deposition: the invented chronoamperograms of fixtures/chronoamperograms, made (README there)
for h/D = 0.50 and 0.30 through 600 nm spheres on 1.00 cm², run here with a planned h/D of
0.50.  Colloids: the invented UV-vis files of fixtures/uvvis (README there): a 20 nm gold
batch and a 40 nm silver one.
"""

from __future__ import annotations

import html
import re
from pathlib import Path

FIXTURES = Path(__file__).resolve().parents[1] / "fixtures"


def run_600nm(chain, filename: str, *, target: float = 0.50, pieces: int = 1):
    """A run through 600 nm spheres planned for h/D ``target``, with ``filename`` attached."""
    run, _pieces = chain.measured_run(filename=filename, target=target, pieces=pieces)
    return run


def colloid_limits(administrator, metal: str, *, peak_min_nm: float, peak_max_nm: float):
    from qc.services import colloid_limit_set_set

    # Wide width, stability and aggregation limits: only the peak window is under test.
    return colloid_limit_set_set(actor=administrator, metal=metal, peak_min_nm=peak_min_nm,
                                 peak_max_nm=peak_max_nm, fwhm_max_nm=300.0,
                                 peak_shift_max_nm=50.0, absorbance_loss_max_fraction=0.9,
                                 aggregation_index_max=50.0, rationale="test limits")


def uvvis(chain, batch, filename: str, *, dilution: float, days_ago: int = 1):
    from qc.services import uvvis_record_import

    return uvvis_record_import(actor=chain.maker, batch=batch, filename=filename,
                               content=(FIXTURES / "uvvis" / filename).read_bytes(),
                               measured_on=chain.day(days_ago), dilution_factor=dilution).record


def gold_batch(chain):
    batch = chain.s.nanoparticle_batch_make(actor=chain.maker, metal="Au",
                                            synthesis_method="citrate", volume_mL=50,
                                            made_on=chain.day(3))
    return chain.release(batch)


def text_after_heading(page: str) -> str:
    """The visible text of <main> after its <h1>, tags stripped, spaces collapsed."""
    main = page[page.index("<main"):page.index("</main>")]
    after = main.split("</h1>", 1)[1]
    text = re.sub(r"<script.*?</script>|<style.*?</style>", "", after, flags=re.S)
    return " ".join(html.unescape(re.sub(r"<[^>]+>", " ", text)).split())


def verdict_sentence(page: str) -> str:
    return html.unescape(re.search(r'id="verdict-sentence">([^<]*)<', page).group(1))
