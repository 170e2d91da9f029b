"""A suggestion engine apart from the graded engine: the proposer writes the variants, the
graded engine scores them, and each suggestion records who wrote it. The project's
setting for it is validated, saved and kept out of the grading cache key."""
from __future__ import annotations

import pytest

from honebench.core.engines.choice import EngineChoice, engine_label
from honebench.core.hone import HoneBudget
from honebench.core.settings import ProjectSettings
from honebench.core.wording import Wording
from tests.core.suggest_fixtures import small_project
from tests.fakes import FakeEngine

REPHRASE_ASK = "Say this instruction again"  # the rephrase meta-prompt's words
VARIANTS = ["Name the one desk that should answer this passenger.",
            "Tell which department deals with the message, in one word."]


class Proposer(FakeEngine):
    """A fake suggestion engine with its own name; it writes the variants."""

    def __init__(self):
        self.seen: list[str] = []

        def answer(req):
            text = "\n".join(m["content"] for m in req.messages)
            self.seen.append(text)
            return VARIANTS[req.seed % len(VARIANTS)]

        super().__init__(answer)

    def label(self) -> str:
        return "the fake proposer"


def _graded(project):
    """A fake graded engine that answers items right and records everything it is asked."""
    _, qset = project.current_set()
    key = {it.fields["message"]: it.expected for it in qset.items}
    seen: list[str] = []

    def answer(req):
        text = "\n".join(m["content"] for m in req.messages)
        seen.append(text)
        return next((exp for msg, exp in key.items() if msg in text), "none")

    return FakeEngine(answer), seen


@pytest.fixture
def project(tmp_path, sample_dir):
    proj = small_project(tmp_path, sample_dir)
    yield proj
    proj.close()


def test_the_proposer_writes_and_the_graded_engine_scores(project):
    graded, graded_seen = _graded(project)
    proposer = Proposer()
    done = project.suggest(graded, "rephrase", count=2, proposer=proposer)
    cards = done.value.outcome.cards
    assert sorted(c.text for c in cards) == sorted(VARIANTS)
    # every meta-prompt went to the proposer, none to the graded engine
    assert len(proposer.seen) == 2 and all(REPHRASE_ASK in t for t in proposer.seen)
    assert graded_seen and not any(REPHRASE_ASK in t for t in graded_seen)
    # the graded engine scored both variants and the base on every tuning item
    n_tuning = len(project.current_set()[1].tuning())
    for variant in VARIANTS:
        assert sum(variant in t for t in graded_seen) == n_tuning
    assert all(c.score.total == n_tuning for c in cards)
    # each suggestion names its proposer, and the shelf keeps it with the wording
    assert [c.proposer for c in cards] == ["the fake proposer"] * 2
    kept = project.keep(Wording(cards[0].text, cards[0].placement), inputs=cards[0].inputs)
    assert project.entry(kept.value.id).inputs["proposer"] == "the fake proposer"


def test_without_a_proposer_the_graded_engine_writes_too(project):
    graded, graded_seen = _graded(project)
    out = project.suggest(graded, "rephrase", count=1).value.outcome
    assert any(REPHRASE_ASK in t for t in graded_seen)
    # FakeEngine has no label: its fingerprint names it
    assert all(c.proposer == "fake-engine" for c in out.cards)


def test_phrase_edits_record_that_no_model_wrote_them(project):
    project.keep(Wording("Read the message. Name the desk. Reply with one word.", "before"))
    graded, _ = _graded(project)
    proposer = Proposer()
    out = project.suggest(graded, "phrase-edits", count=2, proposer=proposer).value.outcome
    assert proposer.seen == []
    assert out.cards and {c.proposer for c in out.cards} == {"no model (phrase edits)"}


def test_hone_asks_the_proposer_each_round(project):
    graded, graded_seen = _graded(project)
    proposer = Proposer()
    outcome = project.hone(graded, strategy="rephrase", proposer=proposer,
                           budget=HoneBudget(rounds=2, per_round=2, patience=5)).value
    assert len(outcome.rounds) == 2
    assert len(proposer.seen) == 4  # two rounds of two
    assert not any(REPHRASE_ASK in t for t in graded_seen)
    recorded = [e.inputs.get("proposer") for e in project.store.shelf()
                if e.origin.startswith("auto-hone: ")]
    assert recorded and set(recorded) == {"the fake proposer"}


def test_the_setting_is_saved_validated_and_not_part_of_the_cache_key(project):
    choice = EngineChoice.endpoint("http://127.0.0.1:9/v1", "writer", timeout=12.0)
    settings = ProjectSettings(temperature=0.5, suggest_engine=choice.as_dict())
    assert settings.suggest_engine == choice  # a saved dict is read back as the choice
    assert hash(settings) == hash(ProjectSettings(temperature=0.5, suggest_engine=choice))
    assert settings.params() == ProjectSettings(temperature=0.5).params()  # the cache key
    project.set_settings(settings)
    assert project.settings() == settings
    assert project.settings().as_dict()["suggest_engine"]["url"] == "http://127.0.0.1:9/v1"
    # an older project has no such key: the graded engine writes
    assert ProjectSettings.from_dict({"max_tokens": 9}).suggest_engine is None
    assert ProjectSettings.from_dict({"suggest_engine": "x.gguf"}).suggest_engine is None
    with pytest.raises(ValueError, match="suggestion engine: .*http://"):
        project.set_settings(ProjectSettings(suggest_engine=EngineChoice.endpoint("host:1")))
    with pytest.raises(ValueError, match="suggestion engine"):
        project.set_settings(ProjectSettings(suggest_engine="model.gguf"))
    assert project.settings() == settings  # nothing saved by the refused ones


def test_labels_of_open_engines():
    from honebench.core.engines.remote import EndpointEngine

    endpoint = EndpointEngine("http://127.0.0.1:9/v1", "writer")
    try:
        assert engine_label(endpoint) == "writer at http://127.0.0.1:9/v1"
    finally:
        endpoint.close()
    assert engine_label(FakeEngine()) == "fake-engine"


@pytest.mark.model
def test_labels_of_the_bundled_model(local_engine):
    assert engine_label(local_engine) == EngineChoice.bundled().label()
