"""Central differences with a Richardson error bound, shared by the gradient tests.

Outside reference: the central-difference quotient
``D(h) = (f(x + h e) - f(x - h e)) / (2h) = f'(x) + c h^2 + O(h^4)`` (Taylor's theorem) and
Richardson's h/2h comparison of the ``h^2`` term (Richardson 1911, "The approximate arithmetical
solution by finite differences of physical problems"). With noise ``delta`` in ``f``:

    D(h)  = f' + c h^2 + e1,    |e1| <= delta / h
    D(2h) = f' + 4 c h^2 + e2,  |e2| <= delta / (2h)
    =>  |f' - D(h)| <= |D(2h) - D(h)| / 3 + 1.5 delta / h   (+ O(h^4)),

and twice the first term is allowed for the neglected O(h^4) part (it enters D(2h) 16 times
larger). The same derivation as in ``tests/engine/test_gradients.py``.
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np

EPS = np.finfo(float).eps


def central(f: Callable[[np.ndarray], float], x: np.ndarray, h: float) -> np.ndarray:
    """Central-difference gradient of the scalar function ``f`` at ``x``."""
    out = np.empty(x.size)
    for i in range(x.size):
        e = np.zeros(x.size)
        e[i] = h
        out[i] = (f(x + e) - f(x - e)) / (2.0 * h)
    return out


def fd_with_bound(f: Callable[[np.ndarray], float], x: np.ndarray, h: float,
                  delta: float) -> tuple[np.ndarray, np.ndarray]:
    """``(D(h), bound)`` with ``|f'(x) - D(h)| <= bound`` per coordinate (module doc)."""
    d1, d2 = central(f, x, h), central(f, x, 2.0 * h)
    return d1, 2.0 * np.abs(d2 - d1) / 3.0 + 1.5 * delta / h


def assert_gradient(f: Callable[[np.ndarray], float], grad: np.ndarray, x: np.ndarray,
                    h: float, delta: float) -> np.ndarray:
    """Assert ``grad`` is ``f'(x)`` within the Richardson bound; return the bound."""
    fd, bound = fd_with_bound(f, x, h, delta)
    err = np.abs(np.asarray(grad) - fd)
    assert np.all(err <= bound), (
        f"gradient {np.asarray(grad).tolist()} vs central differences {fd.tolist()}: "
        f"error {err.tolist()} exceeds bound {bound.tolist()}"
    )
    return bound
