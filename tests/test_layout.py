"""The package's shape, checked: no import circle (imports inside functions
included), the size limits set in DEVELOPERS.md, the library free of
presentation, and every subpackage opening with the docstring of its job.

Limits (common practice for readable Python, set in DEVELOPERS.md): a module at
most 800 lines, a class at most 400, a function at most 80 lines. A unit may
pass a limit only with a comment ``# size: <why>`` on its first line.
"""

import ast
import pathlib

import pytest

from tests.support import REPO

ROOTS = ("tracker", "dashboard")
MODULE_LINES, CLASS_LINES, FUNCTION_LINES = 800, 400, 80


def _modules() -> dict[str, pathlib.Path]:
    out = {}
    for root in ROOTS:
        for path in sorted((REPO / root).rglob("*.py")):
            parts = list(path.relative_to(REPO).with_suffix("").parts)
            if parts[-1] == "__init__":
                parts = parts[:-1]
            out[".".join(parts)] = path
    return out


MODULES = _modules()


def _targets(module: str, node: ast.AST) -> list[str]:
    """The project modules an import statement loads (the module itself where a name is not one)."""
    if isinstance(node, ast.Import):
        return [a.name for a in node.names if a.name in MODULES]
    if not isinstance(node, ast.ImportFrom):
        return []
    if node.level:  # relative: resolve against the importing package
        package = module if MODULES[module].name == "__init__.py" else module.rpartition(".")[0]
        for _ in range(node.level - 1):
            package = package.rpartition(".")[0]
        base = f"{package}.{node.module}" if node.module else package
    else:
        base = node.module or ""
    out = []
    for a in node.names:
        sub = f"{base}.{a.name}"
        if sub in MODULES:
            out.append(sub)
        elif base in MODULES:
            out.append(base)
    return out


def _graph() -> dict[str, set[str]]:
    graph = {}
    for name, path in MODULES.items():
        tree = ast.parse(path.read_text(encoding="utf-8"))
        edges = set()
        for node in ast.walk(tree):
            edges.update(t for t in _targets(name, node) if t != name)
        graph[name] = edges
    return graph


def _cycles(graph: dict[str, set[str]]) -> list[list[str]]:
    """Strongly connected components of more than one module (Tarjan's algorithm)."""
    index, low, stack, on, out = {}, {}, [], set(), []

    def visit(v):
        index[v] = low[v] = len(index)
        stack.append(v)
        on.add(v)
        for w in graph[v]:
            if w not in index:
                visit(w)
                low[v] = min(low[v], low[w])
            elif w in on:
                low[v] = min(low[v], index[w])
        if low[v] == index[v]:
            comp = []
            while True:
                w = stack.pop()
                on.discard(w)
                comp.append(w)
                if w == v:
                    break
            if len(comp) > 1:
                out.append(sorted(comp))

    for v in graph:
        if v not in index:
            visit(v)
    return out


def test_no_import_circle_anywhere():
    assert _cycles(_graph()) == []


def test_the_cycle_finder_finds_a_circle():
    # the check above must be able to fail: a made-up graph with one circle
    assert _cycles({"a": {"b"}, "b": {"c"}, "c": {"a"}, "d": {"a"}}) == [["a", "b", "c"]]


def _excused(lines: list[str], node: ast.AST) -> bool:
    first = lines[node.lineno - 1]
    return "# size:" in first


def _too_big() -> list[str]:
    found = []
    for name, path in MODULES.items():
        text = path.read_text(encoding="utf-8")
        lines = text.splitlines()
        if len(lines) > MODULE_LINES:
            found.append(f"{name}: module of {len(lines)} lines")
        for node in ast.walk(ast.parse(text)):
            if isinstance(node, (ast.FunctionDef, ast.AsyncFunctionDef, ast.ClassDef)):
                size = node.end_lineno - node.lineno + 1
                limit = CLASS_LINES if isinstance(node, ast.ClassDef) else FUNCTION_LINES
                if size > limit and not _excused(lines, node):
                    found.append(f"{name}.{node.name}: {size} lines (limit {limit})")
    return found


def test_modules_classes_and_functions_stay_within_their_limits():
    assert _too_big() == []


@pytest.mark.parametrize("banned", ["click", "streamlit"])
def test_the_library_never_imports_presentation(banned):
    offenders = []
    for name, path in MODULES.items():
        if not name.startswith("tracker") or name.startswith("tracker.cli"):
            continue
        for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
            if isinstance(node, ast.Import):
                mods = [a.name for a in node.names]
            elif isinstance(node, ast.ImportFrom) and not node.level:
                mods = [node.module or ""]
            else:
                continue
            if any(m == banned or m.startswith(banned + ".") for m in mods):
                offenders.append(name)
    assert offenders == []


def test_every_subpackage_opens_with_the_docstring_of_its_job():
    missing = [name for name, path in MODULES.items()
               if path.name == "__init__.py" and name != "dashboard"
               and not ast.get_docstring(ast.parse(path.read_text(encoding="utf-8")))]
    assert missing == []
