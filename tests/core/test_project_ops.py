"""The application facade: each operation's result and Changes, the shelf rule of grading,
settings shared by both fronts, progress events and the project-file extension rule.
Logic only: the fake engine answers (tests/fakes.py)."""
from __future__ import annotations

import threading
from dataclasses import fields

import pytest

from honebench.core.changes import EVERYTHING, NOTHING, Changes
from honebench.core.checks import CheckSpec
from honebench.core.engines.base import Params
from honebench.core.events import Finished, Marked, Stage, Started
from honebench.core.project import Project, project_file
from honebench.core.settings import ProjectSettings
from honebench.core.wording import Wording
from tests.core.suggest_fixtures import small_project
from tests.fakes import FakeEngine

GRADED = Changes(shelf=True, runs=True, marks=True)
W = Wording("Name the desk for this message. One word.", "before")


@pytest.fixture
def project(tmp_path, sample_dir):
    proj = small_project(tmp_path, sample_dir)
    yield proj
    proj.close()


def test_open_create_and_import_say_everything_changed(tmp_path, sample_dir):
    created = Project.create(tmp_path / "new")
    assert created.changes == EVERYTHING and created.value.path.name == "new.hone"
    done = created.value.import_set(sample_dir / "fare_arithmetic.csv",
                                    check=CheckSpec(kind="number"))
    assert done.changes == EVERYTHING and isinstance(done.value, int)
    assert created.value.check().kind == "number"
    created.value.close()
    opened = Project.open(tmp_path / "new.hone")
    assert opened.changes == EVERYTHING and opened.value.has_set()
    opened.value.close()
    with pytest.raises(ValueError, match="exists already"):
        Project.create(tmp_path / "new.hone")


def test_settings_start_from_params_and_persist(project):
    defaults = Params()
    s = project.settings()
    assert (s.max_tokens, s.temperature, s.seed) == (defaults.max_tokens,
                                                     defaults.temperature, defaults.seed)
    assert s.params() == Params(**{f.name: getattr(defaults, f.name) for f in fields(Params)})
    done = project.set_settings(ProjectSettings(max_tokens=7, temperature=0.5, seed=3))
    assert done.changes == Changes(settings=True)
    assert project.settings().max_tokens == 7
    assert project.settings().override(max_tokens=None, seed=9).seed == 9
    assert project.settings().override(max_tokens=None).max_tokens == 7
    with pytest.raises(ValueError, match="max tokens"):
        project.set_settings(ProjectSettings(max_tokens=0))
    assert project.settings().max_tokens == 7  # a refused setting saves nothing


def test_check_and_draft_change_settings_only(project):
    assert project.save_draft(W).changes == Changes(settings=True)
    assert project.draft() == W
    done = project.set_check(CheckSpec(kind="exact"))
    assert done.changes.settings and not done.changes.runs
    with pytest.raises(ValueError):
        project.set_check(CheckSpec(kind="pattern", pattern="("))


def test_grade_puts_the_wording_on_the_shelf_undecided_and_links_the_run(project):
    engine = FakeEngine(lambda r: "refund")
    done = project.grade(engine, W, limit=4)
    assert done.changes == GRADED | Changes(settings=True)
    result = done.value
    assert result.entry.decision == "" and result.entry.text == W.text
    assert result.run.wording_id == result.entry.id and result.score.total == 4
    assert project.draft() == W
    rows = project.shelf_rows()
    assert [r.entry.id for r in rows] == [result.entry.id]
    assert rows[0].tuning == result.score  # the shelf shows it, with its n
    # grading the same wording again adds no second shelf entry and costs no model call
    again = project.grade(engine, W, limit=4).value
    assert again.entry.id == result.entry.id and again.outcome.model_calls == 0
    assert engine.calls == 4


def test_grade_sends_started_marked_finished(project):
    events = []
    project.grade(FakeEngine(), W, limit=3, on_event=events.append)
    kinds = [type(e) for e in events]
    assert kinds == [Started, Marked, Marked, Marked, Finished]
    assert events[0].total == 3 and "v1" in events[0].what
    assert [e.progress.done for e in events[1:4]] == [1, 2, 3]
    assert events[-1].status == "finished"


def test_settings_override_is_one_run_only_and_changes_the_cache_key(project):
    engine = FakeEngine()
    project.grade(engine, W, limit=2)
    project.grade(engine, W, limit=2, settings=project.settings().override(max_tokens=5))
    assert engine.calls == 4  # other settings, other cache entries
    assert project.settings() == ProjectSettings()  # nothing saved
    project.grade(engine, W, limit=2)
    assert engine.calls == 4


def test_an_empty_wording_or_split_is_refused_before_anything_runs(project):
    engine = FakeEngine()
    with pytest.raises(ValueError, match="empty"):
        project.grade(engine, Wording("  ", "before"))
    assert engine.calls == 0 and project.store.runs() == []


