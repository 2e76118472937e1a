"""The one-way flow of imports documented in DEVELOPERS.md ("Layers")."""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

PACKAGE = Path(__file__).resolve().parents[1] / "bayesirl"

# Lower number = lower layer; a module may import only from its own layer or lower ones.
LAYERS = {
    "errors": 0,
    "files": 0,
    "threads": 0,
    "resources": 0,
    "arviz_compat": 0,
    "kernels": 1,
    "solver": 2,
    "model": 3,
    "likelihood": 4,
    "evidence": 4.5,  # sums likelihood terms; below the sampler (see DEVELOPERS.md)
    "sampler": 5,
    "posterior": 6,
    "priors": 5,
    "report": 7,
    "design": 7,
    "modelfit": 7,  # model checking and comparison on posteriors (below report and CLI)
    "io": 8,
    "validation": 9,
    "scenarios": 9,
    "bench": 9,
    "cli": 10,
    "commands": 10,
    "__main__": 10,
}


def _layer_of(dotted: str) -> str:
    parts = dotted.split(".")
    return parts[1] if len(parts) > 1 else ""


def violations(module: str, imported: list[str]) -> list[str]:
    """Imports of ``module`` (dotted) that reach a higher layer or an unregistered one."""
    own = _layer_of(module)
    bad = []
    for target in imported:
        if not target.startswith("bayesirl.") or _layer_of(target) == own:
            continue
        layer = _layer_of(target)
        if layer not in LAYERS or own not in LAYERS or LAYERS[layer] > LAYERS[own]:
            bad.append(f"{module} imports {target}")
    return bad


def _imports(path: Path) -> list[str]:
    out = []
    for node in ast.walk(ast.parse(path.read_text())):
        if isinstance(node, ast.Import):
            out += [a.name for a in node.names]
        elif isinstance(node, ast.ImportFrom) and node.module == "bayesirl" and node.level == 0:
            # ``from bayesirl import arviz_compat`` imports the submodule: check it as one.
            out += [f"bayesirl.{a.name}" for a in node.names]
        elif isinstance(node, ast.ImportFrom) and node.module and node.level == 0:
            out.append(node.module)
    return out


def _modules():
    for path in sorted(PACKAGE.rglob("*.py")):
        rel = path.relative_to(PACKAGE.parent).with_suffix("")
        dotted = ".".join(rel.parts)
        if dotted != "bayesirl.__init__":  # the top-level namespace re-exports every layer
            yield dotted, path


@pytest.mark.parametrize("module,path", list(_modules()), ids=lambda x: str(x))
def test_imports_flow_downward(module, path):
    assert violations(module, _imports(path)) == []


def test_checker_catches_an_upward_import():
    # Negative control: the checker must flag a solver module importing the model layer and
    # a module of a package nobody registered.
    assert violations("bayesirl.solver.soft", ["bayesirl.model.mdp"]) != []
    assert violations("bayesirl.solver.soft", ["bayesirl.kernels"]) == []
    assert violations("bayesirl.newthing.x", ["bayesirl.errors"]) != []


def test_from_package_imports_are_checked_as_submodules(tmp_path):
    # Negative control for ``from bayesirl import NAME``: read as bayesirl.NAME, so a solver
    # module taking the report layer this way is flagged, and the ArviZ adapter is not.
    path = tmp_path / "m.py"
    path.write_text("from bayesirl import report\nfrom bayesirl import arviz_compat\n")
    assert _imports(path) == ["bayesirl.report", "bayesirl.arviz_compat"]
    assert violations("bayesirl.solver.soft", _imports(path)) == [
        "bayesirl.solver.soft imports bayesirl.report"]
