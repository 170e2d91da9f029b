"""Fixtures shared by the core tests."""
from __future__ import annotations

import pytest

from honebench.core.project import Project

ROUTING = "passenger_desk_routing.csv"


@pytest.fixture
def project(tmp_path, sample_dir):
    """A project holding the routing sample (a module may define its own ``project``)."""
    proj = Project(tmp_path / "task.hone")
    proj.import_set(sample_dir / ROUTING)
    yield proj
    proj.close()
