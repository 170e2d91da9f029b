"""Label scoring over the OpenAI chat-completions protocol, from the logprobs it may return.

The request asks for ``logprobs`` with the ``top_logprobs`` most likely first tokens
(choices[0].logprobs.content[0].top_logprobs: a list of {"token", "logprob"}). A label's
log-probability is that of the most likely listed token that starts it (the token text,
leading spaces removed, is a non-empty start of the label, ignoring case); a label no listed
token starts gets the smallest listed log-probability minus log 2 (a bound: it is less likely
than anything listed). Labels that share their first listed token cannot be told apart this
way; the earlier label wins the tie. The server's tokenizer is not visible from here, so this
is the first token only, not the full label.

When the answer carries no logprobs (many servers ignore the field), the generated text of
the same request is used as the answer and the Result says so in ``note``.
"""
from __future__ import annotations

import math

from .base import Request, Result
from .remote import read_reply, _json

TOP_LOGPROBS = 20  # the protocol's documented maximum
NO_LOGPROBS_NOTE = ("the endpoint gave no logprobs, so this answer was generated "
                    "instead of scored")


def scoring_fields() -> dict:
    return {"logprobs": True, "top_logprobs": TOP_LOGPROBS}


def first_token_logprobs(data) -> list[tuple[str, float]] | None:
    """(token, logprob) pairs for the first answer token, or None when absent."""
    try:
        first = data["choices"][0]["logprobs"]["content"][0]
        listed = first.get("top_logprobs") or [first]
        pairs = [(str(t["token"]), float(t["logprob"])) for t in listed]
    except (KeyError, IndexError, TypeError, ValueError, AttributeError):
        return None
    pairs = [(tok, lp) for tok, lp in pairs if math.isfinite(lp)]
    return pairs or None


def label_scores(labels: tuple[str, ...], pairs: list[tuple[str, float]]) -> list[float]:
    floor = min(lp for _, lp in pairs) - math.log(2)
    out = []
    for label in labels:
        want = label.casefold()
        starts = [lp for tok, lp in pairs
                  if tok.lstrip().casefold() and want.startswith(tok.lstrip().casefold())]
        out.append(max(starts, default=floor))
    return out


def read_scored(req: Request, raw: bytes, seconds: float) -> Result:
    """A label-scored Result from an answer body; generated text with a note when the body
    has no logprobs."""
    result = read_reply(req.key, raw, seconds)
    if result.error:
        return result
    try:
        pairs = first_token_logprobs(_json(raw))
    except ValueError:
        pairs = None
    if pairs is None:
        return Result(key=req.key, text=result.text, prompt_tokens=result.prompt_tokens,
                      completion_tokens=result.completion_tokens, seconds=seconds,
                      finish_reason=result.finish_reason, note=NO_LOGPROBS_NOTE)
    scores = label_scores(req.labels, pairs)
    top = max(scores)
    weights = [math.exp(s - top) for s in scores]
    shares = tuple(w / sum(weights) for w in weights)
    best = max(range(len(scores)), key=lambda i: (scores[i], -i))
    return Result(key=req.key, text=req.labels[best], prompt_tokens=result.prompt_tokens,
                  completion_tokens=0, seconds=seconds, finish_reason="scored",
                  label_logprobs=tuple(scores), label_shares=shares)
