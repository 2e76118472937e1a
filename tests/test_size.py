"""Size rules from DEVELOPERS.md: modules stay under ~400 lines, functions under ~60."""

from __future__ import annotations

import ast
from pathlib import Path

PACKAGE = Path(__file__).resolve().parents[1] / "bayesirl"
MAX_MODULE_LINES = 400
MAX_FUNCTION_LINES = 60  # code lines, docstring excluded


def _function_lengths(tree: ast.AST):
    for node in ast.walk(tree):
        if isinstance(node, ast.FunctionDef | ast.AsyncFunctionDef):
            first = node.body[0]
            has_doc = isinstance(first, ast.Expr) and isinstance(
                getattr(first, "value", None), ast.Constant) and isinstance(first.value.value, str)
            start = node.body[1].lineno if has_doc and len(node.body) > 1 else first.lineno
            yield node.name, node.end_lineno - start + 1


def oversized(path: Path) -> list[str]:
    """Violations in one file."""
    text = path.read_text()
    out = []
    if len(text.splitlines()) > MAX_MODULE_LINES:
        out.append(f"{path.name}: {len(text.splitlines())} lines")
    for name, n in _function_lengths(ast.parse(text)):
        if n > MAX_FUNCTION_LINES:
            out.append(f"{path.name}:{name}: {n} lines")
    return out


def test_modules_and_functions_are_small():
    problems = [p for f in sorted(PACKAGE.rglob("*.py")) for p in oversized(f)]
    assert problems == []


def test_checker_flags_a_long_function(tmp_path):
    # Negative control: a 70-line function must be reported.
    body = "\n".join(f"    x{i} = {i}" for i in range(70))
    f = tmp_path / "m.py"
    f.write_text(f"def long():\n    \"\"\"Doc.\"\"\"\n{body}\n")
    assert oversized(f) == ["m.py:long: 70 lines"]
