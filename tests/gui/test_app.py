"""`honebench gui` as a command: the snapshot mode, the first run's demo project, a question
set or a missing file as the source. Each runs in its own process with private settings."""
from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

import pytest
from PySide6.QtCore import QSettings

from honebench.core.project import Project

from .pictures import non_blank

pytestmark = pytest.mark.model
ROOT = Path(__file__).resolve().parents[2]


def _env(tmp_path: Path, **extra) -> dict:
    return dict(os.environ, HONEBENCH_HOME=str(tmp_path / "home"),
                XDG_CONFIG_HOME=str(tmp_path / "config"), QT_QPA_PLATFORM="offscreen",
                PYTHONPATH=str(ROOT / "desktop") + os.pathsep + os.environ.get("PYTHONPATH", ""),
                **extra)


def _gui(tmp_path: Path, *args: str, **extra) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "honebench.cli", "gui", *args],
                          env=_env(tmp_path, **extra), capture_output=True, text=True,
                          timeout=600)


def test_snapshot_command_grades_and_saves_a_picture(tmp_path, sample_dir):
    project = Project(tmp_path / "snap.hone")
    project.import_set(sample_dir / "passenger_desk_routing.csv")
    project.close()
    out = tmp_path / "window.png"
    done = _gui(tmp_path, str(tmp_path / "snap.hone"), "--snapshot", str(out), "--grade",
                HONEBENCH_GRADE_LIMIT="4")
    assert done.returncode == 0, done.stderr
    assert non_blank(out)
    project = Project(tmp_path / "snap.hone")
    runs = project.store.runs()
    assert len(runs) == 1 and runs[0].n_items == 4 and runs[0].status == "finished"
    assert project.store.run_counts(runs[0].id)[1] == 4
    project.close()


def test_snapshot_of_a_missing_project_fails_with_a_message(tmp_path):
    done = _gui(tmp_path, str(tmp_path / "nowhere.hone"), "--snapshot", str(tmp_path / "x.png"))
    assert done.returncode == 2
    assert "nowhere.hone" in done.stderr and "does not exist" in done.stderr
    assert not (tmp_path / "x.png").exists()


def test_first_run_builds_the_demo_project_and_remembers_it(tmp_path):
    out = tmp_path / "first.png"
    done = _gui(tmp_path, "--snapshot", str(out))
    assert done.returncode == 0, done.stderr
    demo = tmp_path / "home" / "projects" / "ferry-demo.hone"
    project = Project(demo)
    _set_id, qset = project.current_set()
    assert qset.name == "passenger_desk_routing" and len(qset) == 120
    assert project.draft().text  # a starter wording, ready to grade
    project.close()
    conf = QSettings(str(tmp_path / "config" / "honebench" / "honebench.conf"),
                     QSettings.Format.IniFormat)
    assert Path(str(conf.value("last_project"))) == demo
    assert non_blank(out)


def test_a_question_set_as_source_gets_its_own_project(tmp_path, sample_dir):
    out = tmp_path / "set.png"
    done = _gui(tmp_path, str(sample_dir / "review_sentiment.csv"), "--snapshot", str(out))
    assert done.returncode == 0, done.stderr
    project = Project(tmp_path / "home" / "projects" / "review_sentiment.hone")
    _set_id, qset = project.current_set()
    assert qset.name == "review_sentiment" and qset.mapping.expected == "sentiment"
    assert project.check().kind == "label"
    project.close()
    assert non_blank(out)


def test_a_bad_grade_limit_is_ignored_with_a_message(monkeypatch, capsys):
    from honebench.gui.app import grade_limit

    monkeypatch.setenv("HONEBENCH_GRADE_LIMIT", "ten")
    assert grade_limit() is None
    assert "HONEBENCH_GRADE_LIMIT" in capsys.readouterr().err
    monkeypatch.setenv("HONEBENCH_GRADE_LIMIT", "7")
    assert grade_limit() == 7
