"""Answer checks that cannot judge a set are refused before grading; labels belong to the
set; labels from the command line and from a file."""
from __future__ import annotations

import pytest

from honebench.core.check_fit import (
    check_fits_set, check_for_new_set, collect_labels, labels_from_option, read_labels_file,
)
from honebench.core.checks import CheckSpec
from honebench.core.grading import Grader
from honebench.core.project import Project
from honebench.core.sets import load_set
from honebench.core.wording import Wording
from tests.fakes import FakeEngine


@pytest.fixture
def routing(sample_dir):
    return load_set(sample_dir / "passenger_desk_routing.csv")


def test_label_check_missing_expected_answers_is_refused_naming_them(routing):
    check = CheckSpec(kind="label", labels=("refund", "money", "timetable"))
    with pytest.raises(ValueError) as err:
        check_fits_set(check, routing)
    text = str(err.value)
    for value in ("booking_change", "lost_property", "accessibility"):
        assert repr(value) in text
    assert "passenger_desk_routing" in text and "first at rows" in text
    assert "--label" in text  # says what to do
    # labels differing only in case still fit (the label check ignores it, as judge does)
    check_fits_set(CheckSpec(kind="label", labels=tuple(
        lab.upper() for lab in routing.labels())), routing)
    check_fits_set(CheckSpec(kind="label"), routing)  # no labels: the set's own answers


def test_number_check_on_words_is_refused_naming_rows(sample_dir):
    sentiment = load_set(sample_dir / "review_sentiment.csv")
    with pytest.raises(ValueError) as err:
        check_fits_set(CheckSpec(kind="number"), sentiment)
    first = sentiment.items[0]
    assert f"row {first.row} ({first.expected!r})" in str(err.value)
    assert f"{len(sentiment)} of {len(sentiment)}" in str(err.value)
    check_fits_set(CheckSpec(kind="number"), load_set(sample_dir / "fare_arithmetic.csv"))
    check_fits_set(CheckSpec(kind="exact"), sentiment)


def test_grader_refuses_before_saving_anything(tmp_path, routing):
    project = Project(tmp_path / "p.hone")
    set_id = project.add_set(routing)
    engine = FakeEngine()
    with pytest.raises(ValueError, match="leave out"):
        Grader(project.store, engine).grade(
            set_id=set_id, qset=routing, wording=Wording("Route it.", "before"),
            check=CheckSpec(kind="label", labels=("refund", "other")))
    assert project.store.runs() == [] and engine.calls == 0
    project.close()


def test_a_second_set_gets_its_own_labels(tmp_path, sample_dir):
    project = Project(tmp_path / "p.hone")
    project.import_set(sample_dir / "passenger_desk_routing.csv")
    assert "refund" in project.check().labels
    # a set of the user's own (no recipe): labels from its expected answers
    own = tmp_path / "moods.csv"
    own.write_text("review,answer\nLovely crossing,pleased\nLate again,cross\n")
    project.import_set(own)
    assert project.check().kind == "label" and project.check().labels == ()
    _, qset = project.current_set()
    check_fits_set(project.check(), qset)
    # a sample set with a recipe: the recipe's labels
    project.import_set(sample_dir / "review_sentiment.csv")
    assert project.check().labels == ("positive", "negative", "neutral")
    project.close()


def test_check_for_new_set_keeps_everything_but_the_labels():
    check = CheckSpec(kind="label", labels=("a", "b"), label_threshold=90.0)
    assert check_for_new_set(check) == CheckSpec(kind="label", label_threshold=90.0)
    assert check_for_new_set(check, {"kind": "label", "labels": ["x"]}).labels == ("x",)
    assert check_for_new_set(check, {"kind": "number"}).labels == ()


def test_labels_option_warns_when_a_comma_has_spaces():
    labels, warning = labels_from_option("refund, money,timetable")
    assert labels == ["refund", "money", "timetable"]
    assert "--label" in warning and "'refund', 'money', 'timetable'" in warning
    assert labels_from_option("refund,timetable") == (["refund", "timetable"], None)


def test_labels_file_keeps_commas_and_skips_blank_lines(tmp_path):
    path = tmp_path / "labels.txt"
    path.write_text("\ufeffrefund, money back\n\n  timetable  \n", encoding="utf-8")
    assert read_labels_file(path) == ["refund, money back", "timetable"]
    (tmp_path / "blank.txt").write_text("\n \n")
    with pytest.raises(ValueError, match="blank.txt holds no labels"):
        read_labels_file(tmp_path / "blank.txt")
    (tmp_path / "latin.txt").write_bytes(b"refund\ncaf\xe9\n")
    with pytest.raises(ValueError, match="latin.txt, line 2"):
        read_labels_file(tmp_path / "latin.txt")


def test_collect_labels_in_order(tmp_path):
    path = tmp_path / "labels.txt"
    path.write_text("lost, found\n")
    assert collect_labels() == (None, [])
    labels, warnings = collect_labels("a,b", ["refund, money"], path)
    assert labels == ["a", "b", "refund, money", "lost, found"] and warnings == []
