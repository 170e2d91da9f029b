"""Importing bad question sets: a specific message, and nothing already saved is touched."""
from __future__ import annotations

import hashlib

import pytest

from honebench.core.project import Project
from honebench.core.sets import SetError
from honebench.core.wording import Wording


def _digest(path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


@pytest.fixture
def saved(tmp_path, sample_dir):
    project = Project(tmp_path / "task.hone")
    project.import_set(sample_dir / "passenger_desk_routing.csv")
    project.keep(Wording("Route this message.", "before"))
    project.close()
    return tmp_path / "task.hone"


BAD = {
    "empty.csv": (b"", "empty"),
    "header_only.csv": (b"id,message,department\n", "no items"),
    "no_expected.csv": (b"id,message\n1,hello\n", "expected"),
    "latin1.csv": ("id,message,department\n1,caf\xe9 au lait,refund\n".encode("latin-1"), "UTF-8"),
    "huge_cell.csv": (b"id,message,department\n1," + b"x" * 10_000_000 + b",refund\n", "characters"),
}


@pytest.mark.parametrize("name", sorted(BAD))
def test_bad_set_is_refused_and_the_project_is_untouched(saved, tmp_path, name):
    content, expect = BAD[name]
    bad = tmp_path / name
    bad.write_bytes(content)
    before = _digest(saved)
    project = Project(saved)
    with pytest.raises(SetError) as err:
        project.import_set(bad)
    message = str(err.value)
    assert name in message and expect.lower() in message.lower()
    shelf = [e.text for e in project.store.shelf()]
    project.close()
    assert shelf == ["Route this message."]
    assert _digest(saved) == before


def test_braces_in_data_are_kept_as_text(tmp_path):
    path = tmp_path / "braces.csv"
    path.write_text('id,message,department\n1,"Seat {row} {0} {__class__} }{",refund\n')
    project = Project(tmp_path / "p.hone")
    project.import_set(path)
    _, qset = project.current_set()
    assert qset.items[0].fields["message"] == "Seat {row} {0} {__class__} }{"
    project.close()


def test_sample_recipe_sets_check_draft_and_title(tmp_path, sample_dir):
    project = Project(tmp_path / "p.hone")
    project.import_set(sample_dir / "fare_arithmetic.csv")
    assert project.check().kind == "number"
    assert project.draft().text and project.title() == "Work out fares and times"
    project.close()


def test_keep_twice_gives_one_entry_and_set_aside_flips_it(tmp_path):
    project = Project(tmp_path / "p.hone")
    w = Wording("Say the desk.", "system")
    first = project.keep(w).value
    assert project.keep(w).value.id == first.id
    assert project.set_aside(w, note="vague").value.decision == "set_aside"
    assert len(project.store.shelf()) == 1
    project.close()
