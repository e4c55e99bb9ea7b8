"""planner/core imports only the standard library (project rule: pure domain core)."""

from __future__ import annotations

import ast
import sys
from pathlib import Path

import planner.core

CORE = Path(planner.core.__file__).parent


def _imports(path: Path):
    tree = ast.parse(path.read_text(), str(path))
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            for alias in node.names:
                yield alias.name
        elif isinstance(node, ast.ImportFrom):
            if node.level:
                yield "planner.core"
            else:
                yield node.module or ""


def test_core_imports_nothing_outside_the_standard_library():
    offenders = []
    files = sorted(CORE.glob("*.py"))
    assert any(f.name == "currency.py" for f in files)
    for path in files:
        for name in _imports(path):
            top = name.split(".")[0]
            if name.startswith("planner.core") or top == "__future__" or top in sys.stdlib_module_names:
                continue
            offenders.append(f"{path.name}: {name}")
    assert offenders == []


def test_core_does_not_read_the_clock_or_files():
    for path in sorted(CORE.glob("*.py")):
        source = path.read_text()
        for forbidden in ("date.today(", "datetime.now(", "time.time(", "open(", "read_text("):
            assert forbidden not in source, f"{path.name} uses {forbidden}"
