"""The public API's shape: keyword-only options, typed signatures, the duck-typed roles as
``Protocol``s, and ``py.typed`` (PEP 561)."""

from __future__ import annotations

import inspect
from pathlib import Path

import numpy as np
import pytest

import bayesirl as bi
from bayesirl.evidence.term import EvidenceTerm

# Public callables and how many arguments each may take by position ("the first one or two").
POSITIONAL = {"sample": 2, "approximate": 2, "suggest": 2, "ambiguity": 1, "simulate": 2,
              "BoltzmannLikelihood": 2, "TabularMDP": 2, "Demonstrations": 1}


def positional_count(fn) -> int:
    """Parameters that can be passed by position (``self`` excluded)."""
    kinds = (inspect.Parameter.POSITIONAL_ONLY, inspect.Parameter.POSITIONAL_OR_KEYWORD)
    return sum(p.kind in kinds for p in inspect.signature(fn).parameters.values())


def unannotated(fn) -> list[str]:
    """Parameters (and the return, for functions) without a type hint."""
    sig = inspect.signature(fn)
    out = [n for n, p in sig.parameters.items() if p.annotation is inspect.Parameter.empty]
    if not inspect.isclass(fn) and sig.return_annotation is inspect.Signature.empty:
        out.append("return")
    return out


@pytest.mark.parametrize("name", sorted(POSITIONAL))
def test_options_are_keyword_only(name):
    assert positional_count(getattr(bi, name)) == POSITIONAL[name]


@pytest.mark.parametrize("name", sorted(POSITIONAL))
def test_public_signatures_are_typed(name):
    assert unannotated(getattr(bi, name)) == []


def test_the_checks_catch_an_untyped_positional_function():
    # Negative control for the two checks above.
    def old(posterior, level=0.9, prior=None):
        return posterior

    assert positional_count(old) == 3
    assert unannotated(old) == ["posterior", "level", "prior", "return"]


@pytest.mark.parametrize("prior", [bi.Normal(0, 1), bi.Laplace(0, 1), bi.Uniform(-1, 1),
                                   bi.LogNormal(0, 1), bi.HalfNormal(1.0)])
def test_priors_satisfy_the_prior_protocol(prior):
    assert isinstance(prior, bi.Prior)


@pytest.mark.parametrize("backend", [bi.Serial(), bi.Processes(2), bi.Cluster("local")])
def test_backends_satisfy_the_backend_protocol(backend):
    assert isinstance(backend, bi.Backend)


def test_protocols_reject_other_objects():
    # Negative control: a number is neither a prior, a backend nor an evidence term.
    for role in (bi.Prior, bi.Backend, EvidenceTerm):
        assert not isinstance(np.float64(1.0), role)


def test_the_package_ships_its_type_hints():
    assert (Path(bi.__file__).parent / "py.typed").is_file()


def test_public_names_do_not_depend_on_import_order():
    # Importing the submodule ``bayesirl.report.ambiguity`` first makes the package attribute
    # of that name the submodule; the public ``bayesirl.ambiguity`` must stay the function.
    # In a fresh interpreter, since this process may have imported either already.
    import subprocess
    import sys

    code = ("import bayesirl.report.ambiguity, bayesirl, inspect; "
            "assert inspect.isfunction(bayesirl.ambiguity), bayesirl.ambiguity; "
            "assert inspect.isclass(bayesirl.AmbiguityReport)")
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True)
    assert done.returncode == 0, done.stderr
