"""Phrase importance as a facade operation: which phrases of a shelf version carry its
score (core/importance.py), saved as an analysis of that version."""
from __future__ import annotations

import threading
import time

from ..changes import Changes, Done
from ..events import Finished, Listener
from ..importance import KIND, ImportanceResult, analyse
from ..settings import ProjectSettings

ANALYSED = Changes(runs=True, marks=True)  # side runs only: shelf scores are unchanged


class ImportanceOps:
    """Mixed into Project: importance, saved_importance."""

    def importance(self, engine, wording_id: int, *, settings: ProjectSettings | None = None,
                   early_stop: bool = True, on_event: Listener | None = None,
                   cancel: threading.Event | None = None) -> Done[ImportanceResult]:
        """Grade each leave-one-phrase-out variant of a shelf version on the tuning items
        and measure each phrase's effect (cached answers cost no model call). A finished
        analysis is saved with the version; a cancelled one is returned (status
        "cancelled") but not saved. ValueError for a one-phrase wording."""
        began = time.perf_counter()
        entry = self.store.wording(wording_id)
        result = analyse(self, engine, entry, params=(settings or self.settings()).params(),
                         early_stop=early_stop, on_event=on_event, cancel=cancel)
        if result.status == "finished":
            self.store.add_analysis(KIND, result.as_dict(), wording_id=entry.id,
                                    subject=result.engine)
        if on_event:
            on_event(Finished(result.status, time.perf_counter() - began))
        return Done(result, ANALYSED)

    def saved_importance(self, wording_id: int) -> ImportanceResult | None:
        """The latest saved phrase importance of a shelf version, or None."""
        found = self.store.analyses(KIND, wording_id=wording_id)
        return ImportanceResult.from_dict(found[-1]["result"]) if found else None

    def saved_importances(self) -> list[ImportanceResult]:
        """The latest saved phrase importance of each shelf version that has one, in shelf
        order (for the report)."""
        latest: dict[int, dict] = {}
        for row in self.store.analyses(KIND):
            latest[row["wording_id"]] = row["result"]
        return [ImportanceResult.from_dict(latest[e.id]) for e in self.store.shelf()
                if e.id in latest]
