"""Leapfrog and kinetic energy: accuracy order, reversibility, metric handling, bad points."""

from __future__ import annotations

import warnings

import numpy as np
import pytest
from harness import check_moments, gaussian

from bayesirl.errors import InputError
from bayesirl.sampler.integrators import (
    check_inv_mass,
    kinetic_energy,
    leapfrog,
    sample_momentum,
)

COV = np.array([[1.0, 0.95 * 2.0], [0.95 * 2.0, 4.0]])  # sds 1 and 2, correlation 0.95
TARGET = gaussian(np.zeros(2), COV)
METRICS = {"diag": np.array([1.0, 3.0]), "dense": np.array([[1.0, 0.3], [0.3, 2.0]])}


def _trajectory(step_size, n_steps, inv_mass, position, momentum):
    logdensity, grad = TARGET(position)
    energies = [-logdensity + kinetic_energy(momentum, inv_mass)]
    for _ in range(n_steps):
        position, momentum, logdensity, grad = leapfrog(
            TARGET, position, momentum, grad, step_size, inv_mass
        )
        energies.append(-logdensity + kinetic_energy(momentum, inv_mass))
    return position, momentum, np.array(energies)


@pytest.mark.parametrize("kind", sorted(METRICS))
def test_energy_error_is_second_order(kind):
    # Leapfrog is a second-order symplectic integrator: over a fixed time the energy error
    # stays O(eps^2), so halving eps divides it by 4 (Leimkuhler & Reich 2004,
    # "Simulating Hamiltonian Dynamics"; Neal 2011, sec. 5.2). The largest
    # eps * omega here is about 0.15, so the next-order term shifts the ratio by well under
    # the 5% allowed (deterministic test, no Monte-Carlo error).
    inv_mass = METRICS[kind]
    start, momentum = np.array([0.5, -1.0]), np.array([1.0, 0.7])
    errors = []
    for step_size in (0.04, 0.02, 0.01):
        n_steps = round(2.0 / step_size)
        energies = _trajectory(step_size, n_steps, inv_mass, start, momentum)[2]
        errors.append(np.max(np.abs(energies - energies[0])))
    ratios = np.array(errors[:-1]) / np.array(errors[1:])
    assert np.all(np.abs(ratios - 4.0) < 0.2), ratios


@pytest.mark.parametrize("kind", sorted(METRICS))
def test_leapfrog_is_reversible(kind):
    # Leapfrog is time-reversible (Neal 2011, sec. 5.2; needed for detailed balance):
    # negating the momentum and integrating again returns to the start (up to rounding).
    inv_mass = METRICS[kind]
    start, momentum = np.array([0.3, 0.2]), np.array([-0.4, 1.1])
    end, end_momentum, _ = _trajectory(0.05, 40, inv_mass, start, momentum)
    back, back_momentum, _ = _trajectory(0.05, 40, inv_mass, end, -end_momentum)
    np.testing.assert_allclose(back, start, atol=1e-10)
    np.testing.assert_allclose(-back_momentum, momentum, atol=1e-10)


def test_dense_metric_equal_to_diagonal_gives_same_trajectory():
    diag = np.array([0.5, 2.0])
    start, momentum = np.array([0.3, 0.2]), np.array([-0.4, 1.1])
    a = _trajectory(0.05, 30, diag, start, momentum)
    b = _trajectory(0.05, 30, np.diag(diag), start, momentum)
    for x, y in zip(a, b, strict=True):
        np.testing.assert_allclose(x, y, rtol=1e-12, atol=1e-12)


@pytest.mark.parametrize("kind", sorted(METRICS))
def test_momentum_has_covariance_mass_matrix(kind):
    # p ~ N(0, M) with M = inv(inv_mass) (Neal 2011, sec. 5.3), checked by the harness.
    inv_mass = METRICS[kind]
    rng = np.random.default_rng(11)
    draws = np.array([sample_momentum(rng, inv_mass) for _ in range(20000)])
    mass = np.linalg.inv(inv_mass) if inv_mass.ndim == 2 else np.diag(1.0 / inv_mass)
    check_moments(draws, np.zeros(2), mass)


def test_kinetic_energy_values():
    p = np.array([1.0, -2.0])
    assert kinetic_energy(p, np.array([2.0, 0.5])) == pytest.approx(0.5 * (2.0 + 2.0))
    dense = METRICS["dense"]
    assert kinetic_energy(p, dense) == pytest.approx(0.5 * p @ dense @ p)


@pytest.mark.parametrize("bad", [np.nan, np.inf, -np.inf])
def test_non_finite_log_density_is_flagged_without_warnings(bad):
    def wall(x):
        return bad, np.full_like(x, np.nan)

    grad = np.array([1.0, 1.0])
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        position, momentum, logdensity, new_grad = leapfrog(
            wall, np.zeros(2), np.ones(2), grad, 0.1, np.ones(2)
        )
    assert logdensity == -np.inf
    assert np.array_equal(new_grad, grad)  # the unusable gradient is never passed on
    assert np.all(np.isfinite(momentum)) and np.all(np.isfinite(position))


def test_overflowing_step_is_flagged_without_warnings():
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        *_, logdensity, _ = leapfrog(
            TARGET, np.zeros(2), np.array([1e300, 1e300]), np.zeros(2), 1e300, np.ones(2)
        )
    assert logdensity == -np.inf


@pytest.mark.parametrize(
    "inv_mass",
    [np.ones(3), np.array([1.0, 0.0]), np.array([[1.0, 2.0], [2.0, 1.0]]), np.eye(3)],
)
def test_bad_inverse_mass_is_rejected(inv_mass):
    with pytest.raises(InputError, match="inv_mass"):
        check_inv_mass(inv_mass, 2)
