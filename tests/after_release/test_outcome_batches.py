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


def _batch(tmp_path, labels):
    path = tmp_path / "outcomes.csv"
    path.write_text("row_id,label\n" + "".join(f"r{i},{label}\n" for i, label in
                                                enumerate(labels)), encoding="utf-8")
    return read_outcomes(str(path))


def test_labels_are_read_once_per_text_and_land_on_their_rows(tmp_path):
    from registry.after_release.outcomes import check_labels

    batch = _batch(tmp_path, ["TRUE", " 0", "1.0", "false", "1", "0 "])
    assert check_labels(batch.label_values, batch.label_codes, "binary", ()).tolist() == [
        1, 0, 1, 0, 1, 0]
    numbers = ["2.5", " -1e3", "0", "2.5"]
    batch = _batch(tmp_path, numbers)
    # the reference: Python's float over each text
    assert check_labels(batch.label_values, batch.label_codes, "regression", ()).tolist() == [
        float(n) for n in numbers]
    batch = _batch(tmp_path, ["low", "high", "low", "mid"])
    assert check_labels(batch.label_values, batch.label_codes, "multiclass",
                        ("high", "low", "mid")).tolist() == [1, 0, 1, 2]


@pytest.mark.parametrize("task, classes, labels, row, shown", [
    ("binary", (), ["1", "0", "2", "yes"], 3, "'2' is not a label of a binary task"),
    ("regression", (), ["1", "2", "nan", "x"], 3, "'nan' is not a finite number"),
    ("multiclass", ("a", "b"), ["a", "b", "a", "c"], 4, "'c' is not one of the classes a, b"),
])
def test_the_first_label_outside_the_task_is_refused_at_its_row(tmp_path, task, classes,
                                                                labels, row, shown):
    from registry.after_release.outcomes import check_labels

    batch = _batch(tmp_path, labels)
    with pytest.raises(UserError) as raised:
        check_labels(batch.label_values, batch.label_codes, task, classes)
    assert raised.value.place == f"row {row}, column label"
    assert shown in str(raised.value)
