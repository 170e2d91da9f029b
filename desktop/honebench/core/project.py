"""The project: one task's question set, shelf, runs and settings in one file.

``Project`` is the application facade both fronts use (the window through background jobs,
the CLI directly). Every user act is one method returning ``Done(value, changes)``; the
``Changes`` say which of shelf, runs, marks, settings and set it touched, so the window
re-reads only those views. Long operations take an engine, ``on_event`` (typed progress
events, core/events.py) and a ``cancel`` event. Read methods return plain values.
The operations are grouped in core/operations/; this module holds opening, the question
set, the check, the draft, the settings and the read methods.
"""
from __future__ import annotations

from pathlib import Path

from .changes import EVERYTHING, Changes, Done
from .check_fit import check_for_new_set
from .checks import CheckSpec
from .compare import latest_run
from .cost import RunCost, run_cost as cost_of_run
from .operations.exports import ExportOps
from .operations.grading import GradingOps
from .operations.importance import ImportanceOps
from .operations.improve import ImproveOps
from .operations.shelf import ShelfOps
from .operations.transfer import TransferOps
from .project_files import (DEMO_NAME, DEMO_SET, default_project_path, demo_set_path,
                            project_file, projects_dir)
from .records import RunInfo, ShelfEntry
from .recipes import recipe_for
from .sets import ColumnMapping, QuestionSet, guess_mapping, load_set, read_table
from .settings import ProjectSettings
from .stats import Score, score
from .store import PROJECT_SUFFIX, Store
from .summary import RunSummary, summarize
from .views import SPLIT_WORDS, RunView, ShelfRow
from .wording import Wording

__all__ = ["Project", "ShelfRow", "RunView", "SPLIT_WORDS", "ProjectSettings", "project_file",
           "projects_dir", "default_project_path", "demo_set_path", "read_question_set",
           "column_mapping", "preview_set", "DEMO_NAME", "DEMO_SET", "PROJECT_SUFFIX"]


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


def column_mapping(set_path: str | Path, *, inputs=None, expected: str | None = None,
                   id: str | None = None, sheet: str | int | None = None,
                   skip_rows: int = 0) -> ColumnMapping | None:
    """A mapping from the columns the user named, the rest guessed from the file's header;
    None when nothing was named (the recipe or the guess then decides)."""
    if not (inputs or expected or id):
        return None
    from .sets import SetError

    columns = list(read_table(set_path, sheet=sheet, skip_rows=skip_rows).columns)
    try:
        guessed = guess_mapping(columns)
    except SetError:
        guessed = ColumnMapping(inputs=(), expected="")
    return ColumnMapping(inputs=tuple(inputs or guessed.inputs),
                         expected=expected or guessed.expected, id=id or guessed.id,
                         split=guessed.split)


def preview_set(set_path: str | Path, *, sheet: str | int | None = None,
                skip_rows: int = 0):
    """What the import dialog shows before anything is stored: (first rows, guessed mapping
    or None, problems found, the sample recipe's check or None). ``sheet`` and
    ``skip_rows`` as for ``import_set``. Writes nothing."""
    from .sets import preview

    head, mapping, problems = preview(set_path, sheet=sheet, skip_rows=skip_rows)
    recipe = recipe_for(set_path)
    return head, mapping, problems, CheckSpec.from_dict(recipe["check"]) if recipe else None


