r"""Log normaliser of Wright's density for many mutation rates and a few selection columns.

Rows that share Ne, nu and h, take their selection coefficient from a short list (the
s_het grid of ``qhat batch``) and each have their own mutation rate need
log Z(a, b) = :func:`infer.core.drift.stationary.log_normaliser` at every (a, column),
a = 4Ne·mu. Z does not depend on the data, and log Z is an analytic function of a, so
it is tabulated once per column and interpolated:

* **Variable.** v = ln a + 2√a. For small a, Z ≈ 1/a + O(1), smooth in ln a; for large
  a the curvature d² log Z/d(ln a)² = a·E_φ[ln x] + a²·Var_φ(ln x) grows like a
  (Var_φ(ln x) falls like 1/a), while d² log Z/dv² stays O(1) at both ends (derived:
  d log Z/d ln a = a·E_φ[ln x], and dv/d ln a = 1 + √a).
* **Rule.** Piecewise Chebyshev interpolation on the unit panels [j, j+1) of v, 24
  points of the first kind per panel. The panels are fixed (not fitted to the rows), so
  a row's value depends only on its own a and column.
* **Check.** The last two Chebyshev coefficients of each (panel, column) bound the
  interpolation error; where either exceeds :data:`TOLERANCE` (in log Z, absolute) the
  rows of that panel and column are computed by the quadrature itself. Measured over
  4Ne·mu in [4e-6, 4e3], 2Ne·s in [0, 2e4], h = 1/2, the interpolated log Z is within
  4e-11 of the direct quadrature (tests/core/test_normaliser_table.py).

The table costs (panels spanned) × 24 × columns quadratures, so it is used only when the
rows outnumber its nodes; otherwise every row is computed directly. Panels once computed
are kept for later calls with the same (Ne, h, nu, columns).
"""

from __future__ import annotations

import threading

import numpy as np

from infer.core.drift.stationary import log_normaliser

__all__ = ["TOLERANCE", "POINTS", "tabulated_log_normaliser"]

#: Chebyshev points per unit panel of v = ln a + 2√a
POINTS = 24
#: largest trailing Chebyshev coefficient (absolute, in log Z) accepted without falling back
TOLERANCE = 1e-10
_T = np.cos(np.pi * (np.arange(POINTS) + 0.5) / POINTS)
_J = np.arange(POINTS)
# coefficients c = _TO_COEFFICIENTS @ values at _T (discrete orthogonality, first kind)
_TO_COEFFICIENTS = (2.0 / POINTS) * np.cos(np.outer(_J, np.arccos(_T)))
_TO_COEFFICIENTS[0] *= 0.5


def _v(a):
    """The variable of the table, v = ln a + 2√a."""
    return np.log(a) + 2.0 * np.sqrt(a)


def _a(v):
    """Inverse of :func:`_v`: Newton on t = ln a, g(t) = t + 2e^(t/2) - v (convex, increasing)."""
    t = np.where(v < 0, v, 2.0 * np.log1p(0.5 * np.maximum(v, 0.0)))  # below the root
    for _ in range(100):
        half = np.exp(0.5 * t)
        step = (t + 2.0 * half - v) / (1.0 + half)
        t = t - step
        if np.all(np.abs(step) <= 1e-15 * np.maximum(1.0, np.abs(t))):
            break
    return np.exp(t)


#: Chebyshev coefficients already computed, by (Ne, h, nu, columns, panel): a pure
#: function of its key, kept across calls (a batch run asks for the same panels chunk
#: after chunk); cleared when it holds _CACHE_LIMIT panels
_CACHE: dict = {}
_CACHE_LIMIT = 4096
_CACHE_LOCK = threading.Lock()  # threads of one process (a dask worker) share it


def _coefficients(Ne, h, nu, s, panels, direct):
    """Chebyshev coefficients (panels, POINTS, columns) of log Z on the unit panels of v."""
    key = (Ne, h, nu, s.tobytes())
    with _CACHE_LOCK:
        known = {p: _CACHE.get((key, p)) for p in panels}
    missing = np.array([p for p, table in known.items() if table is None])
    if missing.size:
        nodes = (missing[:, None] + 0.5) + 0.5 * _T[None, :]  # (missing, POINTS)
        values = direct(_a(nodes.ravel()) / (4.0 * Ne), s).reshape(missing.size, POINTS, s.size)
        tables = np.einsum("ji,pic->pjc", _TO_COEFFICIENTS, values)
        with _CACHE_LOCK:
            if len(_CACHE) + missing.size > _CACHE_LIMIT:
                _CACHE.clear()
            for p, table in zip(missing, tables, strict=True):
                _CACHE[(key, p)] = known[p] = table
    return np.stack([known[p] for p in panels])


def tabulated_log_normaliser(Ne, mu, s, h, nu):
    """``log_normaliser(Ne, mu[..., None], s, h, nu)`` by the interpolated table.

    Parameters
    ----------
    Ne, h, nu : float
        Shared by every row.
    mu : array_like
        Forward mutation rates, any shape.
    s : array_like, 1-D
        The selection columns.

    Returns
    -------
    numpy.ndarray
        Shape ``mu.shape + (s.size,)``: log Z at every (mu, column), within
        :data:`TOLERANCE` (absolute) of :func:`~infer.core.drift.stationary.log_normaliser`.
    """
    mu = np.asarray(mu, dtype=float)
    s = np.atleast_1d(np.asarray(s, dtype=float))
    Ne, h, nu = float(Ne), float(h), float(nu)
    flat = mu.ravel()

    def direct(rates, columns):
        return log_normaliser(Ne, rates[:, None], columns[None, :], h, nu)

    if not (flat.size and np.all(np.isfinite(flat) & (flat > 0)) and 0 < Ne < np.inf):
        return direct(flat, s).reshape(mu.shape + (s.size,))  # its own validation
    v = _v(4.0 * Ne * flat)
    panel = np.floor(v)
    panels, where = np.unique(panel, return_inverse=True)
    if flat.size <= panels.size * POINTS:
        return direct(flat, s).reshape(mu.shape + (s.size,))
    coefficients = _coefficients(Ne, h, nu, s, panels, direct)
    tail = np.maximum(np.abs(coefficients[:, -1]), np.abs(coefficients[:, -2]))  # (panels, s)
    out = np.empty((flat.size, s.size))
    order = np.argsort(where, kind="stable")
    bounds = np.searchsorted(where[order], np.arange(panels.size + 1))
    for p in range(panels.size):
        rows = order[bounds[p]:bounds[p + 1]]
        t = 2.0 * (v[rows] - panels[p]) - 1.0
        basis = np.cos(np.multiply.outer(np.arccos(np.clip(t, -1.0, 1.0)), _J))
        out[rows] = basis @ coefficients[p]
        bad = tail[p] > TOLERANCE
        if np.any(bad):
            out[np.ix_(rows, np.flatnonzero(bad))] = direct(flat[rows], s[bad])
    return out.reshape(mu.shape + (s.size,))
