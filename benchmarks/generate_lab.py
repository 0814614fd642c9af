"""Fill a dedicated database with an invented, busy SERS lab, fast, with bulk inserts.

Run from the repository root::

    .venv/bin/python benchmarks/generate_lab.py --db sqlite --scale 0.01
    .venv/bin/python benchmarks/generate_lab.py --db postgres --scale 1

``--scale 1`` is about five years of a lab with several instruments: 100,000 substrates from
25,000 deposition runs, 20,000 colloid batches, 50,000 datasets, 200,000 Raman QC
measurements (when the qc models exist), ~10,000 reagent lots and ~500,000 lineage edges.
Every name, number and date is invented.  The database is dropped and rebuilt each time:
SQLite in ``benchmarks/out/lab.sqlite3`` (git-ignored) or the
PostgreSQL database ``sersledger_bench`` on 127.0.0.1.  It never touches the lab's own
database.

The longest chain, dataset to the purchased metal salt, is eight steps deep::

    DS <- SUB <- PAT <- NPB <- working <- dilution 2 <- dilution 1 <- stock <- purchased salt

Codes use the product's ``PREFIX-00001`` format and the ``CodeCounter`` rows are set to the
last number, so records created later through the services continue each sequence.  Expiry
dates come from the product's own shelf-life functions, and statuses follow age the way a
tidy lab's do: most records past their expiry are consumed or disposed, a few linger.
A summary (counts, seconds per table) is written to ``benchmarks/out/generate-<db>.json``.
"""

from __future__ import annotations

import argparse
import json
import os
import sys
import time
from datetime import UTC, date, datetime, timedelta
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
OUT_DIR = ROOT / "benchmarks" / "out"
SQLITE_PATH = OUT_DIR / "lab.sqlite3"
PG_SERVER = "postgres://postgres@127.0.0.1:5432"
PG_DATABASE = "sersledger_bench"
HISTORY_DAYS = 5 * 365
BATCH_SIZE = 5000
SEED = 20261202


def database_url(db: str) -> str:
    if db == "sqlite":
        return f"sqlite:///{SQLITE_PATH}"
    if db == "postgres":
        return f"{PG_SERVER}/{PG_DATABASE}"
    raise SystemExit(f"--db must be sqlite or postgres, not {db!r}")


def configure_django(db: str) -> None:
    """Point the test settings (fast hasher, DEBUG off) at the benchmark database."""
    sys.path.insert(0, str(ROOT))
    os.environ["DATABASE_URL"] = database_url(db)
    os.environ["DJANGO_SETTINGS_MODULE"] = "sersledger.settings.test"
    import django

    django.setup()


def recreate_database(db: str) -> None:
    OUT_DIR.mkdir(parents=True, exist_ok=True)
    if db == "sqlite":
        for suffix in ("", "-wal", "-shm", "-journal"):
            Path(f"{SQLITE_PATH}{suffix}").unlink(missing_ok=True)
        return
    import psycopg

    with psycopg.connect(f"{PG_SERVER}/postgres", autocommit=True) as conn:
        conn.execute(f"DROP DATABASE IF EXISTS {PG_DATABASE} WITH (FORCE)")
        conn.execute(f"CREATE DATABASE {PG_DATABASE}")


def build_schema() -> None:
    """Migrate, then create tables of models that have no migration yet (qc, in progress)."""
    from django.apps import apps
    from django.core.management import call_command
    from django.db import connection

    call_command("migrate", verbosity=0)
    existing = set(connection.introspection.table_names())
    with connection.schema_editor() as editor:
        for model in apps.get_app_config("qc").get_models():
            if model._meta.db_table not in existing and model._meta.managed:
                editor.create_model(model)


def _blocks(n_users: int, n_lots: int) -> np.ndarray:
    """Lot index for each of ``n_users`` consecutive uses, ``n_lots`` lots in order."""
    return (np.arange(n_users) * n_lots) // max(n_users, 1)


