r"""The Kolmogorov forward (diffusion) equation of the allele frequency, by finite volumes.

The diffusion approximation of the life cycle (autosomal, F = 0; Kimura 1955, PNAS 41:144;
the same M and V as :mod:`infer.core.drift.stationary`):

.. math::

    \partial_t \phi = -\partial_x J, \qquad
    J = M\phi - \tfrac12 \partial_x (V\phi), \qquad
    M = \mu(1-x) - \nu x - s x(1-x)(h + (1-2h)x), \quad V = x(1-x)/(2N_e),

t in generations. Wright's stationary density π (zero flux) satisfies Mπ = ½(Vπ)', so with
u = φ/π the flux is J = -½ Vπ ∂_x u: the symmetric form behind the Chang & Cooper (1970,
J. Comput. Phys. 6:1) and Scharfetter–Gummel schemes. Discretised on cells with masses
m_i and stationary masses Π_i (u_i = m_i/Π_i), the flux across the edge e between cells
i - 1 and i is

    J = G (m_{i-1}/Π_{i-1} - m_i/Π_i),      1/G = ∫_{c_{i-1}}^{c_i} dx / (½ V π),

c the cell points. The scheme conserves mass (no flux through x = 0 or 1, where Vπ
vanishes), keeps masses positive (implicit Euler with an M-matrix), and has Π as its exact
stationary solution, so a long constant epoch ends at Wright's distribution. G is formed
with log(1/(½Vπ)) linear in logit x between the two cell points (Scharfetter & Gummel 1969,
IEEE Trans. Electron Devices 16:64: exponential fitting), so that where selection
dominates a cell the flux tends to the upwind |M|·m/width rather than overflowing.

Cells: the end cells [0, e_1] and [e_K, 1] (where the allele is absent or fixed in all
but name; e_1 = 1/(1 + 100·2Ne)) and :data:`CELLS` cells uniform in logit x between them,
whose width in x is proportional to x(1-x). Π of an inside cell is exp(a log x + b log(1-x)
- cS(x)) at its point times its width in logit x (a = 4Ne·mu, b = 4Ne·nu, c = 2Ne·s, S as
in :mod:`infer.core.drift.stationary`), of an end cell the x^(a-1) (or (1-x)^(b-1)) factor
integrated exactly. Time steps of 1/:data:`SUBSTEPS` generation, implicit Euler; the n
rows' tridiagonal systems are one block-diagonal system, factorised once per epoch by
LAPACK (dgttrf) and solved each step (dgttrs).

Limit: where drift is weak against selection across a cell (cell Péclet number 4Ne|M|Δ/
(x(1-x)) ≫ 1, Δ the width in logit x) the exponential fitting is upwind, whose numerical
spread is about |M|Δ per generation in logit x: a fast transient under strong selection in
a large population comes out too wide and its mean 5-10 % too slow (checked against
forward simulation in tests/core/history/); the deterministic recursion is then the
better description.
"""

from __future__ import annotations

import numpy as np
from scipy import special
from scipy.linalg import lapack

__all__ = ["CELLS", "SUBSTEPS", "Grid", "diffusion_generations", "stationary_masses"]

#: inside cells (uniform in logit x); two end cells are added
CELLS = 400
#: implicit Euler steps per generation
SUBSTEPS = 4


