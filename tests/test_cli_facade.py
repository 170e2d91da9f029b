"""The CLI and the window share one facade: a CLI grade lands on the shelf, is reported by
export, and is answered from the cache when the window's operation grades it again."""
from __future__ import annotations

import json
import re

import pytest

from honebench.core.project import Project
from honebench.core.wording import Wording
from tests.test_cli import honebench

WORDING = "Name the desk that should answer this message. Reply with one word."


def _small_set(tmp_path, sample_dir, rows: int = 17):
    lines = (sample_dir / "passenger_desk_routing.csv").read_text().splitlines()[:rows]
    path = tmp_path / "small.csv"
    path.write_text("\n".join(lines) + "\n")
    return path


@pytest.mark.model
def test_cli_grade_then_the_same_grade_in_the_facade_comes_from_the_cache(
        tmp_path, sample_dir, local_engine):
    small = _small_set(tmp_path, sample_dir)
    out = json.loads(honebench("grade", small, "--wording", WORDING, "--placement", "before",
                               "--check", "label", "--limit", "4", "--project",
                               tmp_path / "task", "--json", home=tmp_path).stdout)
    assert out["model_calls"] == 4 and out["version"] == "v1"
    project = Project.open(tmp_path / "task.hone").value  # the extension was added
    try:
        again = project.grade(local_engine, Wording(WORDING, "before"), limit=4).value
        assert again.outcome.model_calls == 0  # default settings on both fronts: same keys
        assert again.score.passed == out["passed"] and again.entry.label == "v1"
    finally:
        project.close()


@pytest.mark.model
def test_cli_grade_then_export_reports_the_wording_with_score_n_and_interval(
        tmp_path, sample_dir):
    small = _small_set(tmp_path, sample_dir)
    target = tmp_path / "desk.hone"
    out = json.loads(honebench("grade", small, "--wording", WORDING, "--placement", "before",
                               "--check", "label", "--limit", "5", "--max-tokens", "8",
                               "--project", target, "--json", home=tmp_path).stdout)
    report = tmp_path / "r.html"
    honebench("export", tmp_path / "desk", "--html", report, home=tmp_path)
    html = report.read_text()
    assert "No finished grade runs" not in html and "Nothing on the shelf" not in html
    shelf = html.split('<section id="shelf">', 1)[1].split("</section>", 1)[0]
    assert WORDING in shelf and "not decided" in shelf
    passed = out["passed"]
    low, high = (round(x * 100) for x in out["interval"])
    # the score as core.stats.Score.text() words it: passes/n and the 95% interval
    assert re.search(rf"\({passed}/5, 95% interval {low}–{high}%\)", shelf)


def test_grade_refuses_a_project_path_with_another_extension(tmp_path, sample_dir):
    done = honebench("grade", sample_dir / "review_sentiment.csv", "--wording", "x",
                     "--project", tmp_path / "p.honebench", home=tmp_path, check=False)
    assert done.returncode == 2 and "Traceback" not in done.stderr
    assert "p.honebench" in done.stderr and ".hone" in done.stderr
    assert not (tmp_path / "p.honebench").exists() and not (tmp_path / "projects").exists()


def test_every_verb_refuses_the_same_wrong_extension(tmp_path):
    for verb in (["suggest"], ["hone"], ["confirm"], ["compare"], ["export"]):
        args = {"confirm": ["v1"], "compare": ["v1", "v2"], "export": ["--html", "r.html"]}
        done = honebench(*verb, tmp_path / "p.honebench", *args.get(verb[0], []),
                         home=tmp_path, check=False)
        assert done.returncode == 2 and "end in .hone" in done.stderr, verb


def test_cli_keeps_the_wording_exactly_as_given(tmp_path, sample_dir, monkeypatch, capsys):
    """A trailing space at the start of the answer changes the prompt, so the CLI keeps it
    as the window does (stripping it made the two fronts miss each other's cache); a
    wording file loses only its final line break."""
    from honebench import cli
    from tests.fakes import FakeEngine

    monkeypatch.setattr(cli, "open_engine", lambda _args: FakeEngine(lambda _r: "refund"))
    project_path = tmp_path / "exact.hone"
    head = "Department (refund or timetable): "
    assert cli.main(["grade", str(_small_set(tmp_path, sample_dir)), "--wording", head,
                     "--placement", "answer", "--project", str(project_path)]) == 0
    wording_file = tmp_path / "w.txt"
    wording_file.write_text("Route it.  \n", encoding="utf-8")
    assert cli.main(["grade", str(project_path), "--wording-file", str(wording_file)]) == 0
    capsys.readouterr()
    project = Project.open(project_path).value
    texts = [row.entry.text for row in project.shelf_rows()]
    project.close()
    assert texts == [head, "Route it.  "]
