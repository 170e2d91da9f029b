"""Editable text templates in resources/prompts (meta-prompts for the suggestion strategies)."""
from __future__ import annotations

from importlib import resources
from pathlib import Path


def resources_dir() -> Path:
    here = Path(__file__).resolve().parents[3] / "resources"
    if (here / "prompts").is_dir():
        return here
    return Path(str(resources.files("honebench.resources")))


def template(name: str) -> str:
    """The text of resources/prompts/NAME.txt."""
    path = resources_dir() / "prompts" / f"{name}.txt"
    try:
        return path.read_text(encoding="utf-8")
    except OSError as exc:
        raise FileNotFoundError(
            f"meta-prompt template {path} is missing ({exc.strerror}); reinstall honebench "
            "or restore the file") from None