class Grid:
    """The cells of each row: edges, points and log widths in logit x.

    Parameters
    ----------
    genes : ndarray, shape (n,)
        2Ne of each row (sets the end cells).
    cells : int
        Inside cells.
    """

    def __init__(self, genes, cells: int = CELLS):
        genes = np.asarray(genes, dtype=float)
        self.z_max = np.log(1.0 + 100.0 * genes)
        self.cells = cells
        self.width = 2.0 * self.z_max / cells
        unit = np.linspace(-1.0, 1.0, cells + 1)
        self.z_edges = unit[None, :] * self.z_max[:, None]  # (n, cells + 1)
        z_mid = 0.5 * (self.z_edges[:, 1:] + self.z_edges[:, :-1])
        e1 = special.expit(-self.z_max)[:, None]
        inside = special.expit(z_mid)
        self.points = np.concatenate([0.5 * e1, inside, 1.0 - 0.5 * e1], axis=1)
        #: cell edges in x, shape (n, cells + 3): 0, the inside edges, 1
        self.edges = np.concatenate([np.zeros_like(e1), special.expit(self.z_edges),
                                     np.ones_like(e1)], axis=1)
        end = special.logit(0.5 * e1)
        self.z_points = np.concatenate([end, z_mid, -end], axis=1)

    @property
    def size(self) -> int:
        """Cells per row (inside and end)."""
        return self.cells + 2

    def cell_of(self, x):
        """Index of the cell holding each frequency ``x`` (n, P)."""
        x = np.asarray(x, dtype=float)
        with np.errstate(divide="ignore"):
            z = special.logit(np.clip(x, 0.0, 1.0))
        z = np.clip(z, -self.z_max[:, None] - 1.0, self.z_max[:, None] + 1.0)
        index = np.floor((z + self.z_max[:, None]) / self.width[:, None]).astype(np.int64) + 1
        index = np.where(z < -self.z_max[:, None], 0, index)
        index = np.where(z >= self.z_max[:, None], self.size - 1, index)
        return np.clip(index, 0, self.size - 1)

    def assign(self, points, masses):
        """Masses of a distribution over points gathered into this grid's cells.

        A point between two cell points is split between them in proportion to its
        distance from each (mass and mean kept); points beyond the outermost cell points
        go to the end cells.
        """
        points = np.asarray(points, dtype=float)
        masses = np.asarray(masses, dtype=float)
        n = points.shape[0]
        index = self.cell_of(points)
        here = np.take_along_axis(self.points, index, axis=1)
        # the cell point on the other side of x, and the share of the mass it takes
        other = np.clip(np.where(points >= here, index + 1, index - 1), 0, self.size - 1)
        there = np.take_along_axis(self.points, other, axis=1)
        gap = there - here
        with np.errstate(divide="ignore", invalid="ignore"):
            share = np.where(gap != 0, (points - here) / gap, 0.0)
        share = np.clip(share, 0.0, 1.0)
        offset = (np.arange(n) * self.size)[:, None]
        total = np.bincount((index + offset).ravel(), weights=(masses * (1 - share)).ravel(),
                            minlength=n * self.size)
        total += np.bincount((other + offset).ravel(), weights=(masses * share).ravel(),
                             minlength=n * self.size)
        return total.reshape(n, self.size)


def _log_integrand(log_x, log_1mx, x, a, b, c, h):
    """Log of x^a (1-x)^b exp(-c S(x)) (the density per unit logit x)."""
    return a * log_x + b * log_1mx - c * x * (2.0 * h + (1.0 - 2.0 * h) * x)


def _rates(params):
    Ne = np.asarray(params["Ne"], dtype=float)[:, None]
    return (4 * Ne * np.asarray(params["mu"], dtype=float)[:, None],
            4 * Ne * np.asarray(params["nu"], dtype=float)[:, None],
            2 * Ne * np.asarray(params["s"], dtype=float)[:, None],
            np.asarray(params["h"], dtype=float)[:, None])


def stationary_masses(grid: Grid, params, *, log: bool = False):
    """Wright's stationary distribution gathered into the grid's cells (normalised).

    Inside cells: the density per unit logit x at the cell's point times the cell's width
    (the point values the flux of :func:`_operator` is written with, so that these masses
    are the scheme's exact stationary solution); end cells: the singular factor
    x^(a-1) (or (1-x)^(b-1)) integrated exactly.

    Returns
    -------
    ndarray, shape (n, cells + 2)
        Π_i (or log Π_i, unnormalised, with ``log=True``).
    """
    a, b, c, h = _rates(params)
    z = grid.z_points[:, 1:-1]
    inside = _log_integrand(special.log_expit(z), special.log_expit(-z), special.expit(z),
                            a, b, c, h) + np.log(grid.width)[:, None]
    # end cells: ∫_0^e x^(a-1) g(x) dx ≈ g(e a/(a+1)) e^a / a, g the smooth remaining factor
    e = special.expit(-grid.z_max)[:, None]
    x0 = e * a / (a + 1)
    left = (a * np.log(e) - np.log(a) + (b - 1) * np.log1p(-x0)
            - c * x0 * (2 * h + (1 - 2 * h) * x0))
    z1 = e * b / (b + 1)
    right = (b * np.log(e) - np.log(b) + (a - 1) * np.log1p(-z1)
             - c * (1 - z1) * (2 * h + (1 - 2 * h) * (1 - z1)))
    log_pi = np.concatenate([left, inside, right], axis=1)
    if log:
        return log_pi
    return np.exp(log_pi - special.logsumexp(log_pi, axis=1, keepdims=True))


