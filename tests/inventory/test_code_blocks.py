"""Codes handed out in blocks (a sheet import) count on without a gap, and roll back whole."""

import pytest
from django.db import transaction

from inventory.codes import code_next, codes_in_blocks

pytestmark = pytest.mark.django_db


def test_a_block_leaves_no_gap_for_the_next_code():
    with transaction.atomic(), codes_in_blocks():
        inside = [code_next("TST") for _ in range(3)]
    assert inside == ["TST-00001", "TST-00002", "TST-00003"]
    assert code_next("TST") == "TST-00004"  # the counter was set back from 500 to 3


def test_a_rolled_back_block_gives_its_numbers_back():
    with transaction.atomic(), codes_in_blocks():
        code_next("TST")
        transaction.set_rollback(True)
    assert code_next("TST") == "TST-00001"
