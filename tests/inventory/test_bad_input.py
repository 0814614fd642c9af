"""Bad input gets a clear error naming the field, and nothing partial is saved."""

from datetime import timedelta

import pytest
from django.core.exceptions import ValidationError

from inventory.models import DepositionRun, LineageEdge, ReagentLot, SphereLot, Substrate


def _fields(error: ValidationError) -> set[str]:
    return set(error.error_dict)


def test_negative_or_zero_sphere_size_is_refused(chain):
    for size in (0, -500):
        with pytest.raises(ValidationError) as error:
            chain.s.sphere_lot_receive(actor=chain.maker, material="polystyrene",
                                       nominal_diameter_nm=size, solids_percent_w_v=10,
                                       received_on=chain.day(1))
        assert _fields(error.value) == {"nominal_diameter_nm"}
        assert "at least 10 and at most 50000 nm" in str(error.value)
    assert SphereLot.objects.count() == 0


def test_zero_electrode_area_saves_no_run_and_no_pieces(chain):
    template = chain.template()
    bath = chain.lot("plating_bath")
    with pytest.raises(ValidationError) as error:
        chain.s.deposition_run_record(actor=chain.maker, template=template, bath_lot=bath,
                                      metal="Au", electrons_per_atom=1, mode="potentiostatic",
                                      electrode_area_cm2=0, made_on=chain.day(1), pieces=3)
    assert "electrode_area_cm2" in _fields(error.value)
    assert DepositionRun.objects.count() == 0 and Substrate.objects.count() == 0
    template.refresh_from_db()
    assert template.status == "released"  # not consumed by a refused run


def test_dates_in_the_wrong_order_are_refused(chain):
    with pytest.raises(ValidationError) as error:
        chain.s.reagent_lot_receive(actor=chain.maker, name="x", kind="solvent",
                                    received_on=chain.day(1), opened_on=chain.day(5))
    assert _fields(error.value) == {"opened_on"}
    template = chain.template(days_ago=2)
    with pytest.raises(ValidationError) as error:
        chain.run(template=template, days_ago=4)  # run before its template
    assert _fields(error.value) == {"made_on"}


def test_future_dates_are_refused(chain):
    with pytest.raises(ValidationError) as error:
        chain.s.reagent_lot_receive(actor=chain.maker, name="x", kind="solvent",
                                    received_on=chain.today + timedelta(days=1))
    assert _fields(error.value) == {"received_on"}


def test_wrong_kind_of_lot_is_refused_with_its_code(chain):
    solvent = chain.lot("solvent")
    with pytest.raises(ValidationError) as error:
        chain.run(bath=solvent)
    assert solvent.code in str(error.value) and _fields(error.value) == {"bath_lot"}


def test_bad_ghs_code_is_refused_and_codes_are_normalised(chain):
    with pytest.raises(ValidationError) as error:
        chain.lot("plating_bath", ghs_hazard_codes="H300 toxic")
    assert _fields(error.value) == {"ghs_hazard_codes"}
    lot = chain.lot("plating_bath", ghs_hazard_codes="h300+h310, H330;EUH032")
    assert lot.ghs_hazard_codes == "H300 H310 H330 EUH032"


def test_refused_prepared_lot_leaves_no_edges(chain):
    source = chain.lot("other")
    chain.s.record_transition(actor=None, record=source, to_status="rejected",
                              reason="contaminated")
    before = (ReagentLot.objects.count(), LineageEdge.objects.count())
    with pytest.raises(ValidationError):
        chain.s.reagent_lot_receive(actor=chain.maker, name="mix", kind="other",
                                    prepared_on=chain.day(0), prepared_from=[source])
    assert (ReagentLot.objects.count(), LineageEdge.objects.count()) == before


def test_same_file_twice_in_one_dataset_is_refused(chain):
    _run, (piece,) = chain.run(pieces=1)
    with pytest.raises(ValidationError) as error:
        chain.s.dataset_register(actor=chain.maker, title="t", substrates=[piece],
                                 acquired_on=chain.day(0),
                                 files=[("a.csv", b"1,2\n"), ("b.csv", b"1,2\n")])
    assert _fields(error.value) == {"files"}


def test_a_fractional_whole_number_is_refused_not_truncated(chain):
    # Django's IntegerField.to_python is int(value), which turns 2.5 into 2 without a word;
    # electrons per atom and piece counts are whole numbers, so 2.5 is an error to report.
    from inventory.services import record_amend

    run, _pieces = chain.run()
    with pytest.raises(ValidationError) as error:
        record_amend(actor=chain.maker, record=run, changes={"electrons_per_atom": 2.5},
                     reason="typo", expected_version=run.version)
    assert _fields(error.value) == {"electrons_per_atom"}
    assert "whole number" in str(error.value)
    run.refresh_from_db()
    assert run.electrons_per_atom == 1
    with pytest.raises(ValidationError) as error:
        chain.s.deposition_run_record(actor=chain.maker, template=chain.template(),
                                      bath_lot=chain.lot("plating_bath"), metal="Au",
                                      electrons_per_atom=1.5, mode="potentiostatic",
                                      electrode_area_cm2=1.0, made_on=chain.day(1), pieces=3)
    assert _fields(error.value) == {"electrons_per_atom"}
    # A whole number written as a float (3.0, as JSON and spreadsheets often give it) is fine.
    amended = record_amend(actor=chain.maker, record=run, changes={"electrons_per_atom": 3.0},
                           reason="three electrons", expected_version=run.version)
    assert amended.electrons_per_atom == 3


def test_a_substrate_named_twice_in_one_step_is_refused_by_name(chain):
    """A sheet cell "SUB-1; SUB-1" or an API list with a code twice: refused under the field,
    not a database error on the second lineage edge, and nothing is written."""
    _run, (piece,) = chain.run(pieces=1)
    with pytest.raises(ValidationError) as error:
        chain.s.linker_layer_apply(actor=chain.maker, linker_lot=chain.lot("linker_thiol"),
                                   substrates=[piece, piece], concentration_mM=1,
                                   immersion_h=12, made_on=chain.day(1))
    assert error.value.error_dict["substrates"][0].code == "duplicate"
    assert piece.code in str(error.value)
    with pytest.raises(ValidationError) as error:
        chain.s.dataset_register(actor=chain.maker, title="twice", substrates=[piece, piece],
                                 acquired_on=chain.day(1))
    assert error.value.error_dict["substrates"][0].code == "duplicate"
    assert not LineageEdge.objects.filter(child_code__startswith="LNK-").exists()
    assert Substrate.objects.get(pk=piece.pk).stage == Substrate.Stage.FILM
