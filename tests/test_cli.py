"""The command line, run as a user runs it (a subprocess of the installed entry point)."""
from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]


def honebench(*args, home, check=True):
    done = subprocess.run(
        [sys.executable, "-m", "honebench.cli", *map(str, args)], capture_output=True,
        text=True, cwd=ROOT, timeout=600,
        env={"HONEBENCH_HOME": str(home), "PYTHONPATH": str(ROOT / "desktop"),
             "PATH": "/usr/bin:/bin", "QT_QPA_PLATFORM": "offscreen"})
    if check:
        assert done.returncode == 0, done.stderr
    return done


@pytest.mark.model
def test_grade_json_has_the_promised_fields(tmp_path, sample_dir):
    out = honebench("grade", sample_dir / "fare_arithmetic.csv", "--wording",
                    "Reply with the number only.", "--placement", "after", "--check", "number",
                    "--limit", "6", "--max-tokens", "12", "--json", home=tmp_path)
    data = json.loads(out.stdout)
    for key in ("passed", "total", "score", "interval", "run_id", "fingerprint", "marks"):
        assert key in data
    assert data["total"] == 6 and len(data["marks"]) == 6
    lo, hi = data["interval"]
    assert 0 <= lo <= data["score"] <= hi <= 1
    assert set(data["marks"][0]) >= {"id", "output", "extracted", "passed", "why", "tokens",
                                     "seconds"}
    # the same again is answered from the project's cache
    again = json.loads(honebench("grade", sample_dir / "fare_arithmetic.csv", "--wording",
                                 "Reply with the number only.", "--placement", "after",
                                 "--check", "number", "--limit", "6", "--max-tokens", "12",
                                 "--json", home=tmp_path).stdout)
    assert again["model_calls"] == 0 and again["passed"] == data["passed"]
    # cost: the marks' tokens added up; the re-grade from the cache costs what answering did
    cost = data["cost"]
    assert cost["total_prompt_tokens"] == sum(m["prompt_tokens"] for m in data["marks"])
    assert cost["mean_answer_tokens"] == round(
        sum(m["completion_tokens"] for m in data["marks"]) / 6, 2) and cost["mean_seconds"] > 0
    for key in ("mean_prompt_tokens", "mean_answer_tokens", "mean_seconds", "total_seconds"):
        assert again["cost"][key] == cost[key]


@pytest.mark.model
def test_grade_text_shows_score_interval_and_label_table(tmp_path, sample_dir, ):
    wording = tmp_path / "my.txt"
    wording.write_text("Which desk handles this? Reply with one word.\n")
    out = honebench("grade", sample_dir / "passenger_desk_routing.csv", "--wording-file",
                    wording, "--check", "label", "--limit", "5", "--max-tokens", "8",
                    home=tmp_path).stdout
    assert "95% interval" in out and "precision" in out and "confusion" in out
    assert "overfit" in out  # the caution is always printed


def test_bad_set_gives_a_message_and_exit_code_2(tmp_path):
    bad = tmp_path / "empty.csv"
    bad.write_text("")
    done = honebench("grade", bad, "--wording", "x", home=tmp_path, check=False)
    assert done.returncode == 2
    assert "empty.csv" in done.stderr and "Traceback" not in done.stderr
    assert not (tmp_path / "projects").exists()  # nothing written


def test_bad_model_gives_a_message_and_exit_code_2(tmp_path, sample_dir):
    fake = tmp_path / "model.gguf"
    fake.write_bytes(b"not a model" * 200)
    done = honebench("grade", sample_dir / "review_sentiment.csv", "--wording", "x",
                     "--model", fake, home=tmp_path, check=False)
    assert done.returncode == 2 and "not a GGUF model file" in done.stderr


def test_help_lists_the_verbs(tmp_path):
    out = honebench("--help", home=tmp_path).stdout
    for verb in ("grade", "bench", "gui"):
        assert verb in out


def test_readme_test_command_is_what_ci_runs():
    readme = (ROOT / "README.md").read_text()
    commands = [line for line in readme.split("```bash", 1)[1].split("```", 1)[0].splitlines()
                if line.strip()]
    assert len(commands) == 2 and "gui" in commands[0] and "pytest" in commands[1]
    assert commands[1] in (ROOT / ".ci" / "run").read_text().splitlines()


@pytest.mark.model
def test_suggest_confirm_compare_export_on_a_small_project(tmp_path, sample_dir):
    lines = (sample_dir / "passenger_desk_routing.csv").read_text().splitlines()[:17]
    small = tmp_path / "small.csv"
    small.write_text("\n".join(lines) + "\n")
    honebench("grade", small, "--wording", "Name the desk. Reply with one word.",
              "--placement", "before", "--check", "label", "--max-tokens", "8", home=tmp_path)
    project = tmp_path / "projects" / "small.hone"
    cards = json.loads(honebench("suggest", project, "--strategy", "phrase-edits", "--count",
                                 "2", "--max-tokens", "8", "--json", home=tmp_path).stdout)
    assert isinstance(cards, list) and cards
    for card in cards:
        assert set(card) >= {"wording", "score", "interval", "fixed", "broken", "strategy"}
        assert card["strategy"] == "phrase-edits" and card["total"] == 11
    from honebench.core.project import Project
    from honebench.core.wording import Wording

    p = Project(project)
    p.keep(p.draft())
    p.keep(Wording(cards[0]["wording"], "before"), origin="phrase-edits")
    p.close()
    out = honebench("confirm", project, "v1", "--max-tokens", "8", home=tmp_path).stdout
    assert "held-out items" in out and "/5" in out
    out = honebench("compare", project, "v1", "v2", home=tmp_path).stdout
    assert "On the same 11 items" in out
    report = tmp_path / "r.html"
    honebench("export", project, "--html", report, "--text", tmp_path / "w.txt", home=tmp_path)
    assert "<html" in report.read_text().lower()
    assert (tmp_path / "w.txt").read_text().strip()
