"""An honest best: chosen on tuning items only, labelled best only once confirmed on
held-out items, with warnings for overfit versions and a note on how many were tried."""
from __future__ import annotations

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from statsmodels.stats.proportion import proportion_confint

from honebench.core.honesty import (assess_shelf, count_variants_tried, overfit_warning,
                                    tuning_leader)
from honebench.core.project import ShelfRow
from honebench.core.records import ShelfEntry
from honebench.core.stats import score
from honebench.core.wording import Wording

from .shelf_builder import add_run, new_project, pattern


def row(version, decision="kept", tuning=None, held=None):
    entry = ShelfEntry(id=100 + version, version=version, text=f"wording {version}",
                       placement="system", parent_id=None, origin="typed", created_at="",
                       decision=decision)
    return ShelfRow(entry, score(*tuning) if tuning else None, score(*held) if held else None)


def test_leader_is_the_top_kept_tuning_score_ties_to_the_earlier_version():
    rows = [row(1, tuning=(20, 40)), row(2, "set_aside", tuning=(39, 40)),
            row(3, tuning=(30, 40)), row(4, tuning=(30, 40)), row(5, "", tuning=(35, 40)),
            row(6)]
    assert tuning_leader(rows).entry.version == 3   # set aside and undecided never lead
    assert tuning_leader([row(1), row(2, "set_aside", tuning=(5, 5))]) is None


def test_best_only_after_held_out_is_measured():
    rows = [row(1, tuning=(20, 40)), row(4, tuning=(30, 40))]
    first = assess_shelf(rows)
    assert first.best_id is None and first.leader_id == 104
    assert first.best_reason == ("v4 leads on tuning items with 75% (30/40, 95% interval "
                                 "60–86%); grade it on held-out items to confirm.")
    # held-out measured for another version only: still no best
    rows[0] = row(1, tuning=(20, 40), held=(9, 12))
    assert assess_shelf(rows).best_id is None
    rows[1] = row(4, tuning=(30, 40), held=(8, 12))
    done = assess_shelf(rows)
    assert done.best_id == 104 and "66.7% (8/12" in done.best_reason


def test_best_label_through_a_real_project(tmp_path):
    project = new_project(tmp_path)
    w1, w2 = Wording("Route it.", "before"), Wording("Route it to one desk.", "before")
    project.keep(w1)
    project.keep(w2)
    add_run(project, w1, "tuning", pattern(10, 30))
    add_run(project, w2, "tuning", pattern(20, 30))
    before = assess_shelf(project.shelf_rows())
    assert before.best_id is None and "v2 leads on tuning items" in before.best_reason
    assert "grade it on held-out items to confirm" in before.best_reason
    add_run(project, w2, "held_out", pattern(6, 10))
    after = assess_shelf(project.shelf_rows())
    assert after.best_id == project.store.find_wording(w2.text, w2.placement).id
    project.close()


def test_overfit_warning_on_a_constructed_case():
    r = row(3, tuning=(30, 30), held=(3, 12))
    # Reference: statsmodels Wilson intervals: held-out upper end below tuning lower end
    assert proportion_confint(3, 12, method="wilson")[1] < proportion_confint(30, 30, method="wilson")[0]
    found = assess_shelf([r])
    (warning,) = found.warnings[103]
    assert "v3 scores 25% (3/12, 95% interval 9–53%) on held-out items" in warning
    assert "100% (30/30, 95% interval 89–100%) on tuning items" in warning
    assert found.best_id == 103 and "see the warning" in found.best_reason


@pytest.mark.parametrize("tuning, held", [((20, 30), (6, 12)), ((30, 30), (10, 12)),
                                          ((3, 12), (30, 30))])
def test_no_warning_when_the_intervals_overlap_or_held_out_is_higher(tuning, held):
    lo_t = proportion_confint(*tuning, method="wilson")[0]    # statsmodels Wilson
    hi_h = proportion_confint(*held, method="wilson")[1]
    assert not hi_h < lo_t
    assert overfit_warning(row(1, tuning=tuning, held=held)) is None


def test_warning_needs_both_scores():
    assert overfit_warning(row(1, tuning=(30, 30))) is None
    assert overfit_warning(row(1, held=(0, 12))) is None
    assert overfit_warning(row(1, tuning=(30, 30), held=(0, 0))) is None


def test_optimism_note_counts_variants_tried():
    rows = [row(v, "kept" if v % 2 else "set_aside", tuning=(v, 30)) for v in range(1, 5)]
    assert count_variants_tried(rows) == 4 and assess_shelf(rows).optimism_note is None
    rows.append(row(5, "", tuning=(9, 30)))     # undecided: not counted as tried
    assert count_variants_tried(rows) == 4
    rows.append(row(6, "set_aside"))
    note = assess_shelf(rows).optimism_note
    assert note == ("The top tuning score is the best of 5 wordings tried on the same items, "
                    "so it is likely optimistic; the held-out score is the fairer estimate.")
    assert "best of 23 wordings" in assess_shelf(rows, 23).optimism_note
    assert assess_shelf(rows, 23).variants_tried == 23


def test_reasons_when_nothing_can_lead():
    assert "Nothing is kept" in assess_shelf([]).best_reason
    assert "Nothing is kept" in assess_shelf([row(1, "set_aside", tuning=(9, 9))]).best_reason
    assert "No kept version has a tuning score" in assess_shelf([row(1)]).best_reason


scores = st.tuples(st.integers(1, 40)).flatmap(
    lambda t: st.tuples(st.integers(0, t[0]), st.just(t[0])))


@settings(max_examples=200)
@given(st.lists(st.tuples(st.sampled_from(["kept", "set_aside", ""]),
                          st.none() | scores), min_size=1, max_size=12),
       st.data())
def test_held_out_scores_never_change_which_entry_leads(entries, data):
    base = [row(v, d, tuning=t) for v, (d, t) in enumerate(entries, start=1)]
    before = assess_shelf(base)
    held = data.draw(st.lists(st.none() | scores, min_size=len(base), max_size=len(base)))
    changed = [ShelfRow(r.entry, r.tuning, score(*h) if h else None) for r, h in zip(base, held)]
    after = assess_shelf(changed)
    assert after.leader_id == before.leader_id
    assert after.best_id in (None, before.leader_id)
    # and the leader really is the top kept tuning score (so the test above can fail)
    kept = [r for r in base if r.entry.decision == "kept" and r.tuning]
    if kept:
        top = max(r.tuning.rate for r in kept)
        lead = next(r for r in base if r.entry.id == before.leader_id)
        assert lead.tuning.rate == top
        assert lead.entry.version == min(r.entry.version for r in kept if r.tuning.rate == top)
    else:
        assert before.leader_id is None
