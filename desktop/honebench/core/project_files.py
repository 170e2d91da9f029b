"""Where project files live and what they are called: one extension for every verb.

A path without an extension gets ``.hone``; a path with another extension is refused up front
with the reason, before anything is written.
"""
from __future__ import annotations

import os
from pathlib import Path

from .recipes import sample_set_paths
from .store import PROJECT_SUFFIX

DEMO_SET = "passenger_desk_routing.csv"
DEMO_NAME = "ferry-demo" + PROJECT_SUFFIX


def project_file(path: str | Path) -> Path:
    """The project file a user means by ``path``: ``task`` -> ``task.hone``; ``task.hone``
    as it is; anything else (``task.honebench``, ``task.csv``) raises ValueError."""
    p = Path(path)
    if p.suffix == PROJECT_SUFFIX:
        return p
    if not p.suffix:
        return p.with_name(p.name + PROJECT_SUFFIX)
    raise ValueError(f"{p}: project files end in {PROJECT_SUFFIX}, not {p.suffix}; use "
                     f"{p.with_suffix(PROJECT_SUFFIX)} (or a name without an extension, which "
                     f"gets {PROJECT_SUFFIX} added)")


def projects_dir() -> Path:
    """Where projects made for a bare question set live ($HONEBENCH_HOME or ~/.honebench)."""
    root = Path(os.environ.get("HONEBENCH_HOME") or Path.home() / ".honebench")
    return root / "projects"


def default_project_path(set_path: str | Path) -> Path:
    """The project a bare question set gets: one per set, in the projects folder."""
    return projects_dir() / (Path(set_path).stem + PROJECT_SUFFIX)


def demo_set_path() -> Path:
    """The sample set the first-run project is built from."""
    for path in sample_set_paths():
        if path.name == DEMO_SET:
            return path
    raise LookupError(f"the sample set {DEMO_SET} is missing from this installation; "
                      "reinstall honebench or open a question set of your own")
