"""House rules checked on the source: few positional parameters, modules of a few hundred lines.

Common practice, no source (the team's style guide): a call with more than six
positional arguments is hard to read and easy to get wrong; keyword-only
parameters are fine.  Functions compiled by numba are left out (numba takes
no keyword-only parameters).
"""

from __future__ import annotations

import ast
from pathlib import Path

PACKAGE = Path(__file__).resolve().parents[1] / "kit" / "cageprint"
MAX_POSITIONAL = 6
MAX_LINES = 600


def _compiled(tree: ast.Module) -> set[str]:
    """Names of functions decorated by, or handed to, a ``*jit*`` call."""
    names = set()
    for node in ast.walk(tree):
        if isinstance(node, (ast.FunctionDef, ast.AsyncFunctionDef)):
            for d in node.decorator_list:
                if "jit" in ast.unparse(d):
                    names.add(node.name)
        if (isinstance(node, ast.Call) and isinstance(node.func, ast.Call)
                and "jit" in ast.unparse(node.func.func)):
            names.update(a.id for a in node.args if isinstance(a, ast.Name))
    return names


def test_no_function_takes_more_than_six_positional_parameters():
    bad = []
    for path in sorted(PACKAGE.rglob("*.py")):
        if path.name == "_kernels.py":  # the numba kernels of the spiral search
            continue
        tree = ast.parse(path.read_text(encoding="utf-8"))
        compiled = _compiled(tree)
        for node in ast.walk(tree):
            if isinstance(node, (ast.FunctionDef, ast.AsyncFunctionDef, ast.Lambda)):
                name = getattr(node, "name", "<lambda>")
                if name in compiled:
                    continue
                positional = [a.arg for a in node.args.posonlyargs + node.args.args]
                if positional[:1] in (["self"], ["cls"]):
                    positional = positional[1:]
                if len(positional) > MAX_POSITIONAL:
                    rel = path.relative_to(PACKAGE.parent)
                    bad.append(f"{rel}:{node.lineno} {name}() takes {len(positional)}")
    assert bad == [], "make the trailing parameters keyword-only: " + "; ".join(bad)


#: over the limit on main when this test was written, being reworked (issue 16): remove
#: an entry as soon as its module is split
KNOWN_OVER: set[str] = set()


def test_modules_stay_under_600_lines():
    long = {str(p.relative_to(PACKAGE.parent)): n for p in PACKAGE.rglob("*.py")
            if (n := len(p.read_text(encoding="utf-8").splitlines())) > MAX_LINES}
    assert set(long) <= KNOWN_OVER, long
