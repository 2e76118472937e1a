"""A strong general-purpose competitor: the same posterior in JAX, sampled by numpyro's NUTS.

Written as a careful JAX user would write it, to measure bayesirl against (issue 19), never
used by the library itself. JAX and numpyro come from the ``bench`` extra
(``pip install 'bayesirl[bench]'``) and are imported on first use; :func:`require` says what
to install when they are missing.

The model is ``BoltzmannLikelihood(q_function="soft")`` of a discounted MDP with a fixed
rationality:

    Q = beta phi.w + g P V,   V = logsumexp_a Q,   L = sum_t log pi(a_t | s_t),

with the prior ``Normal(loc, scale)`` on every weight. Design:

- Successors as padded ``(k, S*A)`` index and probability arrays built from the CSR
  ``Dynamics``: ``E[V(s')|s, a]`` is ``k`` one-dimensional gathers of length ``S*A`` (``k`` is
  the most successors of any row; padding has probability 0).
- The fixed point by a compiled loop (``lax.while_loop``), stopped by the same span rule as
  bayesirl (MacQueen-Porteus bounds: ``span(T V - V) g/(1-g) < tol``, or the rounding floor
  of one backup), on values recentred to mean zero. Two solvers, because neither wins
  everywhere and a careful user would measure: ``"vi"``, relative value iteration (a sweep
  is one gather pass and one logsumexp, nothing else; best where the chain mixes fast, as on
  random sparse MDPs), and ``"newton"``, soft policy iteration with each step solved
  matrix-free by ``jax.scipy.sparse.linalg.gmres`` (far fewer sweeps where mixing is slow,
  as on grids at discount 0.99).
- The gradient by implicit differentiation (``jax.custom_vjp`` on the fixed point): the
  cotangent ``vbar`` of ``V`` goes through one transposed solve ``(I - g P_pi)^T u = vbar``
  and ``rbar = pi * u``; JAX differentiates the rest. The log-likelihood is formed from one
  extra backup of the converged ``V``, so ``vbar = g P^T n_sa - g P_pi^T n_s`` sums to zero
  and the transposed solve never meets the slow eigenvalue ``1 - g``: a plain fixed-point
  iteration converges at the chain's mixing rate ("vi"); GMRES otherwise ("newton").
- Every solve starts from the linearisation ``V(w) ~ V(w0) + J (w - w0)`` at an anchor
  ``w0`` (the posterior mode in a fit), ``J = dV/dw`` from ``F`` linear solves at set-up.
  A pure function has no memory of the previous call, so this is the best start available
  inside numpyro's compiled trajectory.
- float64 throughout (``jax_enable_x64``).
"""

from __future__ import annotations

import os
from typing import NamedTuple

import numpy as np

_MISSING = ("the JAX competitor needs jax and numpyro, which are not installed: "
            "pip install 'bayesirl[bench]' (CPU wheels are enough)")


class MissingExtra(ImportError):
    """The ``bench`` extra (jax, numpyro) is not installed."""


def available() -> bool:
    """True when jax and numpyro can be imported."""
    try:
        require()
    except MissingExtra:
        return False
    return True


def require():
    """Import jax (float64 on) and return it; :class:`MissingExtra` says what to install."""
    if "jax" not in __import__("sys").modules:
        # One XLA thread, like bayesirl's one BLAS thread per chain: CPU time then counts
        # arithmetic, not idle threads spinning on a shared machine.
        flags = os.environ.get("XLA_FLAGS", "")
        if "multi_thread_eigen" not in flags:
            os.environ["XLA_FLAGS"] = (flags + " --xla_cpu_multi_thread_eigen=false "
                                       "intra_op_parallelism_threads=1").strip()
    try:
        import jax
        import numpyro  # noqa: F401
    except ImportError as exc:
        raise MissingExtra(_MISSING) from exc
    jax.config.update("jax_enable_x64", True)
    return jax


