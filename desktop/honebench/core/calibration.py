"""Contextual calibration of label scores.

A wording can make some labels likely whatever the item says (their first tokens are common
words, or the wording names them first): a label prior. To take it out, the same wording and
template are scored once more with every input field left content-free (an empty string, and
"N/A"); the label shares of these content-free prompts, averaged, are the prior. Each item's
label is then the one with the largest (log-probability - log prior share), that is its share
divided by the prior share and renormalised. Confidence and runner-up come from these
calibrated shares.
"""
from __future__ import annotations

import math
from dataclasses import replace
from typing import Sequence

from .engines.base import Result

CONTENT_FREE = ("", "N/A")  # what every input field holds in the content-free prompts


def content_free_fields(names: Sequence[str], filler: str) -> dict[str, str]:
    return {name: filler for name in names}


def average_prior(share_rows: Sequence[Sequence[float]]) -> tuple[float, ...]:
    """The prior: the content-free prompts' label shares averaged label by label."""
    if not share_rows:
        raise ValueError("a label prior needs at least one content-free score")
    width = len(share_rows[0])
    if any(len(row) != width for row in share_rows):
        raise ValueError("content-free scores cover different numbers of labels")
    return tuple(sum(row[i] for row in share_rows) / len(share_rows) for i in range(width))


def calibrated_shares(logprobs: Sequence[float], prior: Sequence[float]) -> list[float]:
    """Shares after dividing by the prior: softmax of (log-probability - log prior)."""
    if len(logprobs) != len(prior):
        raise ValueError(f"{len(logprobs)} label scores but a prior over {len(prior)} labels")
    floor = 1e-300  # a prior share of 0 would divide by zero; treat it as vanishingly small
    adjusted = [lp - math.log(max(p, floor)) for lp, p in zip(logprobs, prior)]
    top = max(adjusted)
    weights = [math.exp(v - top) for v in adjusted]
    total = sum(weights)
    return [w / total for w in weights]


def calibrate_result(result: Result, labels: Sequence[str], prior: Sequence[float]) -> Result:
    """``result`` with its chosen label and shares taken from the calibrated shares. Results
    without label scores (errors, generated answers) pass through unchanged."""
    if result.error is not None or len(result.label_logprobs) != len(labels):
        return result
    share = calibrated_shares(result.label_logprobs, prior)
    best = max(range(len(share)), key=lambda i: (share[i], -i))
    return replace(result, text=labels[best], label_shares=tuple(share))


def params_with_prior(params: dict, labels: Sequence[str], prior) -> dict:
    """Run params plus, for a calibrated run, the label prior it divided by (so the run
    record says what its scores were divided by)."""
    if not params.get("calibrate"):
        return params
    noted = {"content_free": list(CONTENT_FREE)}
    noted["label_prior"] = dict(zip(labels, prior)) if prior is not None else None
    return {**params, **noted}
