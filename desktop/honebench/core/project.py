"""The project: one task's question set, shelf, runs and settings in one file.

A thin facade over the store that both fronts use (the GUI through background jobs, the CLI
directly). It knows the current set, the answer check and the editor draft.
"""
from __future__ import annotations

import os
from pathlib import Path

from dataclasses import dataclass

from .check_fit import check_for_new_set
from .checks import CheckSpec
from .records import ShelfEntry
from .stats import Score, score
from .recipes import recipe_for
from .sets import ColumnMapping, QuestionSet, load_set
from .store import PROJECT_SUFFIX, Store
from .summary import RunSummary, summarize
from .wording import Wording


def projects_dir() -> Path:
    """Where projects made for a bare question set live ($HONEBENCH_HOME or ~/.honebench)."""
    root = Path(os.environ.get("HONEBENCH_HOME") or Path.home() / ".honebench")
    return root / "projects"


def default_project_path(set_path: str | Path) -> Path:
    return projects_dir() / (Path(set_path).stem + PROJECT_SUFFIX)


@dataclass(frozen=True)
class ShelfRow:
    """A shelf entry with its latest finished scores on the current set."""

    entry: ShelfEntry
    tuning: Score | None
    held_out: Score | None


def read_question_set(set_path: str | Path, mapping: ColumnMapping | None = None, *,
                      split_seed: int = 0, held_out_fraction: float = 0.3,
                      sheet: str | int | None = None, skip_rows: int = 0) -> QuestionSet:
    """Load a set; a sample set's recipe gives its mapping when none is given. ``sheet``
    and ``skip_rows``: see set_reading.read_table. Raises SetError naming the file, row and
    column; writes nothing."""
    recipe = recipe_for(set_path)
    if mapping is None and recipe:
        mapping = ColumnMapping(inputs=tuple(recipe["inputs"]), expected=recipe["expected"],
                                id=recipe.get("id", "id"))
    return load_set(set_path, mapping, split_seed=split_seed,
                    held_out_fraction=held_out_fraction, sheet=sheet, skip_rows=skip_rows)


class Project:
    def __init__(self, path: str | Path):
        self.path = Path(path)
        self.path.parent.mkdir(parents=True, exist_ok=True)
        self.store = Store(self.path)

    # -- the question set ----------------------------------------------------------------
    def import_set(self, set_path: str | Path, mapping: ColumnMapping | None = None, *,
                   split_seed: int = 0, held_out_fraction: float = 0.3,
                   sheet: str | int | None = None, skip_rows: int = 0) -> int:
        """Read and validate a question set, then store it and make it current."""
        qset = read_question_set(set_path, mapping, split_seed=split_seed,
                                 held_out_fraction=held_out_fraction, sheet=sheet,
                                 skip_rows=skip_rows)
        return self.add_set(qset)

    def add_set(self, qset: QuestionSet) -> int:
        """Store an already validated set and make it current. A sample set's recipe
        supplies the answer check, a starter wording and a title when none are set."""
        set_id = self.store.add_set(qset)
        previous = self.store.setting("current_set")
        self.store.set_setting("current_set", set_id)
        recipe = recipe_for(qset.path)
        if previous is not None and previous != set_id and self.store.setting("check"):
            # labels belong to the set: guess them again rather than keep the last set's
            self.set_check(check_for_new_set(self.check(), recipe and recipe["check"]))
        if recipe:
            if self.store.setting("check") is None:
                self.store.set_setting("check", CheckSpec.from_dict(recipe["check"]).as_dict())
            if self.store.setting("draft") is None:
                self.save_draft(Wording(recipe["starter_wording"], recipe.get("placement", "system")))
            if self.store.setting("title") is None:
                self.store.set_setting("title", recipe.get("title", qset.name))
        return set_id

    def current_set(self) -> tuple[int, QuestionSet]:
        set_id = self.store.setting("current_set")
        if set_id is None:
            ids = self.store.set_ids()
            if not ids:
                raise LookupError(f"project {self.path} has no question set yet; import one")
            set_id = ids[-1]
        return set_id, self.store.get_set(set_id)

    # -- check and draft -----------------------------------------------------------------
    def check(self) -> CheckSpec:
        saved = self.store.setting("check")
        return CheckSpec.from_dict(saved) if saved else CheckSpec()

    def set_check(self, spec: CheckSpec) -> None:
        spec.validate()
        self.store.set_setting("check", spec.as_dict())

    def draft(self) -> Wording:
        saved = self.store.setting("draft") or {}
        return Wording(saved.get("text", ""), saved.get("placement", "system"))

    def save_draft(self, wording: Wording) -> None:
        self.store.set_setting("draft", {"text": wording.text, "placement": wording.placement})

    def title(self) -> str:
        return self.store.setting("title") or self.path.stem

    # -- the shelf -----------------------------------------------------------------------
    def keep(self, wording: Wording, *, parent_id: int | None = None, origin: str = "typed",
             note: str = "", inputs: dict | None = None) -> ShelfEntry:
        """Put a wording on the shelf as kept (the existing entry if already there)."""
        found = self.store.find_wording(wording.text, wording.placement)
        if found is not None:
            if found.decision != "kept":
                self.store.decide(found.id, "kept", note)
            return self.store.wording(found.id)
        return self.store.add_wording(wording.text, wording.placement, parent_id=parent_id,
                                      origin=origin, note=note, inputs=inputs, decision="kept")

    def set_aside(self, wording: Wording, *, parent_id: int | None = None,
                  origin: str = "typed", note: str = "", inputs: dict | None = None) -> ShelfEntry:
        """Record a wording on the shelf as set aside, so it is never proposed again."""
        found = self.store.find_wording(wording.text, wording.placement)
        if found is None:
            return self.store.add_wording(wording.text, wording.placement, parent_id=parent_id,
                                          origin=origin, note=note, inputs=inputs,
                                          decision="set_aside")
        self.store.decide(found.id, "set_aside", note)
        return self.store.wording(found.id)

    def shelf_rows(self) -> list[ShelfRow]:
        set_id = self.store.setting("current_set")
        latest: dict[tuple[str, str, str], int] = {}
        for run in self.store.runs():
            if run.status == "finished" and run.set_id == set_id:
                latest[(run.wording_text, run.placement, run.split)] = run.id
        rows = []
        for entry in self.store.shelf():
            found = [latest.get((entry.text, entry.placement, split)) for split in
                     ("tuning", "held_out")]
            tuning, held = (self.run_score(r) if r else None for r in found)
            rows.append(ShelfRow(entry, tuning, held))
        return rows

    def run_score(self, run_id: int) -> Score:
        passed, total = self.store.run_counts(run_id)
        return score(passed, total)

    # -- runs ----------------------------------------------------------------------------
    def summary(self, run_id: int) -> RunSummary:
        run = self.store.run(run_id)
        qset = self.store.get_set(run.set_id)
        check = CheckSpec.from_dict(run.check)
        return summarize(self.store.marks(run_id), qset.items, check.kind,
                         check.labels or qset.labels(), status=run.status, planned=run.n_items)

    def close(self) -> None:
        self.store.close()
