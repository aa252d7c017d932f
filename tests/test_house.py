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


MIN_ANNOTATED_SHARE = 0.90


def _public_functions(tree: ast.Module):
    """(function, is_method) for the module's public functions and the public methods (plus
    ``__init__``) of its public classes; nested functions are not counted."""
    for node in tree.body:
        if isinstance(node, (ast.FunctionDef, ast.AsyncFunctionDef)):
            if not node.name.startswith("_"):
                yield node, False
        elif isinstance(node, ast.ClassDef) and not node.name.startswith("_"):
            for item in node.body:
                if isinstance(item, (ast.FunctionDef, ast.AsyncFunctionDef)) and (
                        not item.name.startswith("_") or item.name == "__init__"):
                    yield item, True


def _counted_parameters(function: ast.FunctionDef | ast.AsyncFunctionDef, is_method: bool):
    args = function.args
    params = [*args.posonlyargs, *args.args]
    static = any(isinstance(d, ast.Name) and d.id == "staticmethod"
                 for d in function.decorator_list)
    if is_method and not static and params and params[0].arg in ("self", "cls"):
        params = params[1:]
    return params + args.kwonlyargs + [a for a in (args.vararg, args.kwarg) if a is not None]


def test_public_parameters_carry_type_hints():
    """At least 90 % of the parameters of the public API carry a type annotation.

    Counted: every parameter (positional, keyword-only, ``*args`` and ``**kwargs``; not the
    ``self`` or ``cls`` of a method) of each module-level function whose name does not start
    with "_", and of each method whose name does not start with "_" (``__init__`` included) of a
    module-level class whose name does not start with "_", in every module of ttsp whose file
    name and package folders do not start with "_" (``__init__.py`` counts as public). Nested
    functions and other dunder methods are not counted.
    """
    annotated, missing = 0, []
    for path in _modules():
        parts = path.relative_to(PACKAGE).parts
        if any(p.startswith("_") and p != "__init__.py" for p in parts):
            continue
        tree = ast.parse(path.read_text(encoding="utf-8"))
        for function, is_method in _public_functions(tree):
            for param in _counted_parameters(function, is_method):
                if param.annotation is not None:
                    annotated += 1
                else:
                    missing.append(f"{'/'.join(parts)}:{function.lineno} "
                                   f"{function.name}({param.arg})")
    share = annotated / (annotated + len(missing))
    assert share >= MIN_ANNOTATED_SHARE, (f"{share:.1%} of public parameters annotated; "
                                          f"without: {missing[:40]}")


def test_hypothesis_runs_derandomized_without_a_database():
    """tests/conftest.py loads the profile 'ttsp' before any test module is imported, so every
    @given test (its own @settings inherit the rest) repeats its examples exactly and writes no
    .hypothesis/ folder."""
    from hypothesis import settings

    assert settings.default.derandomize is True
    assert settings.default.database is None
    assert settings.default == settings.get_profile("ttsp")


def draw_tree(package: Path) -> str:
    """The package's folders and modules as DEVELOPERS.md draws them: one branch per folder
    that holds modules, its modules' names wrapped on the following lines."""

    def names_wrapped(names: list[str], width: int) -> list[str]:
        lines = [names[0]]
        for name in names[1:]:
            if len(lines[-1]) + 1 + len(name) > width:
                lines.append(name)
            else:
                lines[-1] += " " + name
        return lines

    def branch(folder: Path, prefix: str) -> list[str]:
        folders = sorted(p for p in folder.iterdir() if p.is_dir() and any(p.glob("*.py")))
        modules = sorted(p.stem for p in folder.glob("*.py"))
        lines = []
        for k, sub in enumerate(folders):
            last = k == len(folders) - 1 and not modules
            lines.append(f"{prefix}{'└── ' if last else '├── '}{sub.name}/")
            lines += branch(sub, prefix + ("    " if last else "│   "))
        if modules:
            wrapped = names_wrapped(modules, 78 - len(prefix))
            lines += [prefix + "└── " + wrapped[0]] + [prefix + "    " + w for w in wrapped[1:]]
        return lines

    return "\n".join([f"{package.name}/", *branch(package, "")])


def test_developers_guide_draws_every_module():
    """DEVELOPERS.md holds the tree of the package as it is (regenerate with draw_tree when a
    module is added, moved or removed) and names every module in its layer table."""
    root = Path(__file__).resolve().parents[1]
    guide = (root / "DEVELOPERS.md").read_text(encoding="utf-8")
    assert draw_tree(root / "ttsp") in guide, draw_tree(root / "ttsp")
    table = guide[guide.index("| layer |"):guide.index("`ttsp/__init__.py` exposes")]
    unnamed = [str(p.relative_to(root)) for p in sorted((root / "ttsp").rglob("*.py"))
               if p.stem not in ("__init__", "__main__") and f"`{p.stem}`" not in table]
    assert not unnamed, unnamed


def test_test_modules_never_import_each_other():
    """A helper two test modules share lives in a helper module (tests/_campaigns.py,
    tests/_processes.py, tests/_console.py, tests/fault_injection.py), so that running one
    test module never runs another's module-level code."""
    tests = Path(__file__).resolve().parent
    crossing = []
    for path in sorted(tests.glob("test_*.py")):
        for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
            names = ([a.name for a in node.names] if isinstance(node, ast.Import)
                     else [node.module or ""] if isinstance(node, ast.ImportFrom) else [])
            crossing += [f"{path.name}: {n}" for n in names if n.startswith("test_")]
    assert not crossing, crossing
