"""``honebench transfer``: the transfer check from the command line."""
from __future__ import annotations

import json
import shutil

import pytest
from scipy.stats import binomtest

from honebench import cli
from honebench.core.engines.model_files import bundled_model_path
from honebench.core.project import Project
from honebench.core.wording import Wording

from .test_cli import honebench

V1 = Wording("Which department should handle this message? Reply with one of: refund, "
             "booking_change, lost_property, accessibility, timetable.", "before")
V2 = Wording("Route the passenger's message to one department.", "system")


@pytest.fixture
def graded(tmp_path, sample_dir, local_engine):
    """A project whose v1 and v2 were graded by the bundled model on 6 tuning items."""
    path = tmp_path / "desk.hone"
    project = Project(path)
    project.import_set(sample_dir / "passenger_desk_routing.csv")
    for wording in (V1, V2):
        project.grade(local_engine, wording, limit=6)
    project.close()
    return path


@pytest.mark.model
def test_transfer_json_per_version(graded, tmp_path, capsys):
    # the bundled weights under another file name: another engine to the cache (its
    # fingerprint names the file), the same model, so it must score exactly the same
    copy = tmp_path / "SmolLM2-copy.gguf"
    shutil.copy(bundled_model_path(), copy)
    assert cli.main(["transfer", str(graded), "v1", "v2", "--model", str(copy), "--limit", "6",
                     "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    assert [v["version"] for v in out] == ["v1", "v2"]
    project = Project(graded)
    rows = {r.entry.label: r for r in project.shelf_rows()}
    for v in out:
        assert v["n"] == 6 and v["there"]["engine"] == "SmolLM2-copy.gguf"
        assert v["here"]["engine"] == "bundled SmolLM2-135M"
        # the graded engine's runs were reused: they are the shelf's scores
        assert v["here"]["passed"] == rows[v["version"]].tuning.passed
        assert v["there"]["passed"] == v["here"]["passed"]
        lo, hi = v["there"]["interval"]
        assert 0 <= lo <= v["there"]["score"] <= hi <= 1
        # reference: scipy.stats.binomtest on the discordant pairs (exact McNemar test)
        discordant = v["fixed_there"] + v["broken_there"]
        expected = 1.0 if discordant == 0 else binomtest(v["fixed_there"], discordant).pvalue
        assert v["p_value"] == pytest.approx(expected)
        assert v["rank_here"] == v["rank_there"] and v["flags"] == []
        assert "noisy" in v["caution"]
    assert len(project.store.runs()) == 2  # nothing graded again on the bundled model
    assert len(project.store.runs(purpose="transfer")) == 2
    project.close()


@pytest.mark.model
def test_transfer_text_names_both_engines_and_the_caution(graded, tmp_path, capsys):
    copy = tmp_path / "other.gguf"
    shutil.copy(bundled_model_path(), copy)
    assert cli.main(["transfer", str(graded), "v2", "--model", str(copy), "--limit", "6"]) == 0
    text = capsys.readouterr().out
    assert "here = bundled SmolLM2-135M, there = other.gguf" in text
    assert "v2: here" in text and "95% interval" in text and "noisy" in text


def test_transfer_refuses_bad_input_with_exit_2(tmp_path, sample_dir):
    project = Project(tmp_path / "desk.hone")
    project.import_set(sample_dir / "passenger_desk_routing.csv")
    project.keep(V1)
    project.close()
    missing = honebench("transfer", tmp_path / "desk.hone", "v1", "--model",
                        tmp_path / "nowhere.gguf", home=tmp_path, check=False)
    assert missing.returncode == 2 and "nowhere.gguf" in missing.stderr
    assert "Traceback" not in missing.stderr
    unknown = honebench("transfer", tmp_path / "desk.hone", "v7", "--endpoint",
                        "http://127.0.0.1:9/v1", home=tmp_path, check=False)
    assert unknown.returncode == 2 and "no version 'v7'" in unknown.stderr
    bad_url = honebench("transfer", tmp_path / "desk.hone", "v1", "--endpoint", "localhost",
                        home=tmp_path, check=False)
    assert bad_url.returncode == 2 and "must start with http://" in bad_url.stderr
    neither = honebench("transfer", tmp_path / "desk.hone", "v1", home=tmp_path, check=False)
    assert neither.returncode == 2 and "--model" in neither.stderr
    # nothing was graded or saved
    project = Project(tmp_path / "desk.hone")
    assert project.store.runs(purpose=None) == [] and project.latest_transfer() is None
    project.close()
