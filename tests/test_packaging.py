"""A normal (non-editable) install works outside the checkout: the wheel holds every
subpackage, the resources and the sample sets; `honebench --help` and a small real grade run
from a folder that is not the checkout."""
from __future__ import annotations

import json
import os
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
SOURCES = ("pyproject.toml", "setup.py", "README.md", "desktop", "resources", "sample_sets")


def _run(args, **kwargs) -> subprocess.CompletedProcess:
    done = subprocess.run([str(a) for a in args], capture_output=True, text=True,
                          timeout=600, **kwargs)
    assert done.returncode == 0, done.stdout[-3000:] + done.stderr[-3000:]
    return done


@pytest.mark.wheel
@pytest.mark.model
def test_the_wheel_installs_and_grades_outside_the_checkout(tmp_path):
    # build from a copy, so the checkout gets no build/ or egg-info folders
    src = tmp_path / "src"
    src.mkdir()
    ignore = shutil.ignore_patterns("__pycache__", "*.egg-info", "*.pyc")
    for name in SOURCES:
        (shutil.copytree if (ROOT / name).is_dir() else shutil.copy2)(
            ROOT / name, src / name, **({"ignore": ignore} if (ROOT / name).is_dir() else {}))
    wheels, site = tmp_path / "wheels", tmp_path / "site"
    _run([sys.executable, "-m", "pip", "wheel", "--no-deps", "--no-build-isolation", "-q",
          "-w", wheels, src])
    (wheel,) = wheels.glob("honebench-*.whl")
    _run([sys.executable, "-m", "pip", "install", "--no-deps", "-q", "--target", site, wheel])

    elsewhere = tmp_path / "elsewhere"
    elsewhere.mkdir()
    env = dict(os.environ, PYTHONPATH=str(site), HONEBENCH_HOME=str(tmp_path / "home"),
               QT_QPA_PLATFORM="offscreen")
    env.pop("PYTHONSAFEPATH", None)
    probe = _run([sys.executable, "-c",
                  "import honebench, honebench.core.suggest.pipeline, "
                  "honebench.core.operations.grading, honebench.gui.app\n"
                  "from honebench.core.recipes import sample_sets_dir\n"
                  "from honebench.core.templates import resources_dir\n"
                  "print(honebench.__file__); print(sample_sets_dir()); print(resources_dir())"],
                 cwd=elsewhere, env=env).stdout.split()
    for path in probe:  # the installed copy, not the checkout
        assert Path(path).resolve().is_relative_to(site.resolve()), probe

    script = site / "bin" / "honebench"
    command = [script] if script.exists() else [sys.executable, "-m", "honebench.cli"]
    helped = _run([*command, "--help"], cwd=elsewhere, env=env).stdout
    for verb in ("grade", "suggest", "hone", "confirm", "compare", "export"):
        assert verb in helped

    sample = site / "honebench" / "sample_sets" / "fare_arithmetic.csv"
    out = json.loads(_run([*command, "grade", sample, "--wording",
                           "Reply with the number only.", "--limit", "2", "--max-tokens", "6",
                           "--project", elsewhere / "fares", "--json"],
                          cwd=elsewhere, env=env).stdout)
    assert out["total"] == 2 and len(out["marks"]) == 2
    assert (elsewhere / "fares.hone").exists()
