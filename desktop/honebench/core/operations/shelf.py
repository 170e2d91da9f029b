"""Shelf operations: keep, set aside, restore into the editor, notes."""
from __future__ import annotations

from ..changes import Changes, Done
from ..records import ShelfEntry
from ..wording import Wording

SHELF = Changes(shelf=True)


class ShelfOps:
    """Mixed into Project. ``what`` is a Wording or the id of a shelf entry."""

    def keep(self, what: Wording | int, *, parent_id: int | None = None,
             origin: str = "typed", note: str | None = None,
             inputs: dict | None = None) -> Done[ShelfEntry]:
        """Put a wording on the shelf as kept (the existing entry when already there)."""
        return Done(self._decide(what, "kept", parent_id, origin, note, inputs), SHELF)

    def set_aside(self, what: Wording | int, *, parent_id: int | None = None,
                  origin: str = "typed", note: str | None = None,
                  inputs: dict | None = None) -> Done[ShelfEntry]:
        """Record a wording on the shelf as set aside, so it is never proposed again."""
        return Done(self._decide(what, "set_aside", parent_id, origin, note, inputs), SHELF)

    def restore(self, wording_id: int) -> Done[ShelfEntry]:
        """Copy a shelf version into the editor: it becomes the draft."""
        entry = self.store.wording(wording_id)
        self.save_draft(Wording(entry.text, entry.placement))
        return Done(entry, Changes(settings=True))

    def set_note(self, wording_id: int, note: str) -> Done[ShelfEntry]:
        self.store.wording(wording_id)  # a missing entry raises KeyError naming it
        self.store.set_note(wording_id, note)
        return Done(self.store.wording(wording_id), SHELF)

    def _shelve(self, wording: Wording, *, parent_id: int | None = None,
               origin: str = "typed") -> ShelfEntry:
        """The wording's shelf entry, added as not decided when it is not there yet (what a
        grade does, so export, compare and the chart see every graded wording)."""
        found = self.store.find_wording(wording.text, wording.placement)
        if found is not None:
            return found
        return self.store.add_wording(wording.text, wording.placement, parent_id=parent_id,
                                      origin=origin)

    def _decide(self, what, verdict: str, parent_id, origin, note, inputs) -> ShelfEntry:
        if isinstance(what, Wording):
            if not what.text.strip():
                raise ValueError("The wording is empty; there is nothing to put on the shelf.")
            found = self.store.find_wording(what.text, what.placement)
            if found is None:
                return self.store.add_wording(what.text, what.placement, parent_id=parent_id,
                                              origin=origin, note=note or "", inputs=inputs,
                                              decision=verdict)
        else:
            found = self.store.wording(what)
        if found.decision != verdict or verdict == "set_aside":  # a new reason is recorded
            self.store.decide(found.id, verdict, found.note if note is None else note)
        return self.store.wording(found.id)
