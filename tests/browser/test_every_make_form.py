"""Every Make form, submitted in a real browser as a person does it: once with one field the
server refuses (the message appears beside that field and nothing is saved), then corrected
(the record is saved and its page or result opens).

The refused values pass the browser's own checks (they are typed into number and text boxes
that accept them) so the test reaches the server's rules, which are the ones that matter.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field

import pytest

from inventory.models import (
    Dataset,
    DepositionRun,
    LinkerLayer,
    NanoparticleBatch,
    ParticleAttachment,
    ReagentLot,
    SphereLot,
    StorageLocation,
    Substrate,
    TemplateAssembly,
)
from qc.models import QcMeasurement, ReferenceMeasurement, UvVisRecord
from tests.make.builders import FIXTURES, QcLab, template_600nm

pytestmark = pytest.mark.browser

# The Mie fit of a UV-vis file and a QC map run during the request; a busy two-core machine.
SLOW_MS = 120_000


@dataclass
class Bench:
    """Every input a Make form offers, released and usable today, built through services."""

    chain: object
    lab: QcLab
    template: object
    bath: object
    linker_lot: object
    solvent: object
    pieces: list
    linked: object
    batch: object
    slides: object
    spheres: object
    second_reference: object  # the neat reference measured again (a new file)


@pytest.fixture
def bench(chain, administrator, tmp_path):
    lab = QcLab(chain, administrator)
    neat = FIXTURES / "raman" / "reference_neat_benzenethiol.csv"
    second_reference = tmp_path / "reference_neat_benzenethiol_again.csv"
    second_reference.write_text("# measured again the next day\n" + neat.read_text())
    template = template_600nm(chain)
    _run, pieces = chain.run(pieces=2, days_ago=4)
    for piece in pieces:
        chain.release(piece)
    linked_run, (linked,) = chain.run(pieces=1, days_ago=6)
    chain.s.linker_layer_apply(actor=chain.maker, linker_lot=chain.lot("linker_thiol"),
                               substrates=[linked], concentration_mM=1, immersion_h=12,
                               made_on=chain.day(5))
    return Bench(chain=chain, lab=lab, template=template, bath=chain.lot("plating_bath"),
                 linker_lot=chain.lot("linker_thiol"), solvent=chain.lot("solvent"),
                 pieces=[Substrate.objects.get(pk=p.pk) for p in pieces],
                 linked=chain.release(Substrate.objects.get(pk=linked.pk)),
                 batch=chain.batch(days_ago=3), slides=chain.lot("base_slide"),
                 spheres=chain.spheres(), second_reference=second_reference)


@dataclass
class Case:
    slug: str
    model: type
    valid: callable  # bench -> {field name: value}; a pathlib.Path value is a file
    bad_field: str
    bad_value: str
    message: str  # part of the refusal shown beside bad_field
    done_url: str = "/r/"
    files_again: tuple[str, ...] = ()
    checks: tuple[str, ...] = field(default=())  # checkbox ids to tick (filled from bench)


def _storage(b):
    return {"name": "Desiccator 3", "kind": "desiccator", "room": "B12"}


def _reagent(b):
    return {"name": "Gold sulfite bath", "kind": "plating_bath", "supplier": "Own make",
            "ghs_hazard_codes": "H302 H317"}


def _spheres(b):
    return {"material": "polystyrene", "nominal_diameter_nm": "500", "solids_percent_w_v": "10"}


def _template(b):
    return {"sphere_lot": b.spheres.code, "base_slide_lot": b.slides.code,
            "method": "interface_transfer", "slide_area_cm2": "2.0"}


def _deposition(b):
    return {"template": b.template.code, "bath_lot": b.bath.code, "metal": "Au",
            "electrode_area_cm2": "1.00", "target_height_over_diameter": "0.5", "pieces": "2",
            "chronoamperogram": FIXTURES / "chronoamperograms" / "au_600nm_hd050.csv"}


def _linker(b):
    # One of the two released pieces only: the form must not demand every box.
    return {"linker_lot": b.linker_lot.code, "concentration_mM": "1.0", "immersion_h": "12",
            f"substrates:{b.pieces[0].code}": True}


def _colloid(b):
    return {"metal": "Au", "synthesis_method": "citrate", "volume_mL": "100"}


def _uvvis(b):
    return {"batch": b.batch.code, "dilution_factor": "2",
            "raw_file": FIXTURES / "uvvis" / "ag_stable_day00.csv"}  # the batch is silver


def _particles(b):
    return {"substrate": b.linked.code, "batch": b.batch.code, "immersion_min": "30"}


def _reference(b):
    return {"analyte_lot": b.lab.lot.code, "laser_nm": "785", "power_mW": "20",
            "integration_s": "10", "concentration_mol_L": "9.74", "effective_height_um": "12",
            "effective_area_um2": "1.5",
            "raw_file": b.second_reference}


def _qc(b):
    return {"substrate": b.linked.code, "analyte_lot": b.lab.lot.code,
            "reference": b.lab.reference.code, "laser_nm": "785", "power_mW": "2.0",
            "integration_s": "1.0", "surface_area_factor": "1.5",
            "surface_area_source": "ratio measured by the lab on a cross-section",
            "raw_file": FIXTURES / "raman" / "good_substrate_map.csv"}


def _dataset(b):
    return {"title": "Thiram dilution series", f"substrates:{b.pieces[1].code}": True,
            "instrument": "Raman microscope 2",
            "files": FIXTURES / "spectra" / "invented_polystyrene_785.csv"}


CASES = [
    Case("storage", StorageLocation, _storage, "name", "   ", "required"),
    Case("reagent", ReagentLot, _reagent, "ghs_hazard_codes", "H300 poison",
         "not a GHS hazard code"),
    Case("spheres", SphereLot, _spheres, "nominal_diameter_nm", "-500",
         "outside the allowed range"),
    Case("template", TemplateAssembly, _template, "slide_area_cm2", "-2", "positive number"),
    # The run's own range check comes before its file is analysed (deposition_run_check).
    Case("deposition", DepositionRun, _deposition, "electrode_area_cm2", "-1",
         "outside the allowed range", "/make/done/DEP-", ("chronoamperogram",)),
    Case("linker", LinkerLayer, _linker, "concentration_mM", "-1", "outside the allowed range"),
    Case("colloid", NanoparticleBatch, _colloid, "volume_mL", "-100", "outside the allowed range"),
    Case("uvvis", UvVisRecord, _uvvis, "dilution_factor", "-2", "outside the allowed range",
         "/make/done/UV-", ("raw_file",)),
    Case("particles", ParticleAttachment, _particles, "immersion_min", "-30",
         "outside the allowed range"),
    Case("reference", ReferenceMeasurement, _reference, "concentration_mol_L", "-9.74",
         "positive number", "/make/done/REF-", ("raw_file",)),
    Case("qc", QcMeasurement, _qc, "laser_nm", "-785", "positive number", "/make/done/QCM-",
         ("raw_file",)),
    Case("dataset", Dataset, _dataset, "title", "   ", "required", "/make/done/DS-",
         ("files",)),
]


def fill(page, values: dict) -> None:
    """Type, choose, tick and attach as a person would, field by field."""
    for name, value in values.items():
        if name.startswith("substrates:"):
            page.get_by_label(re.compile(re.escape(name.split(":", 1)[1]))).check()
            continue
        box = page.locator(f"#id_{name}")
        tag = box.evaluate("element => element.tagName.toLowerCase() + ':' + element.type")
        if hasattr(value, "read_bytes"):
            box.set_input_files(value)
        elif tag.startswith("select"):
            box.select_option(value)
        else:
            box.fill(value)


def save(page):
    page.get_by_role("button", name=re.compile("^Save")).click()


@pytest.mark.parametrize("case", CASES, ids=[case.slug for case in CASES])
def test_make_form_refuses_one_bad_field_then_saves(page, sign_in, bench, case):
    sign_in(bench.chain.maker, "maker")
    page.goto(f"/make/{case.slug}/")
    values = case.valid(bench)
    before = case.model.objects.count()
    # A box among several is never required by the browser: the server says if none is ticked.
    assert page.locator("input[type=checkbox][required]").count() == 0

    fill(page, {**values, case.bad_field: case.bad_value})
    save(page)
    error = page.locator(f"#field-{case.bad_field} .error")
    error.first.wait_for(timeout=SLOW_MS if case.files_again else 20_000)
    assert case.message.lower() in error.first.inner_text().lower()
    assert "Nothing was saved" in page.locator("#error-summary").inner_text()
    assert case.model.objects.count() == before

    # Files are not kept after a refusal (the page says so): attach them again.
    fill(page, {name: values[name] for name in case.files_again})
    fill(page, {case.bad_field: values[case.bad_field]})
    with page.expect_navigation(timeout=SLOW_MS):
        save(page)
    summary = page.locator("#error-summary")
    assert case.done_url in page.url, summary.inner_text() if summary.count() else page.url
    assert case.model.objects.count() == before + 1
