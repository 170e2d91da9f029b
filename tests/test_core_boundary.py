"""Boundaries: the core never imports Qt or a front (checked on the source, on a real import
and by import-linter), and nothing outside the core reaches past the facade into the
project's store."""
from __future__ import annotations

import ast
import os
import shutil
import subprocess
import sys
from collections import Counter
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
PACKAGE = ROOT / "desktop" / "honebench"
CORE = PACKAGE / "core"
QT = ("PySide6", "shiboken6", "PyQt5", "PyQt6", "qtpy")
FRONTS = ("honebench.gui", "honebench.cli", "honebench.commands")


def _module_name(path: Path) -> str:
    parts = path.relative_to(PACKAGE.parent).with_suffix("").parts
    return ".".join(parts[:-1] if parts[-1] == "__init__" else parts)


def _imports(path: Path, module: str | None = None):
    """Every module a file imports, relative imports resolved against ``module`` (the
    file's dotted name)."""
    tree = ast.parse(path.read_text(encoding="utf-8"), filename=str(path))
    package = (module or "").split(".")
    if path.name != "__init__.py":
        package = package[:-1]
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            yield from (alias.name for alias in node.names)
        elif isinstance(node, ast.ImportFrom):
            if node.level == 0:
                base = node.module or ""
            else:
                kept = package[: len(package) - (node.level - 1)] if node.level > 1 else package
                base = ".".join(kept + ([node.module] if node.module else []))
            if node.module is None and node.level:  # from . import a, b
                yield from (f"{base}.{alias.name}" for alias in node.names)
            else:
                yield base


def _store_reads(path: Path) -> int:
    tree = ast.parse(path.read_text(encoding="utf-8"), filename=str(path))
    return sum(isinstance(n, ast.Attribute) and n.attr == "store" for n in ast.walk(tree))


def test_no_core_module_imports_qt_or_a_front():
    files = sorted(CORE.rglob("*.py"))
    assert len(files) > 10  # the walk really sees the core
    bad = [f"{f.relative_to(CORE)}: {name}" for f in files
           for name in _imports(f, _module_name(f))
           if name.split(".")[0] in QT or name.startswith(FRONTS)]
    assert bad == []


def test_the_ast_walk_resolves_relative_imports(tmp_path):
    pkg = tmp_path / "honebench" / "core" / "operations"
    pkg.mkdir(parents=True)
    fake = pkg / "x.py"
    fake.write_text("from PySide6.QtCore import QObject\nfrom ...gui import jobs\n"
                    "from ..grading import Grader\nfrom . import shelf\nimport json\n")
    found = list(_imports(fake, "honebench.core.operations.x"))
    assert found == ["PySide6.QtCore", "honebench.gui", "honebench.core.grading",
                     "honebench.core.operations.shelf", "json"]


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


def test_nothing_outside_the_core_reads_the_project_store():
    fronts = [p for p in PACKAGE.rglob("*.py") if CORE not in p.parents]
    assert any(p.name == "commands.py" for p in fronts)
    found = Counter({str(p.relative_to(PACKAGE)): n for p in fronts
                     if (n := _store_reads(p))})
    assert found == {}, "use a Project operation or read method instead of .store"


def test_the_store_rule_would_catch_a_read(tmp_path):
    fake = tmp_path / "x.py"
    fake.write_text("def f(project):\n    return project.store.shelf()\n")
    assert _store_reads(fake) == 1


def _lint_imports(config: Path, pythonpath: Path) -> subprocess.CompletedProcess:
    exe = Path(sys.executable).with_name("lint-imports")
    command = [str(exe)] if exe.exists() else [shutil.which("lint-imports") or "lint-imports"]
    env = dict(os.environ, PYTHONPATH=str(pythonpath))
    return subprocess.run(command + ["--config", str(config), "--no-cache"],
                          capture_output=True, text=True, env=env, cwd=config.parent)


def test_import_linter_contracts_are_kept():
    done = _lint_imports(ROOT / "pyproject.toml", ROOT / "desktop")
    assert done.returncode == 0, done.stdout + done.stderr
    assert "0 broken" in done.stdout


def test_import_linter_contracts_would_catch_a_core_module_importing_the_window(tmp_path):
    pkg = tmp_path / "honebench"
    for name in ("core", "gui"):
        (pkg / name).mkdir(parents=True)
        (pkg / name / "__init__.py").write_text("")
    (pkg / "__init__.py").write_text("")
    (pkg / "cli.py").write_text("")
    (pkg / "commands.py").write_text("")
    (pkg / "gui" / "window.py").write_text("import PySide6\n")
    (pkg / "core" / "bad.py").write_text("from ..gui import window\n")
    text = (ROOT / "pyproject.toml").read_text(encoding="utf-8")
    (tmp_path / "pyproject.toml").write_text("[tool.importlinter]" +
                                             text.split("[tool.importlinter]", 1)[1])
    done = _lint_imports(tmp_path / "pyproject.toml", tmp_path)
    assert done.returncode == 1 and "BROKEN" in done.stdout, done.stdout + done.stderr
