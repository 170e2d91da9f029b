"""An engine choice: validated, kept as a dict, and checked without loading a model."""
import pytest

from honebench.core.engines.base import EngineError
from honebench.core.engines.choice import EngineChoice


def test_round_trip_and_labels(tmp_path):
    choice = EngineChoice.endpoint("http://127.0.0.1:9/v1", "small", timeout=12.5)
    assert EngineChoice.from_dict(choice.as_dict()) == choice
    assert EngineChoice.from_dict({"kind": "file", "path": "m.gguf", "extra": 1}).label() == "m.gguf"
    assert EngineChoice.from_dict(None) == EngineChoice.bundled()


@pytest.mark.parametrize("choice, words", [
    (EngineChoice(kind="cloud"), "kind"),
    (EngineChoice.file(""), "GGUF"),
    (EngineChoice.endpoint("127.0.0.1:8080"), "http://"),
    (EngineChoice.endpoint("http://127.0.0.1:9/v1", timeout=0), "timeout"),
])
def test_bad_choices_are_refused_by_name(choice, words):
    with pytest.raises(EngineError, match=words):
        choice.validate()


def test_a_fake_model_file_is_refused_before_loading(tmp_path):
    fake = tmp_path / "fake.gguf"
    fake.write_bytes(b"not a model")
    with pytest.raises(EngineError, match="fake.gguf"):
        EngineChoice.file(str(fake)).check()