class Arrays(NamedTuple):
    """Plain arrays of one problem: successors, features, demonstrated counts."""

    idx: np.ndarray  # int32 (k, S*A): successor states, 0 where padded
    prob: np.ndarray  # float64 (k, S*A): probabilities, 0 where padded
    features: np.ndarray  # float64 (S*A, F)
    counts: np.ndarray  # float64 (S, A): demonstrated visits of each (s, a)
    n_states: int
    n_actions: int
    discount: float


def successor_arrays(dynamics) -> tuple[np.ndarray, np.ndarray]:
    """Padded ``(k, S*A)`` successor indices and probabilities from the CSR ``Dynamics``."""
    counts = np.diff(dynamics.indptr)
    k = int(counts.max(initial=1))
    rows = counts.size
    slot = np.arange(dynamics.indices.size) - np.repeat(dynamics.indptr[:-1], counts)
    row = np.repeat(np.arange(rows), counts)
    idx = np.zeros((k, rows), dtype=np.int32)
    prob = np.zeros((k, rows))
    idx[slot, row] = dynamics.indices
    prob[slot, row] = dynamics.data
    return idx, prob


def arrays_for(mdp, demos) -> Arrays:
    """The competitor's view of ``mdp`` and ``demos`` (discounted models only)."""
    if mdp.horizon is not None:
        raise ValueError("the JAX competitor covers discounted models only")
    idx, prob = successor_arrays(mdp.dynamics)
    s, a = mdp.n_states, mdp.n_actions
    st = demos.steps
    counts = np.bincount(st.states * a + st.actions, minlength=s * a).astype(float)
    feats = np.ascontiguousarray(mdp.features_sa.reshape(s * a, mdp.n_features), dtype=float)
    return Arrays(idx, prob, feats, counts.reshape(s, a), s, a, float(mdp.discount))


# Relative residual of each GMRES Newton step (an inexact Newton forcing term: a step gains
# at least these four decades, so 2-3 steps reach the stopping rule from a linearised start).
FORCING = 1e-4
RESTART = 30  # GMRES restart length; maxiter below counts restarts
MAX_RESTARTS = 20


def _zero_cotangent(jax, tree):
    def zero(x):
        if jax.numpy.issubdtype(x.dtype, jax.numpy.floating):
            return jax.numpy.zeros_like(x)
        return np.zeros(x.shape, dtype=jax.dtypes.float0)
    return jax.tree_util.tree_map(zero, tree)


def _operators(jax, arrays: Arrays):
    """``expect``, the transposed ``push`` and the soft ``backup`` on the padded arrays."""
    from jax.scipy.special import logsumexp

    s, a, g = arrays.n_states, arrays.n_actions, arrays.discount
    k = arrays.idx.shape[0]

    def expect(p, v):  # E[v(s') | s, a] as (S, A): k gathers of length S*A
        out = p["prob"][0] * v[p["idx"][0]]
        for j in range(1, k):
            out = out + p["prob"][j] * v[p["idx"][j]]
        return out.reshape(s, a)

    def edge_weights(p, pi):  # pi(a|s) P(s'|s, a) per stored edge, once per call
        return pi.reshape(-1)[p["e_row"]] * p["e_prob"]

    def push(p, wts, u):  # P_pi^T u over edges sorted by target: one segment sum
        return jax.ops.segment_sum(wts * u[p["e_src"]], p["e_dst"], num_segments=s,
                                   indices_are_sorted=True)

    def backup(p, r, v):
        q = r + g * expect(p, v)
        return logsumexp(q, axis=1), q

    return expect, edge_weights, push, backup


