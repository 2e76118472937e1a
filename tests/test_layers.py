"""The one-way flow of imports documented in DEVELOPERS.md ("Layers")."""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

PACKAGE = Path(__file__).resolve().parents[1] / "bayesirl"

# Lower number = lower layer; a module may import only from its own layer or lower ones.
LAYERS = {
    "errors": 0,
    "version": 0,
    "lazy": 0,
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
    "execution": 6.5,  # runs the chains; between the posterior object and report/design
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
    # The package root re-exports every layer (lazily, but `bayesirl.sample` still loads the
    # execution layer), so `import bayesirl` counts as the top layer: only the command line
    # may use it.
    "": 10,
}


def _layer_of(dotted: str) -> str:
    """The layer's key: ``bayesirl.solver.soft`` -> ``solver``; the root ``bayesirl`` -> ``""``."""
    parts = dotted.split(".")
    return parts[1] if len(parts) > 1 else ""


def violations(module: str, imported: list[str]) -> list[str]:
    """Imports of ``module`` (dotted) that reach a higher layer or an unregistered one."""
    own = _layer_of(module)
    bad = []
    for target in imported:
        in_package = target == "bayesirl" or target.startswith("bayesirl.")
        if not in_package or _layer_of(target) == own:
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


def test_a_bare_import_of_the_package_root_is_caught(tmp_path):
    # Negative control for the package root: `import bayesirl` (or `import bayesirl as bi`)
    # inside a lower layer reaches every layer through the lazy exports; the checker must
    # flag it there, and must keep allowing it in the command line.
    path = tmp_path / "m.py"
    path.write_text("import bayesirl\nimport bayesirl as bi\ndef f():\n    import bayesirl\n")
    assert _imports(path) == ["bayesirl", "bayesirl", "bayesirl"]
    assert violations("bayesirl.execution.cluster", _imports(path)) == [
        "bayesirl.execution.cluster imports bayesirl"] * 3
    assert violations("bayesirl.commands.fit", _imports(path)) == []


def test_the_tree_check_fails_on_an_added_root_import(tmp_path):
    # Negative control on a copy of a real module: the same check the parametrised test runs
    # on the package fails once an upward `import bayesirl` is added to a lower layer.
    source = (PACKAGE / "posterior" / "model.py").read_text()
    path = tmp_path / "model.py"
    path.write_text(source)
    assert violations("bayesirl.posterior.model", _imports(path)) == []
    path.write_text(source + "\n\ndef _version():\n    import bayesirl\n\n"
                    "    return bayesirl.__version__\n")
    assert violations("bayesirl.posterior.model", _imports(path)) == [
        "bayesirl.posterior.model imports bayesirl"]


def _module_imports(path: Path) -> set[str]:
    """Modules of the package that ``path`` imports, at load or inside functions; an import
    of a package counts as its submodules named in ``from P import a, b`` only."""
    out = set()
    for node in ast.walk(ast.parse(path.read_text())):
        names = []
        if isinstance(node, ast.Import):
            names = [a.name for a in node.names]
        elif isinstance(node, ast.ImportFrom) and node.module and node.level == 0:
            names = [f"{node.module}.{a.name}" for a in node.names] + [node.module]
        for name in names:
            file = PACKAGE.parent.joinpath(*name.split(".")).with_suffix(".py")
            if name.startswith("bayesirl.") and file.exists():
                out.add(name)
    return out


def import_cycles(graph: dict[str, set[str]]) -> list[list[str]]:
    """Every cycle found by a depth-first search (each reported once, from where it closes)."""
    found, state = [], {}

    def visit(node: str, stack: list[str]) -> None:
        state[node] = "open"
        for nxt in sorted(graph.get(node, ())):
            if state.get(nxt) == "open":
                found.append(stack[stack.index(nxt):] + [nxt])
            elif nxt not in state:
                visit(nxt, [*stack, nxt])
        state[node] = "done"

    for node in sorted(graph):
        if node not in state:
            visit(node, [node])
    return found


@pytest.mark.parametrize("package", ["report", "execution", "posterior", "design"])
def test_no_import_cycles_inside_a_package(package):
    # A circle (a imports b, b imports a, even inside a function) means neither module can
    # be read, tested or moved without the other. Package __init__ files are left out.
    graph = {}
    for module, path in _modules():
        if module.startswith(f"bayesirl.{package}.") and path.name != "__init__.py":
            graph[module] = {m for m in _module_imports(path)
                             if m.startswith(f"bayesirl.{package}.")}
    assert import_cycles(graph) == []


def test_cycle_finder_finds_a_circle():
    # Negative control: the report's old circles (ambiguity -> html -> ambiguity and
    # suggestions -> html -> suggestions) are found; a chain without a circle is not.
    old = {"ambiguity": {"html"}, "html": {"ambiguity", "suggestions"},
           "suggestions": {"html"}}
    assert import_cycles(old) == [["ambiguity", "html", "ambiguity"],
                                  ["html", "suggestions", "html"]]
    assert import_cycles({"a": {"b"}, "b": {"c"}, "c": set()}) == []
