"""The shape of the house (issue 22): no module of ttsp over 700 lines, no function over 80.

Common practice of this project (DEVELOPERS.md), not a published rule: a reader should be able
to hold one module and one function in view. The test reads the source with the standard
library's ast, so it fails as soon as a change makes a room too large.
"""

from __future__ import annotations

import ast
from pathlib import Path

import ttsp

PACKAGE = Path(ttsp.__file__).parent
MAX_MODULE_LINES = 700
MAX_FUNCTION_LINES = 80


def _modules():
    return sorted(PACKAGE.rglob("*.py"))


def test_no_module_is_over_700_lines():
    long = [f"{p.relative_to(PACKAGE)}: {n}" for p in _modules()
            if (n := p.read_text(encoding="utf-8").count("\n")) > MAX_MODULE_LINES]
    assert not long, long


def test_no_function_is_over_80_lines():
    long = []
    for p in _modules():
        for node in ast.walk(ast.parse(p.read_text(encoding="utf-8"))):
            if isinstance(node, (ast.FunctionDef, ast.AsyncFunctionDef)):
                n = node.end_lineno - node.lineno + 1
                if n > MAX_FUNCTION_LINES:
                    long.append(f"{p.relative_to(PACKAGE)}:{node.lineno} {node.name} ({n} lines)")
    assert not long, long


def test_hypothesis_runs_derandomized_without_a_database():
    """tests/conftest.py loads the profile 'ttsp' before any test module is imported, so every
    @given test (its own @settings inherit the rest) repeats its examples exactly and writes no
    .hypothesis/ folder."""
    from hypothesis import settings

    assert settings.default.derandomize is True
    assert settings.default.database is None
    assert settings.default == settings.get_profile("ttsp")
