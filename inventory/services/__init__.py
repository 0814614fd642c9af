"""Every write in the inventory: each function validates, saves atomically and returns.

Pages, the API, commands and the demo loader call these and nothing else, so a rule holds
the same way everywhere.  Errors are ``ValidationError`` keyed by field with a stable code.
Split by topic; import from ``inventory.services``.
"""

from ._common import CheckingMany
from .audit import (
    amendable_fields,
    record_amend,
    record_reject,
    record_release,
    record_void,
)
from .creation import NewRecord, codes_taken, new_record_save, new_records_insert
from .deposition import (
    deposition_run_attach_chronoamperogram,
    deposition_run_check_target,
    deposition_run_enter_charge,
    deposition_run_target_charge_C,
    deposition_tolerance_in_force,
    deposition_tolerance_set,
)
from .fabrication import (
    deposition_run_check,
    deposition_run_record,
    nanoparticle_batch_check,
    nanoparticle_batch_make,
    purchased_piece_check,
    purchased_piece_receive,
    substrate_receive,
    template_assemble,
    template_assembly_check,
)
from .lifecycle import record_transition
from .materials import (
    reagent_lot_check,
    reagent_lot_open,
    reagent_lot_receive,
    shelf_life_rule_set,
    sphere_lot_check,
    sphere_lot_receive,
    storage_location_create,
)
from .records import dataset_register, flag_raise, flag_resolve, sha256_of
from .surface_steps import (
    linker_layer_apply,
    linker_layer_check,
    particle_attach,
    particle_attachment_check,
)

__all__ = [
    "CheckingMany",
    "NewRecord",
    "amendable_fields",
    "codes_taken",
    "dataset_register",
    "deposition_run_attach_chronoamperogram",
    "deposition_run_check",
    "deposition_run_check_target",
    "deposition_run_enter_charge",
    "deposition_run_record",
    "deposition_run_target_charge_C",
    "deposition_tolerance_in_force",
    "deposition_tolerance_set",
    "flag_raise",
    "flag_resolve",
    "linker_layer_apply",
    "linker_layer_check",
    "nanoparticle_batch_check",
    "nanoparticle_batch_make",
    "new_record_save",
    "new_records_insert",
    "particle_attach",
    "particle_attachment_check",
    "purchased_piece_check",
    "purchased_piece_receive",
    "reagent_lot_check",
    "reagent_lot_open",
    "reagent_lot_receive",
    "record_amend",
    "record_reject",
    "record_release",
    "record_transition",
    "record_void",
    "sha256_of",
    "shelf_life_rule_set",
    "sphere_lot_check",
    "sphere_lot_receive",
    "storage_location_create",
    "substrate_receive",
    "template_assemble",
    "template_assembly_check",
]
