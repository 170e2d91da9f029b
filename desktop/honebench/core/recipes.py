"""Recommended set-ups for the bundled sample sets (sample_sets/recipes.json)."""
from __future__ import annotations

import json
from functools import lru_cache
from importlib import resources
from pathlib import Path


def sample_sets_dir() -> Path:
    """The folder holding the sample sets, installed or in a source checkout."""
    here = Path(__file__).resolve().parents[3] / "sample_sets"
    if (here / "recipes.json").exists():
        return here
    return Path(str(resources.files("honebench.sample_sets")))


@lru_cache(maxsize=1)
def _recipes() -> dict:
    path = sample_sets_dir() / "recipes.json"
    return json.loads(path.read_text(encoding="utf-8")) if path.exists() else {}


def recipe_for(path: str | Path) -> dict | None:
    """The recipe for a sample set by file name, or None for the user's own files."""
    return _recipes().get(Path(path).name)


def sample_set_paths() -> list[Path]:
    return [sample_sets_dir() / name for name in _recipes()]