def _solvers(jax, arrays: Arrays, method: str, tol: float, rtol: float, max_iter: int):
    """``solve(p, r, v0) -> (v, iterations)`` and ``adjoint(p, q, vbar) -> u``."""
    jnp, lax = jax.numpy, jax.lax
    from jax.scipy.sparse.linalg import gmres

    g = arrays.discount
    expect, edge_weights, push, backup = _operators(jax, arrays)
    k, a = arrays.idx.shape[0], arrays.n_actions
    span_tol = tol * (1.0 - g) / g
    floor = 2.0 * (k + a + 9) * np.finfo(float).eps  # bayesirl's rounding floor of a backup

    def converged(v, tv):
        d = tv - v
        span = d.max() - d.min()
        scale = jnp.maximum(jnp.abs(v).max(), jnp.abs(tv).max())
        return (span < span_tol) | (span <= floor * scale)

    def step_vi(p, r, v, tv, q):
        v = tv - tv.mean()
        return (v, *backup(p, r, v))

    def step_newton(p, r, v, tv, q):
        pi = jax.nn.softmax(q, axis=1)
        op = lambda x: x - g * jnp.sum(pi * expect(p, x), axis=1)  # noqa: E731
        dv, _ = gmres(op, tv - v, tol=FORCING, restart=RESTART, maxiter=MAX_RESTARTS,
                      solve_method="batched")
        v = v + dv
        v = v - v.mean()
        return (v, *backup(p, r, v))

    step = step_vi if method == "vi" else step_newton

    def solve(p, r, v0):
        def cond(c):
            return (~converged(c[0], c[1])) & (c[3] < max_iter)

        def body(c):
            return (*step(p, r, c[0], c[1], c[2]), c[3] + 1)

        v, _, _, it = lax.while_loop(cond, body, (v0, *backup(p, r, v0), 0))
        return v, it

    def adjoint(p, q, vbar):
        wts = edge_weights(p, jax.nn.softmax(q, axis=1))
        if method == "newton":
            u, _ = gmres(lambda x: x - g * push(p, wts, x), vbar, tol=rtol, restart=RESTART,
                         maxiter=MAX_RESTARTS, solve_method="batched")
            return u

        def cond(c):  # fixed point u = vbar + g P_pi^T u; sum(vbar) = 0, see module notes
            return (c[2] > rtol * jnp.abs(c[0]).max()) & (c[3] < max_iter)

        def body(c):
            u = vbar + g * push(p, wts, c[0])
            return u, c[0], jnp.abs(u - c[0]).max(), c[3] + 1

        return lax.while_loop(cond, body, (vbar, vbar, jnp.inf, 0))[0]

    return solve, adjoint, expect, edge_weights, push, backup


