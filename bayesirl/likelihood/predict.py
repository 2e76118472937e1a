"""Warm starts predicted from earlier solves along the sampler's path (secant extrapolation).

A sampler asks for the likelihood at a sequence of nearby points (leapfrog steps). Starting
the solves at the nearest earlier solution leaves an error of first order in the distance;
a linear model ``V(z) ~ V_b + J (z - z_b)`` fitted through the last few solutions, with
``z = beta * w`` (the policy depends on nothing else), leaves an error of second order, so the
Newton iteration starts closer and needs fewer steps. The same coefficients predict the
adjoint vector. The prediction only chooses where the solvers start: the solvers still stop
on their own tolerances, so values and gradients are as accurate as from any other start.

The history is kept as tuples of arrays that are never changed in place (the likelihood's
warm-start snapshots are shallow copies); checkpoints store them as 2-D arrays, which this
module reads the same way.
"""

from __future__ import annotations

import numpy as np

# Solutions remembered: one NUTS trajectory of tree depth 3 (7 leapfrog steps) plus its start.
HISTORY = 8


def remember(path, z, values, adjoint):
    """The history after a solve at ``z``: oldest entries drop out beyond ``HISTORY``."""
    zs, vs, ms = path if path is not None else ((), (), ())
    keep = HISTORY - 1
    return (tuple(zs)[-keep:] + (z,), tuple(vs)[-keep:] + (values,),
            tuple(ms)[-keep:] + (adjoint,))


def predict(path, z):
    """Predicted ``(values, adjoint)`` at ``z`` from ``path``, or None without history.

    The base is the remembered point nearest to ``z``; the other points give secant
    directions ``z_j - z_b`` and the least-squares linear model through them (the minimum-
    norm combination ``c`` with ``sum_j c_j (z_j - z_b) = z - z_b``) is evaluated at ``z``.
    Directions that are nearly linearly dependent are cut off by ``rcond``.
    """
    if path is None or len(path[0]) == 0:
        return None
    zs, vs, ms = path
    dist = [float(np.linalg.norm(z - zj)) for zj in zs]
    b = int(np.argmin(dist))
    others = [j for j in range(len(zs)) if j != b]
    if not others or dist[b] == 0.0:
        return vs[b], ms[b]
    directions = np.stack([zs[j] - zs[b] for j in others], axis=1)
    coef = np.linalg.lstsq(directions, z - zs[b], rcond=1e-6)[0]
    values, adjoint = vs[b].copy(), ms[b].copy()
    for c, j in zip(coef, others, strict=True):
        values += c * (vs[j] - vs[b])
        adjoint += c * (ms[j] - ms[b])
    return values, adjoint
