"""Only planner/db talks to SQLAlchemy; elsewhere at most the ``Session`` type is named."""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

from planner.config import REPO_ROOT

PACKAGE = REPO_ROOT / "planner"
ALLOWED_OUTSIDE_DB = {("sqlalchemy.orm", "Session")}


def _sqlalchemy_imports(path: Path) -> set[tuple[str, str]]:
    found = set()
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.Import):
            found |= {(a.name, "*") for a in node.names if a.name.split(".")[0] == "sqlalchemy"}
        elif isinstance(node, ast.ImportFrom) and (node.module or "").split(".")[0] == "sqlalchemy":
            found |= {(node.module, a.name) for a in node.names}
    return found


@pytest.mark.parametrize(
    "path",
    [p for p in sorted(PACKAGE.rglob("*.py")) if PACKAGE / "db" not in p.parents],
    ids=lambda p: str(p.relative_to(REPO_ROOT)),
)
def test_modules_outside_planner_db_do_not_query_the_database_themselves(path: Path) -> None:
    assert _sqlalchemy_imports(path) <= ALLOWED_OUTSIDE_DB