def _first_use(lot_index: np.ndarray, use_days: np.ndarray, n_lots: int) -> np.ndarray:
    """Earliest use day of each lot (uses are sorted by day)."""
    first = np.full(n_lots, use_days.max() if len(use_days) else 0, dtype=np.int64)
    np.minimum.at(first, lot_index, use_days)
    return first


class LabGenerator:
    """Builds the rows in memory, table by table, and bulk-inserts them."""

    def __init__(self, scale: float, today: date, seed: int = SEED):
        self.scale = scale
        self.today = today
        self.rng = np.random.default_rng(seed)
        self.timings: dict[str, float] = {}
        self.counts: dict[str, int] = {}
        self.edges: list = []
        self.now = datetime.now(UTC)

    # -- helpers -----------------------------------------------------------------------------
    def n(self, full_size: int, minimum: int = 2) -> int:
        return max(minimum, round(full_size * self.scale))

    def day(self, offset: int) -> date:
        """Day ``offset`` of the history (0 = five years ago, HISTORY_DAYS = today)."""
        return self.today - timedelta(days=int(HISTORY_DAYS - min(offset, HISTORY_DAYS)))

    def sorted_days(self, count: int, low: int = 30) -> np.ndarray:
        return np.sort(self.rng.integers(low, HISTORY_DAYS + 1, size=count))

    def insert(self, label: str, model, rows: list) -> None:
        from django.db import transaction

        start = time.perf_counter()
        with transaction.atomic():
            for i in range(0, len(rows), BATCH_SIZE):
                model.objects.bulk_create(rows[i:i + BATCH_SIZE])
        self.timings[label] = self.timings.get(label, 0.0) + time.perf_counter() - start
        self.counts[label] = self.counts.get(label, 0) + len(rows)

    def edge(self, parent: str, child: str, role: str, used_on: date) -> None:
        self.edges.append((parent, child, role, used_on))

    def status_for(self, expires_on: date | None, young: tuple, old_active: float = 0.03) -> str:
        """Status by age: ``young`` = probabilities (quarantine, released, consumed)."""
        roll = self.rng.random()
        if expires_on is not None and expires_on < self.today:
            if roll < old_active / 3:
                return "quarantine"
            if roll < old_active:
                return "released"
            return "consumed" if roll < 0.8 else "disposed"
        q, r, _c = young
        return "quarantine" if roll < q else "released" if roll < q + r else "consumed"

    def expiry(self, record) -> date | None:
        from inventory.shelf_life import expiry_from_rule, rule_for

        return expiry_from_rule(record, rule_for(record, self.rules))

    def stamp(self, record, user_ids, index: int) -> None:
        record.created_by_id = record.updated_by_id = int(user_ids[index % len(user_ids)])

    # -- tables ------------------------------------------------------------------------------
    def users_and_places(self) -> None:
        from django.contrib.auth.hashers import make_password
        from django.contrib.auth.models import User

        from inventory.models import StorageLocation

        password = make_password("bench-password-not-secret")
        users = [User(id=i + 1, username=f"bench{i + 1:02d}", password=password,
                      first_name=f"Invented{i + 1}", is_staff=(i == 0))
                 for i in range(self.n(24, 3))]
        self.insert("auth_user", User, users)
        self.user_ids = [u.id for u in users]
        self.roles(users)
        kinds = [k for k, _ in StorageLocation.Kind.choices]
        places = [StorageLocation(id=i + 1, code=f"LOC-{i + 1:05d}", name=f"Invented place {i + 1}",
                                  kind=kinds[i % len(kinds)], room=f"Room {100 + i % 7}")
                  for i in range(self.n(40, 4))]
        self.insert("storagelocation", StorageLocation, places)
        self.place_ids = np.array([p.id for p in places])

    def roles(self, users) -> None:
        """bench01 administrator (the runner's user), two reviewers, a viewer, the rest makers."""
        from inventory.roles import ADMINISTRATOR, MAKER, REVIEWER, VIEWER, ensure_role_groups

        groups = {g.name: g for g in ensure_role_groups()}
        for i, user in enumerate(users):
            role = ADMINISTRATOR if i == 0 else REVIEWER if i < 3 else VIEWER if i == 3 else MAKER
            user.groups.add(groups[role])

    def shelf_life_rules(self) -> None:
        from inventory.models import ShelfLifeRule

        made, received, prepared = (ShelfLifeRule.CountedFrom.MADE,
                                    ShelfLifeRule.CountedFrom.RECEIVED,
                                    ShelfLifeRule.CountedFrom.PREPARED)
        spec = [("reagentlot", "", 730, received), ("reagentlot", "metal_salt", 30, prepared),
                ("reagentlot", "plating_bath", 180, received),
                ("spherelot", "", 365, received), ("templateassembly", "", 14, made),
                ("substrate", "", 90, made), ("linkerlayer", "", 7, made),
                ("nanoparticlebatch", "", 60, made)]
        rules = [ShelfLifeRule(id=i + 1, record_kind=k, reagent_kind=rk, shelf_life_days=d,
                               counted_from=c, is_example=True,
                               rationale="Invented benchmark value.")
                 for i, (k, rk, d, c) in enumerate(spec)]
        self.insert("shelfliferule", ShelfLifeRule, rules)
        self.rules = {(r.record_kind, r.reagent_kind): r for r in rules}

    def plan(self) -> None:
        """Dates of the main steps, sorted so codes grow with time as in a real lab."""
        self.n_runs = self.n(25_000)
        self.run_days = self.sorted_days(self.n_runs)
        self.n_batches = self.n(20_000)
        self.batch_days = self.sorted_days(self.n_batches, low=20)

    def reagents(self) -> None:
        from inventory.models import ReagentLot

        self.lots: list[ReagentLot] = []
        self.prepared_links: list[tuple[int, int]] = []  # (prepared lot id, source lot id)

        def add(kind: str, name: str, on_day: int, prepared: bool = False, **extra) -> ReagentLot:
            lot = ReagentLot(id=len(self.lots) + 1, code=f"RGT-{len(self.lots) + 1:05d}",
                             name=name, kind=kind, supplier="" if prepared else "Invented Supplier",
                             supplier_lot="" if prepared else f"X{len(self.lots):06d}",
                             **extra)
            if prepared:
                lot.prepared_on = self.day(on_day)
            else:
                lot.received_on = lot.opened_on = self.day(on_day)
            lot.expires_on = self.expiry(lot)
            lot.status = self.status_for(lot.expires_on, (0.05, 0.85, 0.10))
            lot.storage_id = int(self.rng.choice(self.place_ids))
            self.stamp(lot, self.user_ids, lot.id)
            self.lots.append(lot)
            return lot

        def lots_for(uses: np.ndarray, count: int, kind: str, name: str, lead: int = 7, **extra):
            index = _blocks(len(uses), count)
            first = _first_use(index, uses, count)
            made = [add(kind, f"{name} {i + 1}", max(0, int(first[i]) - lead), **extra)
                    for i in range(count)]
            return made, index

        run_days, batch_days = self.run_days, self.batch_days
        self.base_slides, self.run_slide = lots_for(run_days, self.n(1_200), "base_slide",
                                                    "Invented gold-coated slides")
        self.baths, self.run_bath = lots_for(run_days, self.n(2_000), "plating_bath",
                                             "Invented gold plating bath", lead=2)
        self.linker_lots, self.run_linker = lots_for(run_days, self.n(400), "linker_thiol",
                                                     "Invented dithiol linker", lead=3)
        self.solvents, self.run_solvent = lots_for(run_days, self.n(300), "solvent",
                                                   "Invented ethanol")
        self.reductants, self.batch_reductant = lots_for(batch_days, self.n(600), "reductant",
                                                         "Invented citrate")
        self.stabilisers, self.batch_stabiliser = lots_for(batch_days, self.n(300), "stabiliser",
                                                           "Invented PVP")
        self._salt_dilution_chain(batch_days, add)
        self.insert("reagentlot", ReagentLot, self.lots)
        through = ReagentLot.prepared_from.through
        self.insert("reagentlot_prepared_from", through, [
            through(from_reagentlot_id=child, to_reagentlot_id=source)
            for child, source in self.prepared_links])

    def _salt_dilution_chain(self, batch_days: np.ndarray, add) -> None:
        """Purchased salt -> stock -> dilution 1 -> dilution 2 -> working, four 'prepared' steps."""
        n_working = self.n(2_000)
        self.batch_working = _blocks(len(batch_days), n_working)
        first = _first_use(self.batch_working, batch_days, n_working)
        n_stock, n_salt = max(1, n_working // 2), max(1, n_working // 10)
        stock_of = _blocks(n_working, n_stock)
        salt_of = _blocks(n_stock, n_salt)
        stock_first = _first_use(stock_of, first - 3, n_stock)
        salt_first = _first_use(salt_of, stock_first, n_salt)
        salt_lots = [
            add("metal_salt", f"Invented gold salt {i + 1}", max(0, int(salt_first[i]) - 10))
            for i in range(n_salt)
        ]
        stock_lots = []
        for i in range(n_stock):
            lot = add("metal_salt", f"Invented salt stock {i + 1}", max(0, int(stock_first[i])),
                      prepared=True, concentration_mM=25.0)
            self._prepared(lot, salt_lots[salt_of[i]])
            stock_lots.append(lot)
        self.working = []
        for i in range(n_working):
            parent = stock_lots[stock_of[i]]
            for step, concentration in ((2, 5.0), (1, 1.0), (0, 0.25)):
                lot = add("metal_salt", f"Invented salt dilution {i + 1}.{3 - step}",
                          max(0, int(first[i]) - step), prepared=True,
                          concentration_mM=concentration)
                self._prepared(lot, parent)
                parent = lot
            self.working.append(parent)

    def _prepared(self, lot, source) -> None:
        self.prepared_links.append((lot.id, source.id))
        self.edge(source.code, lot.code, "prepared from", lot.prepared_on)

    def spheres_and_templates(self) -> None:
        from inventory.models import SphereLot, TemplateAssembly

        n_spheres = self.n(500)
        run_sphere = _blocks(self.n_runs, n_spheres)
        first = _first_use(run_sphere, self.run_days, n_spheres)
        diameters = np.array([200.0, 350.0, 500.0, 600.0, 800.0])
        spheres = []
        for i in range(n_spheres):
            lot = SphereLot(id=i + 1, code=f"SPH-{i + 1:05d}", material="polystyrene",
                            nominal_diameter_nm=float(diameters[i % len(diameters)]),
                            size_cv_percent=float(self.rng.uniform(1.5, 4.0)),
                            solids_percent_w_v=10.0, supplier="Invented Beads",
                            supplier_lot=f"B{i:05d}", received_on=self.day(max(0, first[i] - 10)),
                            volume_mL=15.0, storage_id=int(self.rng.choice(self.place_ids)))
            lot.opened_on = lot.received_on
            lot.expires_on = self.expiry(lot)
            lot.status = self.status_for(lot.expires_on, (0.05, 0.90, 0.05))
            self.stamp(lot, self.user_ids, i)
            spheres.append(lot)
        self.insert("spherelot", SphereLot, spheres)
        self.spheres = spheres

        # 95 % of runs go through a template made the day before; the rest plate a flat slide.
        self.run_has_template = self.rng.random(self.n_runs) < 0.95
        templates, self.run_template = [], np.full(self.n_runs, -1)
        methods = [m for m, _ in TemplateAssembly.Method.choices]
        for run in np.flatnonzero(self.run_has_template):
            sphere = spheres[run_sphere[run]]
            slide = self.base_slides[self.run_slide[run]]
            made_on = max(self.day(self.run_days[run] - 1), sphere.received_on, slide.received_on)
            tpl = TemplateAssembly(id=len(templates) + 1, code=f"TPL-{len(templates) + 1:05d}",
                                   sphere_lot_id=sphere.id, base_slide_lot_id=slide.id,
                                   method=methods[run % len(methods)], slide_area_cm2=2.0,
                                   coverage_percent=float(self.rng.uniform(80, 99)),
                                   made_on=made_on)
            tpl.expires_on = self.expiry(tpl)
            tpl.status = "consumed"  # plated by its run, as the service does
            self.stamp(tpl, self.user_ids, run)
            self.run_template[run] = len(templates)
            templates.append(tpl)
            self.edge(sphere.code, tpl.code, "spheres", made_on)
            self.edge(slide.code, tpl.code, "base slide", made_on)
        self.insert("templateassembly", TemplateAssembly, templates)
        self.templates = templates

    def runs_and_pieces(self) -> None:
        from inventory.models import DepositionRun, Substrate

        runs, pieces = [], []
        self.run_codes, self.run_made, self.sub_codes, self.sub_made = [], [], [], []
        pieces_per_run = 4
        for run in range(self.n_runs):
            made_on = self.day(self.run_days[run])
            bath = self.baths[self.run_bath[run]]
            dep = DepositionRun(id=run + 1, code=f"DEP-{run + 1:05d}", bath_lot_id=bath.id,
                                metal="Au", electrons_per_atom=1, current_efficiency=0.95,
                                mode="potentiostatic", setpoint_potential_V=-0.7,
                                electrode_area_cm2=1.0, target_height_over_diameter=0.5,
                                made_on=made_on, charge_C=float(self.rng.uniform(0.1, 0.3)),
                                film_height_nm=float(self.rng.uniform(150, 300)),
                                height_over_diameter=float(self.rng.uniform(0.4, 0.6)))
            self.edge(bath.code, dep.code, "plating bath", made_on)
            if self.run_template[run] >= 0:
                tpl = self.templates[self.run_template[run]]
                dep.template_id = tpl.id
                self.edge(tpl.code, dep.code, "template", made_on)
            else:
                slide = self.base_slides[self.run_slide[run]]
                dep.base_slide_lot_id = slide.id
                dep.height_over_diameter = dep.target_height_over_diameter = None
                self.edge(slide.code, dep.code, "base slide", made_on)
            self.stamp(dep, self.user_ids, run)
            runs.append(dep)
            self.run_codes.append(dep.code)
            self.run_made.append(made_on)
            storage = int(self.rng.choice(self.place_ids))
            for number in range(1, pieces_per_run + 1):
                sid = len(pieces) + 1
                piece = Substrate(id=sid, code=f"SUB-{sid:05d}", deposition_run_id=dep.id,
                                  piece_label=f"{dep.code}/{number}", area_cm2=0.25,
                                  stage="film", made_on=made_on, storage_id=storage)
                piece.expires_on = self.expiry(piece)
                piece.status = self.status_for(piece.expires_on, (0.30, 0.50, 0.20))
                self.stamp(piece, self.user_ids, run)
                pieces.append(piece)
                self.edge(dep.code, piece.code, "cut from", made_on)
        self.pieces = pieces
        self.insert("depositionrun", DepositionRun, runs)

    def colloids(self) -> None:
        from inventory.models import NanoparticleBatch

        batches, links = [], []
        through = NanoparticleBatch.source_lots.through
        methods = ["citrate", "seeded_growth", "hydroxylamine"]
        for i in range(self.n_batches):
            made_on = self.day(self.batch_days[i])
            batch = NanoparticleBatch(
                id=i + 1,
                code=f"NPB-{i + 1:05d}",
                metal="Au",
                synthesis_method=methods[i % 3],
                volume_mL=100.0,
                target_diameter_nm=float(self.rng.choice([40.0, 60.0, 80.0])),
                made_on=made_on,
                storage_id=int(self.rng.choice(self.place_ids)),
            )
            batch.expires_on = self.expiry(batch)
            batch.status = self.status_for(batch.expires_on, (0.20, 0.70, 0.10))
            self.stamp(batch, self.user_ids, i)
            batches.append(batch)
            sources = [(self.working[self.batch_working[i]], "metal salt"),
                       (self.reductants[self.batch_reductant[i]], "reductant"),
                       (self.stabilisers[self.batch_stabiliser[i]], "stabiliser")]
            for lot, role in sources:
                links.append(through(nanoparticlebatch_id=batch.id, reagentlot_id=lot.id))
                self.edge(lot.code, batch.code, role, made_on)
        self.insert("nanoparticlebatch", NanoparticleBatch, batches)
        self.insert("nanoparticlebatch_source_lots", through, links)
        self.batches = batches

    def linkers_and_particles(self) -> None:
        """60 % of runs get a linker layer on all pieces; two thirds of those get particles."""
        from inventory.models import LinkerLayer, ParticleAttachment

        layers, layer_links, attachments = [], [], []
        through = LinkerLayer.substrates.through
        batch_days = self.batch_days
        for run in np.flatnonzero(self.rng.random(self.n_runs) < 0.60):
            made_on = min(self.run_made[run] + timedelta(days=1), self.today)
            linker = self.linker_lots[self.run_linker[run]]
            solvent = self.solvents[self.run_solvent[run]]
            layer = LinkerLayer(id=len(layers) + 1, code=f"LNK-{len(layers) + 1:05d}",
                                linker_lot_id=linker.id, solvent_lot_id=solvent.id,
                                concentration_mM=1.0, immersion_h=18.0, made_on=made_on)
            self.stamp(layer, self.user_ids, run)
            layers.append(layer)
            self.edge(linker.code, layer.code, "linker", made_on)
            self.edge(solvent.code, layer.code, "solvent", made_on)
            with_particles = self.rng.random() < 2 / 3
            for piece in self.pieces[run * 4:(run + 1) * 4]:
                layer_links.append(through(linkerlayer_id=layer.id, substrate_id=piece.id))
                self.edge(layer.code, piece.code, "linker layer", made_on)
                piece.stage = "linker"
                if not with_particles:
                    continue
                attached_on = min(made_on + timedelta(days=1), self.today)
                offset = (self.today - attached_on).days
                newest = int(np.searchsorted(batch_days, HISTORY_DAYS - offset, side="right")) - 1
                if newest < 0:
                    continue
                batch = self.batches[max(0, newest - int(self.rng.integers(0, 4)))]
                pat = ParticleAttachment(id=len(attachments) + 1,
                                         code=f"PAT-{len(attachments) + 1:05d}",
                                         substrate_id=piece.id, batch_id=batch.id,
                                         immersion_min=30.0, made_on=attached_on)
                self.stamp(pat, self.user_ids, run)
                attachments.append(pat)
                self.edge(batch.code, pat.code, "colloid", attached_on)
                self.edge(pat.code, piece.code, "particles", attached_on)
                piece.stage = "particles"
        from inventory.models import Substrate

        self.insert("substrate", Substrate, self.pieces)
        self.insert("linkerlayer", LinkerLayer, layers)
        self.insert("linkerlayer_substrates", through, layer_links)
        self.insert("particleattachment", ParticleAttachment, attachments)

    def datasets(self) -> None:
        """Datasets on finished pieces: 70 % on one piece, 30 % on two pieces of one run."""
        from inventory.models import Dataset

        finished = [p for p in self.pieces if p.stage == "particles"] or self.pieces
        through = Dataset.substrates.through
        rows, links = [], []
        instruments = ["Invented Raman 785", "Invented Raman 633", "Invented Raman 532"]
        picks = np.sort(self.rng.integers(0, len(finished), size=self.n(50_000)))
        for i, pick in enumerate(picks):
            first = finished[pick]
            measured = [first]
            if self.rng.random() < 0.3 and pick + 1 < len(finished) \
                    and finished[pick + 1].deposition_run_id == first.deposition_run_id:
                measured.append(finished[pick + 1])
            acquired_on = min(first.made_on + timedelta(days=int(self.rng.integers(2, 6))),
                              self.today)
            ds = Dataset(id=i + 1, code=f"DS-{i + 1:05d}", title=f"Invented map {i + 1}",
                         instrument=instruments[i % 3], operator=f"bench{i % 3 + 1:02d}",
                         acquired_on=acquired_on)
            self.stamp(ds, self.user_ids, i)
            rows.append(ds)
            for piece in measured:
                links.append(through(dataset_id=ds.id, substrate_id=piece.id))
                self.edge(piece.code, ds.code, "measured on", acquired_on)
        self.insert("dataset", Dataset, rows)
        self.insert("dataset_substrates", through, links)

    def flags(self) -> None:
        """Deviations on pieces, colloids, baths and salts; a quarter still open."""
        from inventory.models import Flag

        targets = ([p.code for p in self.pieces[::50]] + [b.code for b in self.batches[::10]]
                   + [lot.code for lot in self.lots[::5]])
        chosen = self.rng.choice(targets, size=min(len(targets), self.n(3_000)), replace=False)
        categories = ["out of limits", "handling", "contamination", "labelling"]
        rows = []
        for i, target in enumerate(sorted(chosen)):
            flag = Flag(id=i + 1, code=f"FLG-{i + 1:05d}", target_code=str(target),
                        category=categories[i % 4], message="Invented deviation for benchmarks.")
            if self.rng.random() < 0.75:
                flag.state, flag.resolved_at = "resolved", self.now
                flag.resolution = "Invented resolution."
                flag.resolved_by_id = self.user_ids[0]
            self.stamp(flag, self.user_ids, i)
            rows.append(flag)
        self.insert("flag", Flag, rows)

    def qc_measurements(self) -> None:
        """Two Raman QC measurements per substrate (200,000 at scale 1), numbers invented."""
        from django.apps import apps

        from inventory.models import ReagentLot

        if not apps.get_app_config("qc").models.get("qcmeasurement"):
            return
        from qc.models import QcLimitSet, QcMeasurement, ReferenceAnalyte

        analyte = ReferenceAnalyte(id=1, name="Invented thiol analyte", band_positions_cm1=[1075.0],
                                   band_positions_source="Invented for benchmarks",
                                   qc_band_cm1=1075.0, surface_density_per_nm2=6.8,
                                   surface_density_source="Invented for benchmarks")
        self.insert("referenceanalyte", ReferenceAnalyte, [analyte])
        lot_id = len(self.lots) + 1
        lot = ReagentLot(id=lot_id, code=f"RGT-{lot_id:05d}", name="Invented analyte",
                         kind="reference_analyte", received_on=self.day(0), status="released")
        self.insert("reagentlot", ReagentLot, [lot])
        limits = {stage: QcLimitSet(id=i + 1, product_kind=stage, analyte_id=1, min_snr=10.0,
                                    band_position_tolerance_cm1=5.0, valid_days=30,
                                    is_example=True, rationale="Invented benchmark value.")
                  for i, stage in enumerate(["film", "linker", "particles", "purchased"])}
        self.insert("qclimitset", QcLimitSet, list(limits.values()))
        per_substrate = 2
        n_rows = len(self.pieces) * per_substrate
        heights = self.rng.lognormal(np.log(50.0), 0.3, size=n_rows)
        snrs = self.rng.uniform(5.0, 80.0, size=n_rows)
        # Invented map results, so the insight statistics have outcomes to work on.
        log10_ef = self.rng.normal(6.2, 0.3, size=n_rows)
        rsd = self.rng.lognormal(np.log(12.0), 0.3, size=n_rows)
        rows = []
        for i in range(n_rows):
            piece = self.pieces[i // per_substrate]
            code = f"QCM-{i + 1:05d}"
            rows.append(QcMeasurement(
                id=i + 1, code=code, analyte_id=1, analyte_lot_id=lot_id,
                measured_on=min(piece.made_on + timedelta(days=1 + i % per_substrate), self.today),
                raw_file=f"qc/raman/{code}.txt", raw_filename=f"{code}.txt",
                raw_sha256=f"{i:064x}", laser_nm=785.0, power_mW=5.0, integration_s=1.0,
                band_center_cm1=1075.0, band_window_cm1=40.0, band_position_cm1=1075.5,
                band_fwhm_cm1=12.0, normalised_height_counts_per_mW_s=float(heights[i]),
                normalised_area_counts_cm1_per_mW_s=float(heights[i]) * 15.0,
                snr=float(snrs[i]), is_map=True, n_points=100, rsd_percent=float(rsd[i]),
                enhancement_factor=float(10 ** log10_ef[i]),
                enhancement_factor_u=float(0.25 * 10 ** log10_ef[i]),
                log10_enhancement_factor=float(log10_ef[i]),
                log10_enhancement_factor_u=0.11, surface_area_factor=1.0,
                surface_area_factor_u=0.0,
                surface_area_origin="Invented for benchmarks (assumed 1).",
                substrate_id=piece.id,
                limit_set_id=limits[piece.stage].id,
                product_kind=piece.stage, passed=bool(snrs[i] >= 10.0),
                failure_reasons=[] if snrs[i] >= 10.0 else ["snr below the limit"]))
            self.stamp(rows[-1], self.user_ids, i)
        self.insert("qcmeasurement", QcMeasurement, rows)

    def lineage(self) -> None:
        from inventory.models import LineageEdge

        rows = [LineageEdge(parent_code=p, child_code=c, role=r, used_on=u,
                            created_by_id=self.user_ids[0]) for p, c, r, u in self.edges]
        self.insert("lineageedge", LineageEdge, rows)

    def counters_and_sequences(self) -> None:
        """CodeCounter rows at the last number used; PostgreSQL sequences past explicit ids."""
        from django.apps import apps
        from django.core.management.color import no_style
        from django.db import connection

        from inventory.codes import coded_models
        from inventory.models import CodeCounter

        counters = []
        for prefix, model in coded_models().items():
            last = model.objects.count()
            if last:
                counters.append(CodeCounter(prefix=prefix, last_value=last))
        self.insert("codecounter", CodeCounter, counters)
        models = [m for m in apps.get_models() if m._meta.app_label in {"inventory", "auth", "qc"}]
        models += [f.remote_field.through for m in models for f in m._meta.local_many_to_many]
        with connection.cursor() as cursor:
            for statement in connection.ops.sequence_reset_sql(no_style(), models):
                cursor.execute(statement)
            # Planner statistics, as autovacuum / a maintenance job would have them in use.
            cursor.execute("ANALYZE")

    def run(self) -> None:
        steps = [
            self.users_and_places,
            self.shelf_life_rules,
            self.plan,
            self.reagents,
            self.spheres_and_templates,
            self.runs_and_pieces,
            self.colloids,
            self.linkers_and_particles,
            self.datasets,
            self.flags,
            self.qc_measurements,
            self.lineage,
            self.counters_and_sequences,
        ]
        for step in steps:
            start = time.perf_counter()
            step()
            print(f"  {step.__name__:<24} {time.perf_counter() - start:7.1f} s", flush=True)


def _sqlite_fast_load() -> None:
    """Journal off during the load only: the file is rebuilt from scratch on any failure."""
    from django.db import connection

    if connection.vendor == "sqlite":
        with connection.cursor() as cursor:
            cursor.execute("PRAGMA journal_mode=WAL")
            cursor.execute("PRAGMA synchronous=OFF")


def main(argv: list[str] | None = None) -> dict:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--db", choices=["sqlite", "postgres"], default="sqlite")
    parser.add_argument("--scale", type=float, default=0.01,
                        help="1 = 100,000 substrates; 0.01 = a quick run (default)")
    args = parser.parse_args(argv)
    if not 0 < args.scale <= 10:
        parser.error("--scale must be in (0, 10]")
    configure_django(args.db)
    total = time.perf_counter()
    recreate_database(args.db)
    build_schema()
    _sqlite_fast_load()
    from django.utils import timezone

    print(f"Generating an invented lab at scale {args.scale} into {args.db}", flush=True)
    generator = LabGenerator(args.scale, timezone.localdate())
    generator.run()
    seconds = time.perf_counter() - total
    summary = {"db": args.db, "scale": args.scale, "today": generator.today.isoformat(),
               "seconds_total": round(seconds, 1), "rows": generator.counts,
               "seconds_per_table": {k: round(v, 2) for k, v in generator.timings.items()},
               "generated_at": datetime.now(UTC).isoformat(timespec="seconds")}
    (OUT_DIR / f"generate-{args.db}.json").write_text(json.dumps(summary, indent=2))
    print(f"Done in {seconds:.1f} s: {sum(generator.counts.values()):,} rows", flush=True)
    return summary


if __name__ == "__main__":
    main()
