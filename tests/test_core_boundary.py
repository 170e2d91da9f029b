"""The core never imports Qt: checked on the source (AST) and on a real import."""
from __future__ import annotations

import ast
import subprocess
import sys
from pathlib import Path

CORE = Path(__file__).resolve().parents[1] / "desktop" / "honebench" / "core"
QT = ("PySide6", "shiboken6", "PyQt5", "PyQt6", "qtpy")


def _imports(path: Path):
    tree = ast.parse(path.read_text(encoding="utf-8"), filename=str(path))
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            yield from (alias.name for alias in node.names)
        elif isinstance(node, ast.ImportFrom) and node.module and node.level == 0:
            yield node.module


def test_no_core_module_imports_qt():
    files = sorted(CORE.rglob("*.py"))
    assert len(files) > 10  # the walk really sees the core
    bad = [f"{f.relative_to(CORE)}: {name}" for f in files for name in _imports(f)
           if name.split(".")[0] in QT]
    assert bad == []


def test_importing_every_core_module_loads_no_qt():
    modules = [".".join(("honebench", "core", *p.relative_to(CORE).with_suffix("").parts))
               for p in CORE.rglob("*.py") if p.name != "__init__.py"]
    code = ("import importlib, sys\n"
            f"for m in {modules!r}: importlib.import_module(m)\n"
            f"loaded = [m for m in sys.modules if m.split('.')[0] in {QT!r}]\n"
            "print(loaded); sys.exit(1 if loaded else 0)")
    src = str(CORE.parents[1])
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                          env={"PYTHONPATH": src, "PATH": "/usr/bin:/bin"})
    assert done.returncode == 0, done.stdout + done.stderr


def test_the_ast_walk_would_catch_a_qt_import(tmp_path):
    fake = tmp_path / "x.py"
    fake.write_text("from PySide6.QtCore import QObject\n")
    assert list(_imports(fake)) == ["PySide6.QtCore"]