def _log_bernoulli_mean(d):
    """Log of (e^d - 1)/d, the mean of e^(d t) over t in [0, 1] (1 at d = 0)."""
    d = np.asarray(d, dtype=float)
    small = np.abs(d) < 1e-8
    safe = np.where(small, 1.0, d)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        positive = safe + np.log(-np.expm1(-np.abs(safe))) - np.log(np.abs(safe))
        negative = np.log(-np.expm1(-np.abs(safe))) - np.log(np.abs(safe))
    return np.where(small, 0.5 * d, np.where(d > 0, positive, negative))


def _operator(grid: Grid, params):
    """Coefficients (alpha, beta) of the flux J = alpha m_{i-1} - beta m_i between cells.

    J = (u_{i-1} - u_i) / I with I = ∫ dx / (½ V π) between the two cell points, taken
    with log(1/(½ V π)) linear in logit x across the interval (the Scharfetter–Gummel
    exponential fitting: exact for a constant ratio of drift to diffusion, and the flux
    tends to the upwind |M| m / width when selection dominates the cell).
    """
    a, b, c, h = _rates(params)
    log_pi = stationary_masses(grid, params, log=True)
    z = grid.z_points
    x = special.expit(z)
    Ne = np.asarray(params["Ne"], dtype=float)[:, None]
    # per unit logit x: dx / (½ V π) = 4Ne / (x^(a-1) (1-x)^(b-1) e^(-cS))
    ell = np.log(4 * Ne) - (_log_integrand(special.log_expit(z), special.log_expit(-z), x,
                                           a, b, c, h)
                            - special.log_expit(z) - special.log_expit(-z))
    d = np.diff(ell, axis=1)
    log_i = np.log(np.diff(z, axis=1)) + ell[:, :-1] + _log_bernoulli_mean(d)
    with np.errstate(over="ignore"):
        alpha = np.exp(np.minimum(-log_i - log_pi[:, :-1], 700.0))
        beta = np.exp(np.minimum(-log_i - log_pi[:, 1:], 700.0))
    return alpha, beta


def diffusion_generations(grid: Grid, masses, params, count, substeps: int = SUBSTEPS):
    """Carry cell masses ``count`` generations under the forward equation.

    Parameters
    ----------
    grid : Grid
    masses : ndarray, shape (n, cells + 2)
    params : dict of str to ndarray
        ``(n,)`` arrays of Ne, mu, s, h, nu (F = 0; mu, nu > 0).
    count : int
    substeps : int
        Implicit Euler steps per generation.

    Returns
    -------
    ndarray
        The masses ``count`` generations on; NaN rows where the parameters are not valid.
    """
    masses = np.asarray(masses, dtype=float)
    n, size = masses.shape
    alpha, beta = _operator(grid, params)
    good = np.all(np.isfinite(alpha) & np.isfinite(beta), axis=1)
    alpha = np.where(good[:, None], alpha, 0.0)
    beta = np.where(good[:, None], beta, 0.0)
    dt = 1.0 / substeps
    zero = np.zeros((n, 1))
    # dm_i/dt = alpha_i m_{i-1} - (beta_i + alpha_{i+1}) m_i + beta_{i+1} m_{i+1}
    outflow = np.concatenate([zero, beta], axis=1) + np.concatenate([alpha, zero], axis=1)
    d = (1.0 + dt * outflow).ravel()
    lower = np.concatenate([-dt * alpha, zero], axis=1).ravel()[:-1]  # (i, i-1)
    upper = np.concatenate([-dt * beta, zero], axis=1).ravel()[:-1]   # (i-1, i)
    dl, dd, du, du2, ipiv, info = lapack.dgttrf(lower, d, upper)
    state = np.where(good[:, None], masses, 0.0).reshape(-1, 1)
    for _ in range(count * substeps):
        state, info = lapack.dgttrs(dl, dd, du, du2, ipiv, state)
    out = np.clip(state.reshape(n, size), 0.0, None)
    return np.where(good[:, None], out, np.nan)
