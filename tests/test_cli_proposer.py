"""`suggest` and `hone` with a suggestion engine of their own (--suggest-model,
--suggest-endpoint, or the project's setting): who wrote each suggestion is printed and
recorded; a bad one is refused before anything is saved."""
from __future__ import annotations

import json

import pytest

from honebench import cli
from honebench.cli import build_parser, suggest_engine_choice
from honebench.core.engines.choice import EngineChoice
from honebench.core.engines.model_files import bundled_model_path
from honebench.core.project import Project
from honebench.core.settings import ProjectSettings
from tests.core.suggest_fixtures import small_project
from tests.fakes import FakeEngine

REPHRASE_ASK = "Say this instruction again"  # the rephrase meta-prompt's words


def _project(tmp_path, sample_dir):
    project = small_project(tmp_path, sample_dir)
    path = project.path
    project.close()
    return path


def test_flags_make_the_choice_and_override_the_project(tmp_path):
    parse = build_parser().parse_args
    saved = EngineChoice.file(str(tmp_path / "saved.gguf"))
    args = parse(["suggest", "p.hone"])
    assert suggest_engine_choice(args) is None  # the graded engine writes
    assert suggest_engine_choice(args, saved) == saved  # the project's setting
    args = parse(["hone", "p.hone", "--suggest-model", "writer.gguf"])
    assert suggest_engine_choice(args, saved) == EngineChoice.file("writer.gguf")
    args = parse(["suggest", "p.hone", "--suggest-endpoint", "http://127.0.0.1:9/v1",
                  "--suggest-endpoint-model", "writer", "--timeout", "7"])
    assert suggest_engine_choice(args, saved) == EngineChoice.endpoint(
        "http://127.0.0.1:9/v1", "writer", timeout=7.0)  # --timeout when no own timeout
    args = parse(["suggest", "p.hone", "--suggest-endpoint", "http://127.0.0.1:9/v1",
                  "--suggest-timeout", "3"])
    assert suggest_engine_choice(args).timeout == 3.0


def test_bad_suggestion_engines_exit_2_and_save_nothing(tmp_path, sample_dir, capsys,
                                                       monkeypatch):
    path = _project(tmp_path, sample_dir)
    graded = FakeEngine()
    monkeypatch.setattr(cli, "open_engine", lambda _args: graded)
    fake = tmp_path / "writer.gguf"
    fake.write_bytes(b"not a model" * 200)
    for argv, words in (
            (["--suggest-model", str(fake)], "writer.gguf"),
            (["--suggest-endpoint", "127.0.0.1:8080"], "http://"),
            (["--suggest-model", str(fake), "--suggest-endpoint", "http://h/v1"], "not both")):
        assert cli.main(["suggest", str(path), "--strategy", "rephrase", *argv]) == 2
        err = capsys.readouterr().err
        assert err.startswith("honebench: ") and words in err and "Traceback" not in err
    # the project's own setting is used when no flag is given: the same file is refused
    project = Project(path)
    project.set_settings(ProjectSettings(suggest_engine=EngineChoice.file(str(fake))))
    project.close()
    assert cli.main(["hone", str(path), "--rounds", "1"]) == 2
    assert "writer.gguf" in capsys.readouterr().err
    assert graded.calls == 0
    check = Project(path)
    assert check.store.runs() == [] and check.store.shelf() == []
    check.close()


@pytest.mark.model
def test_the_bundled_model_given_as_a_file_writes_and_a_fake_grades(tmp_path, sample_dir,
                                                                   capsys, monkeypatch):
    """The proposer is the real bundled model, named by its GGUF file; the graded engine
    is a fake that gets the draft wrong and every other wording right, so the top
    suggestion beats the draft and --keep-best keeps it with its record."""
    path = _project(tmp_path, sample_dir)
    project = Project(path)
    draft = project.draft().text
    key = {it.fields["message"]: it.expected for it in project.current_set()[1].items}
    project.close()
    asked = []

    def answer(req):
        text = "\n".join(m["content"] for m in req.messages)
        asked.append(text)
        if draft in text:
            return "none"
        return next((exp for msg, exp in key.items() if msg in text), "none")

    monkeypatch.setattr(cli, "open_engine", lambda _args: FakeEngine(answer))
    model = str(bundled_model_path())
    code = cli.main(["suggest", str(path), "--strategy", "rephrase", "--count", "3",
                     "--suggest-model", model, "--keep-best", "--json"])
    assert code == 0
    cards = json.loads(capsys.readouterr().out)
    # the file given is the bundled model's own, so it is named as the bundled model
    label = EngineChoice.bundled().label()
    assert cards and all(c["proposer"] == label == c["inputs"]["proposer"] for c in cards)
    assert not any(REPHRASE_ASK in t for t in asked)  # the fake graded, never proposed
    project = Project(path)
    kept = [e for e in project.store.shelf() if e.origin == "rephrase"]
    assert len(kept) == 1 and kept[0].inputs["proposer"] == label
    assert kept[0].text == cards[0]["wording"]
    project.close()

    # the words a person reads
    code = cli.main(["suggest", str(path), "--strategy", "rephrase", "--count", "2",
                     "--suggest-model", model])
    out = capsys.readouterr().out
    assert code == 0 and f"written by {label}" in out