def test_shelf_operations_change_the_shelf(project):
    kept = project.keep(W)
    assert kept.changes == Changes(shelf=True) and kept.value.decision == "kept"
    aside = project.set_aside(kept.value.id, note="too terse")
    assert aside.value.decision == "set_aside" and aside.value.id == kept.value.id
    noted = project.set_note(kept.value.id, "try a longer one")
    assert noted.changes == Changes(shelf=True) and noted.value.note == "try a longer one"
    assert project.keep(kept.value.id).value.decision == "kept"
    other = Wording("Which desk?", "system")
    project.save_draft(other)
    restored = project.restore(kept.value.id)
    assert restored.changes == Changes(settings=True) and project.draft() == W
    with pytest.raises(ValueError, match="empty"):
        project.keep(Wording("", "system"))


def test_confirm_grades_held_out_items_of_a_version(project):
    entry = project.keep(W).value
    done = project.confirm(FakeEngine(), entry.id)
    assert done.changes == GRADED
    _, qset = project.current_set()
    assert done.value.score.total == len(qset.held_out()) and "v1" in done.value.text()
    assert project.shelf_rows()[0].held_out == done.value.score


def test_confirm_that_is_cancelled_says_so_and_keeps_marks(project):
    entry = project.keep(W).value
    cancel = threading.Event()
    engine = FakeEngine(on_call=lambda n: cancel.set() if n == 2 else None)
    with pytest.raises(ValueError, match="cancelled"):
        project.confirm(engine, entry.id, cancel=cancel)
    run = project.store.runs()[-1]
    assert run.status == "cancelled" and project.store.run_counts(run.id)[1] >= 1


def test_compare_grades_the_editors_unsaved_wording_first(project):
    engine = FakeEngine(lambda r: "refund" if "desk" in str(r.messages) else "none")
    first = project.grade(engine, W).value.entry
    editor = Wording("Say the department.", "before")
    done = project.compare(engine, first.id, editor)
    assert done.changes == GRADED
    assert (done.value.name_a, done.value.name_b, done.value.n) == ("v1", "editor (v2)", 11)
    assert project.shelf_entry("v2").text == editor.text
    # both graded now: no engine needed, nothing changes
    again = project.compare(None, first.id, editor)
    assert again.changes == NOTHING and again.value.run_b == done.value.run_b


def test_compare_without_an_engine_names_what_is_not_graded(project):
    a = project.keep(W).value
    b = project.keep(Wording("Other.", "before")).value
    with pytest.raises(ValueError, match="v1 is not graded on the tuning items"):
        project.compare(None, a.id, b.id)


def test_exports_change_nothing(project, tmp_path):
    project.grade(FakeEngine(), W, limit=3)
    project.keep(W)
    for done in (project.export_report(tmp_path / "r.html"),
                 project.export_marks(tmp_path / "m.csv"),
                 project.export_wording(tmp_path / "w.txt")):
        assert done.changes == NOTHING and done.value.exists()
    assert (tmp_path / "w.txt").read_text() == W.text + "\n"


def test_suggest_sends_stages_and_marks_and_changes_runs(project):
    def answer(req):
        text = "\n".join(m["content"] for m in req.messages)
        return "Name the one desk for it." if "instruction" in text.lower() else "refund"

    events = []
    done = project.suggest(FakeEngine(answer), "rephrase", count=2, on_event=events.append)
    assert done.changes == Changes(shelf=True, runs=True, marks=True)
    assert any(isinstance(e, Stage) for e in events) and isinstance(events[-1], Finished)
    assert any(isinstance(e, Marked) for e in events)


@pytest.mark.parametrize("given,expected", [("task", "task.hone"), ("task.hone", "task.hone"),
                                            ("dir/t", "dir/t.hone")])
def test_project_file_adds_the_extension(tmp_path, given, expected):
    assert project_file(tmp_path / given) == tmp_path / expected


@pytest.mark.parametrize("given", ["p.honebench", "p.csv", "p.sqlite"])
def test_project_file_refuses_another_extension_with_the_reason(tmp_path, given):
    with pytest.raises(ValueError, match=r"end in \.hone"):
        Project.open(tmp_path / given, create=True)
    assert list(tmp_path.iterdir()) == []  # nothing written


def test_opening_a_missing_project_is_refused(tmp_path):
    with pytest.raises(ValueError, match="does not exist"):
        Project.open(tmp_path / "missing")
    assert not (tmp_path / "missing.hone").exists()


def test_preview_set_reads_without_writing(tmp_path, sample_dir):
    from honebench.core.project import preview_set

    head, mapping, problems, check = preview_set(sample_dir / "fare_arithmetic.csv")
    assert len(head) > 0 and check.kind == "number" and mapping is not None
    assert list(tmp_path.iterdir()) == []


def test_open_demo_builds_the_routing_project_once(tmp_path):
    done = Project.open_demo(tmp_path / "demo")
    project = done.value
    assert done.changes == EVERYTHING and project.current_set()[1].path.endswith(
        "passenger_desk_routing.csv")
    project.close()
    again = Project.open_demo(tmp_path / "demo").value
    assert again.store.set_ids() == [1]
    again.close()