class Project(GradingOps, ShelfOps, ImproveOps, ExportOps, TransferOps, ImportanceOps):
    def __init__(self, path: str | Path):
        self.path = project_file(path)
        self.path.parent.mkdir(parents=True, exist_ok=True)
        self.store = Store(self.path)

    # -- opening -------------------------------------------------------------------------
    @classmethod
    def open(cls, path: str | Path, *, create: bool = False) -> Done["Project"]:
        """Open a project file; ``task`` means ``task.hone`` and another extension is
        refused. A missing file is created only with ``create``."""
        path = project_file(path)
        if not create and not path.exists():
            raise ValueError(f"{path} does not exist; grade a question set first "
                             "(`honebench grade SET ...`) or create the project in the window")
        return Done(cls(path), EVERYTHING)

    @classmethod
    def create(cls, path: str | Path) -> Done["Project"]:
        """A new, empty project file; refused when the file exists already."""
        path = project_file(path)
        if path.exists():
            raise ValueError(f"{path} exists already; open it, or choose another name")
        return Done(cls(path), EVERYTHING)

    @classmethod
    def open_demo(cls, path: str | Path | None = None) -> Done["Project"]:
        """The first-run project: the passenger desk routing sample, ready to grade."""
        project = cls(path or projects_dir() / DEMO_NAME)
        if not project.store.set_ids():
            project.import_set(demo_set_path())
        return Done(project, EVERYTHING)

    def close(self) -> None:
        self.store.close()

    # -- the question set ----------------------------------------------------------------
    def import_set(self, source: str | Path | QuestionSet,
                   mapping: ColumnMapping | None = None, *, check: CheckSpec | None = None,
                   split_seed: int = 0, held_out_fraction: float = 0.3,
                   sheet: str | int | None = None, skip_rows: int = 0) -> Done[int]:
        """Read and validate a question set (or take one already read), store it and make
        it current; ``check`` becomes the answer check. ``sheet`` and ``skip_rows`` choose
        what to read from a workbook or a file with title rows. Nothing is written if it is
        bad."""
        if check is not None:
            check.validate()
        qset = source if isinstance(source, QuestionSet) else read_question_set(
            source, mapping, split_seed=split_seed, held_out_fraction=held_out_fraction,
            sheet=sheet, skip_rows=skip_rows)
        set_id = self.add_set(qset)
        if check is not None:
            self.set_check(check)
        return Done(set_id, EVERYTHING)

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
                self.save_draft(Wording(recipe["starter_wording"],
                                        recipe.get("placement", "system")))
            if self.store.setting("title") is None:
                self.store.set_setting("title", recipe.get("title", qset.name))
        return set_id

    def has_set(self) -> bool:
        return bool(self.store.set_ids())

    def current_set(self) -> tuple[int, QuestionSet]:
        """(set id, set); LookupError when the project has no set yet."""
        set_id = self.store.setting("current_set")
        if set_id is None:
            ids = self.store.set_ids()
            if not ids:
                raise LookupError(f"project {self.path} has no question set yet; import one")
            set_id = ids[-1]
        return set_id, self.store.get_set(set_id)

    # -- check, draft, settings ------------------------------------------------------------
    def check(self) -> CheckSpec:
        saved = self.store.setting("check")
        return CheckSpec.from_dict(saved) if saved else CheckSpec()

    def set_check(self, spec: CheckSpec) -> Done[CheckSpec]:
        spec.validate()
        self.store.set_setting("check", spec.as_dict())
        return Done(spec, Changes(settings=True, shelf=True))

    def draft(self) -> Wording:
        saved = self.store.setting("draft") or {}
        return Wording(saved.get("text", ""), saved.get("placement", "system"))

    def save_draft(self, wording: Wording) -> Done[Wording]:
        self.store.set_setting("draft", {"text": wording.text, "placement": wording.placement})
        return Done(wording, Changes(settings=True))

    def settings(self) -> ProjectSettings:
        """Generation settings both fronts grade with (defaults from Params())."""
        return ProjectSettings.from_dict(self.store.setting("settings"))

    def set_settings(self, settings: ProjectSettings) -> Done[ProjectSettings]:
        settings.validate()
        self.store.set_setting("settings", settings.as_dict())
        return Done(settings, Changes(settings=True))

    def title(self) -> str:
        return self.store.setting("title") or self.path.stem

    # -- reading the shelf and runs ------------------------------------------------------
    def shelf_rows(self) -> list[ShelfRow]:
        """Every shelf entry with its latest finished tuning and held-out scores."""
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
            rows.append(ShelfRow(entry, tuning, held,
                                 cost_of_run(self.store, found[0]) if found[0] else None))
        return rows

    def shelf_entry(self, version: str | int) -> ShelfEntry:
        """A shelf entry by its label ("v3", "V3" or "3"); ValueError naming what exists."""
        text = str(version).strip()
        digits = text[1:] if text[:1] in ("v", "V") else text
        shelf = self.store.shelf()
        if digits.isdigit():
            for entry in shelf:
                if entry.version == int(digits):
                    return entry
        labels = ", ".join(e.label for e in shelf) or "nothing yet"
        raise ValueError(f"no version {text!r} on the shelf of {self.path.name}; it holds "
                         f"{labels}")

    def entry(self, wording_id: int) -> ShelfEntry:
        """A shelf entry by its id (KeyError naming it when there is none)."""
        return self.store.wording(wording_id)

    def graded_run(self, what: int | Wording, split: str) -> int | None:
        """The newest finished run of a shelf entry (by id) or a wording on one split of the
        current set; None when it has not been graded there."""
        if not isinstance(what, Wording):
            entry = self.store.wording(what)
            what = Wording(entry.text, entry.placement)
        set_id, _ = self.current_set()
        return latest_run(self.store, what.text, what.placement, split, set_id)

    def run_score(self, run_id: int) -> Score:
        passed, total = self.store.run_counts(run_id)
        return score(passed, total)

    def run_cost(self, run_id: int) -> RunCost:
        """What answering cost in a run: tokens and seconds per item (core/cost.py)."""
        return cost_of_run(self.store, run_id)

    def summary(self, run_id: int) -> RunSummary:
        run = self.store.run(run_id)
        qset = self.store.get_set(run.set_id)
        check = CheckSpec.from_dict(run.check)
        return summarize(self.store.marks(run_id), qset.items, check.kind,
                         check.labels or qset.labels(), wall_seconds=run.wall_seconds,
                         status=run.status, planned=run.n_items)

    def run_view(self, run_id: int) -> RunView:
        return RunView(self.store.run(run_id), self.store.marks(run_id), self.summary(run_id))

    def open_runs(self, split: str = "tuning") -> list[tuple[RunInfo, int, int]]:
        """The runs still running on one split of the current set (suggestions being
        scored), each with (passed, graded so far): their running scores."""
        set_id = self.store.setting("current_set")
        return [(run, *self.store.run_counts(run.id)) for run in self.store.runs()
                if run.status == "running" and run.split == split
                and (set_id is None or run.set_id == set_id)]

    def interrupted_runs(self) -> list:
        """The grade runs that stopped before finishing and can be resumed, oldest first
        (``core.resume.Unfinished``: the run and how many of its items were graded)."""
        from .resume import unfinished_runs

        return [u for u in unfinished_runs(self.store)]

    def last_run(self) -> RunView | None:
        """The newest grade run on the current set that is not still running."""
        if not self.has_set():
            return None
        set_id, _ = self.current_set()
        for run in reversed(self.store.runs()):
            if run.set_id == set_id and run.status != "running":
                return self.run_view(run.id)
        return None
