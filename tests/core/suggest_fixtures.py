"""A small project for suggestion tests: 16 routing items (11 tuning, 5 held out)."""
from __future__ import annotations

import csv

from honebench.core.project import Project
from honebench.core.sets import ColumnMapping


def small_project(tmp_path, sample_dir, n: int = 16) -> Project:
    with open(sample_dir / "passenger_desk_routing.csv", newline="", encoding="utf-8") as fh:
        rows = list(csv.DictReader(fh))[:n]
    path = tmp_path / "routing_small.csv"
    with open(path, "w", newline="", encoding="utf-8") as fh:
        writer = csv.DictWriter(fh, fieldnames=["id", "message", "department"])
        writer.writeheader()
        writer.writerows(rows)
    project = Project(tmp_path / "small.hone")
    project.import_set(path, ColumnMapping(inputs=("message",), expected="department", id="id"))
    from honebench.core.checks import CheckSpec

    project.set_check(CheckSpec(kind="label", labels=("refund", "booking_change",
                                                      "lost_property", "accessibility",
                                                      "timetable")))
    from honebench.core.wording import Wording

    project.save_draft(Wording("Which department handles this message? Reply with one of: "
                               "refund, booking_change, lost_property, accessibility, "
                               "timetable.", "before"))
    return project
