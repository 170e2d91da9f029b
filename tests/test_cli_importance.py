"""`honebench importance PROJECT vN`: the table, --json (one object per phrase), --saved,
and a bad version refused with exit 2. The fake engine answers (logic only)."""
from __future__ import annotations

import json

from honebench import cli
from honebench.core.project import Project
from honebench.core.wording import Wording
from tests.core.suggest_fixtures import small_project
from tests.fakes import FakeEngine

ROUTE = "Route the message to its department."
TEXT = ROUTE + " Reply with the department only."


def _project(tmp_path, sample_dir, monkeypatch):
    project = small_project(tmp_path, sample_dir)
    _, qset = project.current_set()
    key = {it.fields["message"]: it.expected for it in qset.items}
    project.keep(Wording(TEXT, "before"))
    path = project.path
    project.close()

    def answer(request):
        asked = " ".join(m["content"] for m in request.messages)
        if ROUTE not in asked:
            return "no idea"
        return next((exp for msg, exp in key.items() if msg in asked), "no idea")

    monkeypatch.setattr(cli, "open_engine", lambda _args: FakeEngine(answer))
    monkeypatch.setattr(cli, "preflight_engine", lambda _args: None)
    return path


def test_json_gives_one_object_per_phrase(tmp_path, sample_dir, monkeypatch, capsys):
    path = _project(tmp_path, sample_dir, monkeypatch)
    assert cli.main(["importance", str(path), "v1", "--json"]) == 0
    rows = json.loads(capsys.readouterr().out)
    assert [r["phrase"] for r in rows] == [ROUTE, "Reply with the department only."]
    for row in rows:
        assert {"phrase", "delta", "interval", "fixed", "broken", "p_value"} <= set(row)
        low, high = row["interval"]
        assert low <= row["delta"] <= high
    assert rows[0]["broken"] == 11 and rows[0]["delta"] == -1.0 and rows[0]["measurable"]
    assert rows[1]["verdict"] == "no measurable effect"
    # the saved result prints again without a model
    monkeypatch.setattr(cli, "open_engine", lambda _args: 1 / 0)
    assert cli.main(["importance", str(path), "v1", "--saved", "--json"]) == 0
    assert json.loads(capsys.readouterr().out) == rows


def test_the_table_and_a_bad_version(tmp_path, sample_dir, monkeypatch, capsys):
    path = _project(tmp_path, sample_dir, monkeypatch)
    assert cli.main(["importance", str(path), "v1", "--no-early-stop"]) == 0
    out = capsys.readouterr().out
    assert "v1 scores 11/11" in out and "(no measurable effect)" in out
    assert "-100 pts" in out and "noisy" in out
    assert cli.main(["importance", str(path), "v7"]) == 2
    err = capsys.readouterr().err
    assert "no version 'v7'" in err and "it holds v1" in err and "Traceback" not in err
    assert cli.main(["importance", str(path), "v1", "--saved"]) == 0  # saved by the run
    project = Project.open(path).value
    assert project.saved_importance(project.shelf_entry("v1").id) is not None
    project.close()
