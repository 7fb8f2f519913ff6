"""The import graph is visible and acyclic; lazy imports only for heavy third-party packages.

Built from the source with ``ast`` (no module is imported): every ``import``
statement of ``kit/cageprint`` is an edge, whether at module level or inside a
function.  Common practice, no source: a dependency graph readers and tools can
see, and no import order that works only by luck.
"""

from __future__ import annotations

import ast
import sys
from pathlib import Path

import networkx as nx

ROOT = Path(__file__).resolve().parents[1] / "kit"
PACKAGE = ROOT / "cageprint"


def _modules() -> dict[str, tuple[Path, bool]]:
    out = {}
    for p in sorted(PACKAGE.rglob("*.py")):
        parts = list(p.relative_to(ROOT).with_suffix("").parts)
        is_pkg = parts[-1] == "__init__"
        out[".".join(parts[:-1] if is_pkg else parts)] = (p, is_pkg)
    return out


MODULES = _modules()


def _targets(module: str, is_pkg: bool, node: ast.Import | ast.ImportFrom) -> list[str]:
    """The cageprint modules an import statement loads (absolute or relative)."""
    if isinstance(node, ast.Import):
        names = [a.name for a in node.names]
    else:
        if node.level:
            base = module.split(".") if is_pkg else module.split(".")[:-1]
            base = base[:len(base) - node.level + 1]
            prefix = ".".join(base + ([node.module] if node.module else []))
        else:
            prefix = node.module or ""
        names = [f"{prefix}.{a.name}" if f"{prefix}.{a.name}" in MODULES else prefix
                 for a in node.names]
    out = []
    for name in names:
        while name not in MODULES and "." in name:
            name = name.rsplit(".", 1)[0]
        if name in MODULES and name != module:
            out.append(name)
    return out


def _function_imports() -> list[tuple[str, int, ast.Import | ast.ImportFrom, list[str]]]:
    found = []
    for module, (path, _) in MODULES.items():
        text = path.read_text(encoding="utf-8")
        lines = text.splitlines()
        for fn in ast.walk(ast.parse(text)):
            if isinstance(fn, (ast.FunctionDef, ast.AsyncFunctionDef)):
                for node in ast.walk(fn):
                    if isinstance(node, (ast.Import, ast.ImportFrom)):
                        found.append((module, node.lineno, node, lines))
    return found


def import_graph() -> nx.DiGraph:
    g = nx.DiGraph()
    g.add_nodes_from(MODULES)
    for module, (path, is_pkg) in MODULES.items():
        for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
            if isinstance(node, (ast.Import, ast.ImportFrom)):
                for target in _targets(module, is_pkg, node):
                    g.add_edge(module, target)
    return g


def test_import_graph_is_acyclic():
    g = import_graph()
    assert g.number_of_edges() > 100  # the graph really was read
    cycles = list(nx.simple_cycles(g))
    assert cycles == [], "import cycles: " + "; ".join(" -> ".join(c) for c in cycles[:5])


def _reason(lines: list[str], lineno: int) -> bool:
    """A comment on the import line, or on the comment/import lines just above it."""
    i = lineno - 1
    if "#" in lines[i]:
        return True
    i -= 1
    while i >= 0 and lines[i].strip().startswith(("#", "import ", "from ")):
        if "#" in lines[i]:
            return True
        i -= 1
    return False


def test_function_level_imports_are_heavy_third_party_with_a_reason():
    lazy, bad = [], []
    for module, lineno, node, lines in _function_imports():
        name = node.names[0].name if isinstance(node, ast.Import) else (node.module or "")
        top = name.split(".")[0]
        where = f"{module}:{lineno} ({'.' * getattr(node, 'level', 0)}{name})"
        if getattr(node, "level", 0) or top == "cageprint":
            bad.append(f"{where}: a cageprint module; import it at the top")
        elif top in sys.stdlib_module_names:
            bad.append(f"{where}: standard library; import it at the top")
        elif not _reason(lines, lineno):
            bad.append(f"{where}: a lazy third-party import needs a one-line reason comment")
        else:
            lazy.append(where)
    assert bad == []
    print(f"{len(lazy)} lazy third-party imports")


def test_no_hidden_imports():
    # importlib and module-level __getattr__ hide dependencies from readers and tools
    for module, (path, _) in MODULES.items():
        tree = ast.parse(path.read_text(encoding="utf-8"))
        for node in ast.walk(tree):
            if isinstance(node, ast.Attribute) and node.attr == "import_module":
                raise AssertionError(f"{module}:{node.lineno} uses importlib.import_module")
            if isinstance(node, ast.Name) and node.id == "__import__":
                raise AssertionError(f"{module}:{node.lineno} uses __import__")
        names = {n.name for n in tree.body if isinstance(n, ast.FunctionDef)}
        assert "__getattr__" not in names, f"{module} has a module-level __getattr__"
