"""Lineage both ways with a constant number of queries, however deep (DESIGN §3)."""

import pytest

from inventory.lineage import record_get_ancestors, record_get_descendants


def test_dataset_traces_back_to_every_lot(chain):
    spheres = chain.spheres()
    slides = chain.lot("base_slide")
    bath = chain.lot("plating_bath")
    linker = chain.lot("linker_thiol")
    salt = chain.lot("metal_salt")
    batch = chain.batch(sources=[salt])
    template = chain.template(spheres=spheres, slides=slides)
    run, (piece,) = chain.run(pieces=1, template=template, bath=bath)
    chain.s.linker_layer_apply(actor=chain.maker, linker_lot=linker, substrates=[piece],
                               concentration_mM=1, immersion_h=12, made_on=chain.day(3))
    from inventory.models import Substrate
    piece = Substrate.objects.get(pk=piece.pk)
    chain.s.particle_attach(actor=chain.maker, substrate=piece, batch=batch, immersion_min=30,
                            made_on=chain.day(2))
    dataset = chain.s.dataset_register(actor=chain.maker, title="t", substrates=[piece],
                                       acquired_on=chain.day(1), files=[("a.csv", b"1,2\n")])
    up = record_get_ancestors(dataset.code)
    for record in (spheres, slides, bath, linker, salt, batch, template, run, piece):
        assert record.code in up.depth
    assert up.depth[piece.code] == 1 and up.depth[run.code] == 2
    down = record_get_descendants(spheres.code)
    assert {template.code, run.code, piece.code, dataset.code} <= set(down.depth)


def test_record_shared_by_two_branches_appears_once(chain):
    bath = chain.lot("plating_bath")
    run_a, (a,) = chain.run(pieces=1, bath=bath)
    run_b, (b,) = chain.run(pieces=1, bath=bath)
    chain.release(a), chain.release(b)
    dataset = chain.s.dataset_register(actor=chain.maker, title="two pieces", substrates=[a, b],
                                       acquired_on=chain.day(1))
    up = record_get_ancestors(dataset)
    assert up.codes().count(bath.code) == 1
    assert up.depth[bath.code] == 3  # dataset ← piece ← run ← bath
    parents_of_bath_edges = [e for e in up.edges if e.parent_code == bath.code]
    assert {e.child_code for e in parents_of_bath_edges} == {run_a.code, run_b.code}
    down = record_get_descendants(bath)
    assert down.codes().count(dataset.code) == 1


def _prepared_chain(chain, depth: int, fan_out: int):
    """Lots prepared from lots, ``depth`` levels deep, with ``fan_out`` side inputs per level."""
    root = chain.lot("other")
    current = root
    side_lots = []
    for level in range(depth):
        sides = [chain.lot("other") for _ in range(fan_out)]
        side_lots.extend(sides)
        current = chain.release(chain.s.reagent_lot_receive(
            actor=chain.maker, name=f"level {level}", kind="other",
            prepared_on=chain.day(0), prepared_from=[current, *sides]))
    return root, current, side_lots


@pytest.mark.parametrize("depth", [8, 16])
def test_query_count_does_not_grow_with_depth(chain, depth, django_assert_max_num_queries):
    root, leaf, sides = _prepared_chain(chain, depth=depth, fan_out=2)
    _run, _pieces = chain.run(pieces=3)  # a second record kind in the walk
    # one recursive query for the edges, one per record kind reached
    with django_assert_max_num_queries(3):
        up = record_get_ancestors(leaf)
    assert len(up.depth) == depth + len(sides)
    assert up.depth[root.code] == depth
    with django_assert_max_num_queries(3):
        down = record_get_descendants(root)
    assert down.depth[leaf.code] == depth


def test_codes_at_one_depth_keep_numeric_order_past_five_digits():
    from inventory.lineage import Lineage

    depth = {"SUB-100000": 1, "SUB-99999": 1, "SUB-00002": 1, "DS-00001": 0}
    lineage = Lineage(root=None, direction="ancestors", edges=[], records={}, depth=depth)
    assert lineage.codes() == ["DS-00001", "SUB-00002", "SUB-99999", "SUB-100000"]
