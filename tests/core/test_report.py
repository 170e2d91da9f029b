"""The exports: a self-contained HTML report with every section, the progress chart as
inline SVG, all marks as RFC 4180 CSV, and the chosen wording as text."""
from __future__ import annotations

import csv
import io
import tempfile
import xml.etree.ElementTree as ET
from html.parser import HTMLParser
from pathlib import Path

import pandas as pd
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from honebench.core.chart_svg import progress_chart_svg
from honebench.core.compare import compare_runs
from honebench.core.report import (CSV_COLUMNS, SECTIONS, choose_wording, chosen_wording_text,
                                   report_html, write_html_report, write_marks_csv)
from honebench.core.wording import Wording

from .shelf_builder import add_run, new_project, pattern

EVIL = "Route it. <script>alert('x')</script> & say \"which\" desk"
V1 = Wording("Which desk?", "before")
V2 = Wording(EVIL, "system")
V3 = Wording("Name one department.", "after")


class Collector(HTMLParser):
    """Collects ids, tags, attributes pointing elsewhere, and the text."""

    def __init__(self):
        super().__init__(convert_charrefs=True)
        self.ids, self.tags, self.links, self.text = [], [], [], []

    def handle_starttag(self, tag, attrs):
        self.tags.append(tag)
        for name, value in attrs:
            if name == "id":
                self.ids.append(value)
            if name in ("src", "href", "xlink:href", "action", "data"):
                self.links.append(value or "")

    handle_startendtag = handle_starttag

    def handle_data(self, data):
        self.text.append(data)


def parse(html: str) -> Collector:
    c = Collector()
    c.feed(html)
    c.close()
    return c


def build(tmp_path):
    project = new_project(tmp_path)
    for w, decision in ((V1, "keep"), (V2, "keep"), (V3, "set_aside")):
        getattr(project, decision)(w)
    add_run(project, V1, "tuning", pattern(10, 30))
    add_run(project, V2, "tuning", pattern(24, 30),
            outputs=["refund, then \"timetable\"\n<img src=http://x.invalid/a.png>"] * 30)
    add_run(project, V3, "tuning", pattern(28, 30), fingerprint="other-engine:sha256=def")
    return project


@pytest.fixture
def project(tmp_path):
    p = build(tmp_path)
    yield p
    p.close()


def test_report_has_every_section_and_nothing_external(project, tmp_path):
    path = write_html_report(project, tmp_path / "out.html")
    html = path.read_text(encoding="utf-8")
    found = parse(html)
    assert set(SECTIONS) <= set(found.ids)
    assert "script" not in found.tags and "link" not in found.tags and "img" not in found.tags
    assert not [u for u in found.links if "http" in u or u.startswith("//")]
    # no web address anywhere, not even in the chart, apart from the escaped model output
    assert "http" not in html.replace("&lt;img src=http://x.invalid/a.png&gt;", "")
    assert "<style>" in html and "svg" in found.tags


def test_user_text_is_escaped(project):
    html = report_html(project)
    assert "<script>" not in html and "<img src" not in html
    assert "&lt;script&gt;alert(&#x27;x&#x27;)&lt;/script&gt;" in html
    assert EVIL in "".join(parse(html).text)     # shown to the reader exactly as typed


def test_report_content(project):
    html = report_html(project)
    text = " ".join("".join(parse(html).text).split())
    _, qset = project.current_set()
    assert qset.content_hash in text and project.title() in text
    assert project.check().describe() in text
    assert "test-engine:sha256=abc" in text and "other-engine:sha256=def" in text
    assert "more than one engine" in text
    # shelf: every score with n and interval
    assert "33.3% (10/30, 95% interval" in text and "80% (24/30, 95% interval" in text
    assert "not graded" in text                    # no held-out runs yet
    # chosen: v2 leads among kept versions (v3 is set aside), not yet confirmed
    assert "Chosen as the kept version with the top tuning score" in text
    # comparison: chosen (v2) against v1 on tuning items, with the fixed items listed
    rows = {r.entry.label: r for r in project.shelf_rows()}
    assert rows["v2"].tuning.passed == 24
    runs = [r.id for r in project.store.runs()]
    expected = compare_runs(project.store, runs[0], runs[1])
    assert " ".join(expected.text().split()) in text
    assert f"Fixed items ({len(expected.fixed)})" in text
    assert all(i in text for i in expected.fixed_ids)
    assert "Small sets are noisy: with 84 tuning items" in text


def test_best_is_chosen_after_held_out_and_chosen_id_overrides(project):
    v2 = project.store.find_wording(V2.text, V2.placement)
    add_run(project, V2, "held_out", pattern(7, 10))
    choice = choose_wording(project)
    assert choice.entry.id == v2.id and "confirmed on held-out items" in choice.rule
    assert "<strong>best</strong>" in report_html(project)
    v1 = project.store.find_wording(V1.text, V1.placement)
    html = report_html(project, chosen_id=v1.id)
    assert "Chosen by you: v1." in html and "the first version itself" in html
    with pytest.raises(ValueError, match="no shelf entry with id 999"):
        report_html(project, chosen_id=999)
    assert chosen_wording_text(project) == EVIL
    assert chosen_wording_text(project, v1.id) == V1.text


def test_empty_shelf_still_reports_and_text_export_refuses(tmp_path):
    project = new_project(tmp_path)
    found = parse(report_html(project))
    assert set(SECTIONS) <= set(found.ids)
    assert "Nothing is kept on the shelf yet" in "".join(found.text)
    with pytest.raises(LookupError, match="nothing is kept"):
        chosen_wording_text(project)
    project.close()


