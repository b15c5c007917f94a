"""Only registry/store/ queries: no `select(` and no session in the service, the shells or web.

Read from the syntax tree, so a comment or a docstring that mentions either does not count.
"""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent
GUARDED = ("registry/service", "registry/cli", "registry/api", "web")


def query_uses(source: str) -> list[tuple[int, str]]:
    """(line, what) of every call of `select(...)` and every `.session` in the source."""
    found = []
    for node in ast.walk(ast.parse(source)):
        if isinstance(node, ast.Call):
            func = node.func
            name = func.id if isinstance(func, ast.Name) else (
                func.attr if isinstance(func, ast.Attribute) else None)
            if name == "select":
                found.append((node.lineno, "select("))
        if isinstance(node, ast.Attribute) and node.attr == "session":
            found.append((node.lineno, ".session"))
    return sorted(found)


def guarded_modules() -> list[str]:
    return sorted(str(path.relative_to(ROOT)) for folder in GUARDED
                  for path in (ROOT / folder).rglob("*.py"))


def test_the_check_finds_a_query_and_a_session():
    source = "def f(uow):\n    return uow.session.execute(select(t.Model))\n"
    assert query_uses(source) == [(2, ".session"), (2, "select(")]
    assert query_uses('"""select( and .session in words"""\n') == []


@pytest.mark.parametrize("module", guarded_modules())
def test_no_query_outside_the_store(module):
    found = query_uses((ROOT / module).read_text(encoding="utf-8"))
    assert found == [], (f"{module} queries the catalogue itself at "
                         f"{', '.join(f'line {line} ({what})' for line, what in found)}; "
                         "add a repository method in registry/store/ and call it through uow")
