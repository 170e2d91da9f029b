"""The bench report's lines (logic only; speed itself is measured by `honebench bench`)."""
from types import SimpleNamespace

from honebench.core.bench import _report
from honebench.core.checks import CheckSpec
from honebench.core.records import Mark
from honebench.core.sets import Item


def test_report_prints_both_ratios_accuracies_and_the_limit():
    items = [Item(str(i), {"message": "m"}, "refund", "tuning", i) for i in range(4)]
    check = CheckSpec(kind="label", labels=("refund", "timetable"))

    def outcome(passed, made):
        return SimpleNamespace(marks=[Mark(str(i), "x", "x", i < passed, "", completion_tokens=made)
                                      for i in range(4)])

    sides = {"hand": [(8.0, ["refund", "timetable", "refund", "no"])],
             "generate": [(4.0, outcome(1, 10), 2, 0.01, [30] * 4, (200.0, 80.0))],
             "score": [(2.0, outcome(3, 0), 2, 0.01, [30] * 4, (220.0, 70.0))]}
    lines = []
    _report(sides, items, check, lines.append)
    text = "\n".join(lines)
    assert "grader/hand-loop ratio: 2.00" in text  # 8 s / 4 s
    assert "label-scoring/hand-loop ratio: 4.00" in text  # 8 s / 2 s
    assert "accuracy 2/4" in text and "accuracy 1/4" in text and "accuracy 3/4" in text
    # limit: best rates of the run, 220 and 80 tokens/s; generate: 30/220 + 10/80 s an item
    assert "limit 0.261 s an item" in text and "limit 0.136 s an item" in text