class JaxLikelihood:
    """The soft-Q Boltzmann log-likelihood in JAX, with an implicit-function gradient.

    Parameters
    ----------
    mdp, demos : TabularMDP, Demonstrations
        A discounted model and its demonstrations.
    rationality : float
        Fixed inverse temperature ``beta``.
    method : {"vi", "newton"}
        Fixed-point solver (module notes say when each wins).
    tol : float
        Span tolerance of the value solve (bayesirl's ``tol``).
    gradient_rtol : float
        Relative tolerance of the transposed (adjoint) solve.
    max_iter : int
        Cap on iterations of each compiled loop.
    """

    def __init__(self, mdp, demos, rationality: float = 1.0, method: str = "vi",
                 tol: float = 1e-10, gradient_rtol: float = 1e-8, max_iter: int = 100_000):
        if method not in ("vi", "newton"):
            raise ValueError(f"method: expected 'vi' or 'newton'; got {method!r}")
        jax = require()
        self.jax, self.method, self.beta = jax, method, float(rationality)
        self.arrays = arrays_for(mdp, demos)
        ar = self.arrays
        solve, adjoint, expect, _, _, _ = _solvers(jax, ar, method, tol, gradient_rtol,
                                                   max_iter)
        self._solve, self._expect = solve, expect
        self.params = self._params()
        self._anchor_fn = None
        self._loglik = self._build(solve, adjoint, expect)
        self.loglik = jax.jit(self._loglik)
        self.value_and_grad_fn = jax.jit(jax.value_and_grad(self._loglik, argnums=1))
        self.iterations = jax.jit(lambda p, w: solve(p, self._reward(p, w), self._start(p, w))[1])

    def _params(self) -> dict:
        jnp = self.jax.numpy
        ar = self.arrays
        rows = np.broadcast_to(np.arange(ar.idx.shape[1]), ar.idx.shape).ravel()
        keep = ar.prob.ravel() > 0  # the transposed operator skips padding
        dst, prob, rows = ar.idx.ravel()[keep], ar.prob.ravel()[keep], rows[keep]
        order = np.argsort(dst, kind="stable")
        f = ar.features.shape[1]
        return {"idx": jnp.asarray(ar.idx), "prob": jnp.asarray(ar.prob),
                "features": jnp.asarray(ar.features), "counts": jnp.asarray(ar.counts),
                "e_row": jnp.asarray(rows[order].astype(np.int32)),
                "e_src": jnp.asarray((rows[order] // ar.n_actions).astype(np.int32)),
                "e_dst": jnp.asarray(dst[order]), "e_prob": jnp.asarray(prob[order]),
                "v_anchor": jnp.zeros(ar.n_states), "jac": jnp.zeros((ar.n_states, f)),
                "z_anchor": jnp.zeros(f)}

    def _reward(self, p, w):
        ar = self.arrays
        return self.beta * (p["features"] @ w).reshape(ar.n_states, ar.n_actions)

    def _start(self, p, w):
        """Linearised value vector at ``beta * w`` from the anchor (zeros without one)."""
        return p["v_anchor"] + p["jac"] @ (self.beta * w - p["z_anchor"])

    def _build(self, solve, adjoint, expect):
        jax, jnp, g = self.jax, self.jax.numpy, self.arrays.discount
        from jax.scipy.special import logsumexp

        @jax.custom_vjp
        def fixed_point(r, v0, p):
            return solve(p, r, v0)[0]

        def fwd(r, v0, p):
            v = solve(p, r, v0)[0]
            return v, (r, v, p)

        def bwd(res, vbar):
            r, v, p = res
            q = r + g * expect(p, v)
            u = adjoint(p, q, vbar)
            rbar = jax.nn.softmax(q, axis=1) * u[:, None]
            return rbar, jnp.zeros_like(v), _zero_cotangent(jax, p)

        fixed_point.defvjp(fwd, bwd)

        def loglik(p, w):
            r = self._reward(p, w)
            v = fixed_point(r, jax.lax.stop_gradient(self._start(p, w)), p)
            q = r + g * expect(p, v)  # one extra backup: see the module notes
            return jnp.sum(p["counts"] * (q - logsumexp(q, axis=1, keepdims=True)))

        return loglik

    def value_and_grad(self, weights) -> tuple[float, np.ndarray]:
        """``(log-likelihood, gradient)`` as numpy values (waits for the result)."""
        val, grad = self.value_and_grad_fn(self.params, self.jax.numpy.asarray(weights))
        return float(val), np.asarray(grad)

    def anchor(self, weights) -> None:
        """Start every later solve from the linearisation at ``weights`` (e.g. the mode)."""
        if self._anchor_fn is None:
            self._anchor_fn = self.jax.jit(self._linearise)
        w = self.jax.numpy.asarray(weights, dtype=float)
        v, jac = self._anchor_fn(self.params, w)
        self.params = {**self.params, "v_anchor": v, "jac": jac, "z_anchor": self.beta * w}

    def _linearise(self, p, w):
        """``V`` at ``w`` and ``J = dV/d(beta w)``: ``(I - g P_pi) J = phi_pi``, F solves."""
        jax, jnp, g = self.jax, self.jax.numpy, self.arrays.discount
        from jax.scipy.sparse.linalg import gmres

        ar = self.arrays
        v, _ = self._solve(p, self._reward(p, w), self._start(p, w))
        pi = jax.nn.softmax(self._reward(p, w) + g * self._expect(p, v), axis=1)
        phi = p["features"].reshape(ar.n_states, ar.n_actions, -1)
        phi_pi = jnp.einsum("sa,saf->fs", pi, phi)
        op = lambda x: x - g * jnp.sum(pi * self._expect(p, x), axis=1)  # noqa: E731
        cols = jax.vmap(lambda b: gmres(op, b, tol=1e-10, restart=RESTART, maxiter=50)[0])
        return v, cols(phi_pi).T
