"""Reading an outcome batch: a row id given twice is refused at its second row."""

from __future__ import annotations

import pytest

from registry.after_release.outcomes import read_outcomes
from registry.errors import UserError


def test_a_repeated_row_id_is_refused_at_the_earliest_row_that_repeats(tmp_path):
    path = tmp_path / "outcomes.csv"
    # r2 repeats at row 5, r1 at row 4: row 4 is the earliest row whose id came before
    path.write_text("row_id,label\nr1,0\nr2,1\nr3,1\nr1,1\nr2,0\n", encoding="utf-8")
    with pytest.raises(UserError) as raised:
        read_outcomes(str(path))
    assert raised.value.place == "row 4, column row_id"


def test_distinct_row_ids_are_read_in_file_order(tmp_path):
    path = tmp_path / "outcomes.csv"
    path.write_text("row_id,label\n7,1\n42, 0\n", encoding="utf-8")
    batch = read_outcomes(str(path))
    assert batch.labels == ["1", "0"]
    assert len(set(batch.hashes.tolist())) == 2
