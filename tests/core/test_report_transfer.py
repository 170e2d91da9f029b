"""The report's Transfer section (core/report_transfer.py)."""
from __future__ import annotations

from honebench.core.report import report_html

from .test_transfer import GENERATE, V1, V2, Engine


def test_no_transfer_check_no_section(project):
    project.keep(V1)
    assert 'id="transfer"' not in report_html(project)


def test_section_shows_both_engines_n_intervals_flags_and_caution(project):
    _, qset = project.current_set()
    e1, e2 = project.keep(V1).value, project.keep(V2).value
    for name in ("<b>older</b>", "<b>other</b>"):
        there = Engine(name, qset, {"(one)": 4, "(two)": 6})
        project.transfer(Engine("here", qset, {"(one)": 8, "(two)": 5}), there,
                         [e1.id, e2.id], label="here model", other_label=name, limit=10,
                         settings=GENERATE)
    html = report_html(project)
    section = html[html.index('<section id="transfer">'):]
    section = section[:section.index("</section>")]
    assert "&lt;b&gt;other&lt;/b&gt;" in section and "<b>other</b>" not in section
    assert "here model" in section and "the same 10 tuning items" in section
    # v1: 8/10 here, 4/10 there; Wilson intervals as the shelf writes them
    assert "80% (8/10, 95% interval" in section and "40% (4/10, 95% interval" in section
    assert "wins here, not there; order changes (against v2)" in section
    assert "wins there, not here; order changes (against v1)" in section
    assert "1 of 2" in section and "2 of 2" in section
    assert "noisy too" in section
    # one check per other engine: the second engine's check and the first's, newest first
    assert section.index("other") < section.index("older")