@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.text(st.characters(blacklist_categories=("Cs",)), min_size=1, max_size=60)
       .filter(str.strip))  # a blank wording is refused by keep, so it never reaches a report
def test_any_wording_text_is_reported_verbatim(text):
    with tempfile.TemporaryDirectory() as tmp:
        project = new_project(Path(tmp))
        w = Wording(text, "system")
        project.keep(w)
        add_run(project, w, "tuning", [True, False], outputs=[text, text + "<"])
        found = parse(report_html(project))
        assert set(SECTIONS) <= set(found.ids)
        assert text.replace("\r\n", "\n") in "".join(found.text).replace("\r\n", "\n")
        project.close()


# --- the chart ------------------------------------------------------------------------------
def _svg(rows):
    return ET.fromstring(progress_chart_svg(rows, standalone=True))


NS = "{http://www.w3.org/2000/svg}"


def test_chart_marks_decisions_by_shape_and_plots_the_scores(project):
    rows = project.shelf_rows()
    root = _svg(rows)
    series = {g.get("class"): g for g in root.iter(f"{NS}g")}
    tuning = series["series tuning"]
    kept = tuning.findall(f"{NS}circle")
    aside = tuning.findall(f"{NS}path")
    assert len(kept) == 2 and len(aside) == 1            # v1, v2 kept; v3 set aside
    assert [c.get("class") for c in kept] == ["marker kept"] * 2
    # y position is the score: plot top 40, height 340 - 40 - 58
    for circle, r in zip(kept, rows[:2]):
        assert float(circle.get("cy")) == pytest.approx(40 + (1 - r.tuning.rate) * 242, abs=0.06)
        assert r.tuning.text() in circle.find(f"{NS}title").text
    assert tuning.find(f"{NS}polygon") is not None        # the interval band
    assert series["series held-out"].find(f"{NS}circle") is None


@pytest.mark.parametrize("count", [0, 1, 30])
def test_chart_works_with_any_number_of_versions(tmp_path, count):
    project = new_project(tmp_path)
    for v in range(count):
        w = Wording(f"wording {v}", "system")
        project.keep(w)
        add_run(project, w, "tuning", pattern(v % 5, 5))
    root = _svg(project.shelf_rows())
    texts = [t.text for t in root.iter(f"{NS}text")]
    assert "score (% of items passed)" in texts
    assert ("No version has a score yet: grade a wording to start the chart." in texts) == (count == 0)
    labels = [t for t in texts if t and t.startswith("v") and t[1:].isdigit()]
    assert (labels[-1] == f"v{count}") if count else labels == []
    assert len(labels) <= 20
    project.close()


# --- CSV ------------------------------------------------------------------------------------
TRICKY = ["plain", "a, b", 'say "hi"', "two\nlines", "crlf\r\nend", "  spaced  ", "", "=1+2",
          "ünïcødé ⛴", '",\n"']


def test_marks_csv_round_trips_with_pandas(tmp_path):
    project = new_project(tmp_path)
    project.keep(V1)
    run = add_run(project, V1, "tuning", [i % 2 == 0 for i in range(len(TRICKY))], outputs=TRICKY)
    other = add_run(project, Wording("not on the shelf", "system"), "held_out", [True, False])
    path = write_marks_csv(project, tmp_path / "marks.csv")
    back = pd.read_csv(path, dtype=str, keep_default_na=False)
    assert list(back.columns) == list(CSV_COLUMNS) and len(back) == len(TRICKY) + 2
    first = back[back.run_id == str(run)]
    assert list(first.output) == TRICKY                 # in item order, text untouched
    assert set(first.version) == {"v1"} and set(back[back.run_id == str(other)].version) == {""}
    assert list(first.passed) == [str(i % 2 == 0) for i in range(len(TRICKY))]
    assert set(first.tokens) == {"13"} and set(first.split) == {"tuning"}
    _, qset = project.current_set()
    expected = {it.id: it.expected for it in qset.items}
    assert all(expected[i] == e for i, e in zip(back.item_id, back.expected))
    # RFC 4180: CRLF between records, fields with quotes are quoted and quotes doubled
    raw = path.read_bytes().decode("utf-8")
    assert raw.startswith(",".join(CSV_COLUMNS) + "\r\n")
    assert '"say ""hi"""' in raw
    rows = list(csv.reader(io.StringIO(raw, newline="")))   # Python's csv module as a reader
    assert len(rows) == len(TRICKY) + 3 and rows[1 + TRICKY.index("two\nlines")][5] == "two\nlines"
    one = pd.read_csv(write_marks_csv(project, tmp_path / "one.csv", run_id=other), dtype=str)
    assert len(one) == 2 and set(one.run_id) == {str(other)}
    project.close()


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.lists(st.text(st.characters(blacklist_categories=("Cs",), blacklist_characters="\x00"),
                        max_size=40), min_size=1, max_size=5))
def test_any_output_text_round_trips_through_csv(outputs):
    with tempfile.TemporaryDirectory() as tmp:
        project = new_project(Path(tmp))
        add_run(project, V1, "tuning", [True] * len(outputs), outputs=outputs)
        path = write_marks_csv(project, Path(tmp) / "m.csv")
        back = pd.read_csv(path, dtype=str, keep_default_na=False)
        assert list(back.output) == outputs
        project.close()


def test_a_leading_line_break_in_a_wording_survives_in_the_page(tmp_path):
    # HTML: a browser drops one line break right after <pre>, so one extra is written.
    project = new_project(tmp_path)
    project.keep(Wording("\nIndented start", "system"))
    assert "<pre>\n\nIndented start</pre>" in report_html(project)
    project.close()
