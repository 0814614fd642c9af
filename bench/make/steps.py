"""The logged steps: which form, what the page says, and the caution it shows.

Cautions name the hazard and defer to the supplier's safety data sheet and local rules; they
are reminders at the bench, not a risk assessment.
"""

from __future__ import annotations

from dataclasses import dataclass

from . import forms

SDS = ("Follow the supplier's safety data sheet and your institution's local rules; they "
       "decide, not this page.")


@dataclass(frozen=True)
class Step:
    slug: str
    title: str
    intro: str
    form_class: type[forms.MakeForm]
    cautions: tuple[str, ...] = ()
    group: str = "Fabrication"

    @property
    def url_name(self) -> str:
        return f"make:{self.slug}"


STEPS: tuple[Step, ...] = (
    Step("storage", "Storage location", "A fridge, desiccator, cabinet, box or shelf.",
         forms.StorageLocationForm,
         (("Keep cyanide plating baths away from acids and oxidisers, and flammable solvents "
          "in a flammables cabinet."),), group="Arrivals"),
    Step("reagent", "Reagent lot received", "A purchased chemical or consumable lot, with "
         "the GHS hazard codes from its safety data sheet.", forms.ReagentLotForm,
         (("Copy every hazard code from the SDS: the codes print on the lot's page and "
          "label. Gold plating baths may contain cyanide (fatal if swallowed, in contact "
          "with skin or inhaled; contact with acids liberates very toxic gas)."),),
         group="Arrivals"),
    Step("spheres", "Sphere lot received", "Template spheres as supplied.",
         forms.SphereLotForm, group="Arrivals"),
    Step("template", "Template assembly", "A sphere monolayer laid on a base slide; the "
         "close-packed sphere density and suspension need are computed for you.",
         forms.TemplateAssemblyForm,
         (("Organic solvents used to spread or later dissolve templates (e.g. toluene, "
          "tetrahydrofuran) are flammable and harmful: use a fume hood, no ignition "
          "sources."),)),
    Step("deposition", "Deposition run", "One plating run and every piece cut from it, in "
         "one submission. With the chronoamperogram the charge, film height and h/D are "
         "computed at once.", forms.DepositionRunForm,
         (("Plating baths may contain cyanide. Never acidify a cyanide bath or let it meet "
          "acids: it releases hydrogen cyanide. Work in a fume hood with gloves and eye "
          "protection; collect rinses and spent bath as cyanide waste."),)),
    Step("linker", "Linker layer", "A thiol monolayer self-assembled on one or more pieces "
         "in one immersion.", forms.LinkerLayerForm,
         (("Thiols are toxic and malodorous, and their solvents (usually ethanol) are "
          "flammable: prepare and immerse in a fume hood, keep containers closed."),)),
    Step("colloid", "Nanoparticle batch", "A colloid batch; add its UV-vis spectrum to see "
         "particle size and concentration at once.", forms.NanoparticleBatchForm,
         (("Sodium borohydride releases hydrogen with water and acids (flammable gas): add it "
          "slowly, no ignition sources, never in a closed vessel. Silver nitrate and gold "
          "chloride are corrosive and oxidising; nanoparticle dispersions are to be kept "
          "off skin and out of drains."),)),
    Step("uvvis", "UV-vis of a colloid", "Another spectrum of an existing batch: size, "
         "concentration and change since its first record.", forms.UvVisRecordForm,
         group="Measurements"),
    Step("particles", "Particle attachment", "Particles of a colloid bound onto a substrate "
         "that carries a linker layer.", forms.ParticleAttachmentForm,
         (("Handle colloids with gloves; collect metal-containing waste as your local rules "
          "require."),)),
    Step("reference", "Reference measurement", "Non-enhanced Raman of the reference "
         "analyte at a known concentration, for enhancement factors.",
         forms.ReferenceMeasurementForm,
         (("Laser safety: Raman lasers are often class 3B or 4. Use the instrument's "
          "interlocks and enclosure, wear the eyewear rated for the wavelength when the beam "
          "path is open, and never look along the beam. Neat thiol analytes are toxic and "
          "malodorous: fume hood."),), group="Measurements"),
    Step("qc", "QC measurement", "A reference-analyte spectrum or map on a substrate: "
         "enhancement factor, uniformity (RSD), S/N and the verdict against the lab's limits.",
         forms.QcMeasurementForm,
         (("Laser safety: Raman lasers are often class 3B or 4. Use the instrument's "
          "interlocks and enclosure, wear the eyewear rated for the wavelength when the beam "
          "path is open, and never look along the beam."),), group="Measurements"),
    Step("dataset", "Dataset", "Data measured on one or more substrates; each file is kept "
         "with its SHA-256 digest.", forms.DatasetForm,
         (("A SERS screen is not a confirmatory test: where results concern people or food, "
          "local regulations, accredited methods and licensed practice decide."),),
         group="Measurements"),
)

STEP_BY_SLUG = {step.slug: step for step in STEPS}
GROUPS = ("Arrivals", "Fabrication", "Measurements")
