r"""Wright's stationary density of a deleterious allele's frequency under drift.

Diffusion approximation of the life cycle (docs/model.md, 'Life cycle'; autosomal, F = 0):
mean change :math:`M(x) = \mu(1-x) - \nu x - s x(1-x)(h + (1-2h)x)`, variance
:math:`V(x) = x(1-x)/(2N_e)`. Wright's formula :math:`\phi \propto V^{-1}\exp(2\int M/V)`
(Wright 1931, Genetics 16:97; 1937, PNAS 23:307) gives, with a = 4Ne·mu, b = 4Ne·nu,
c = 2Ne·s and S(x) = 2hx + (1-2h)x² (S(0) = 0, S(1) = 1),

    φ(x) ∝ x^(a-1) (1-x)^(b-1) exp(-c·S(x)),       0 < x < 1,  needs b > 0.

Every quantity here is a ratio of integrals of one family,

    Z(A, B) = ∫_0^1 x^(A-1) (1-x)^(B-1) exp(-c·S(x)) dx,

because x^k (1-x)^(n-k) only shifts the exponents: the normaliser is Z(a, b), the mean
Z(a+1, b)/Z(a, b), E[x²] = Z(a+2, b)/Z(a, b) and the binomial sample probability
C(n,k)·Z(a+k, b+n-k)/Z(a, b). ``_log_z`` (in :mod:`infer.core.drift.quadrature`) evaluates
log Z for arrays of rows at once:

1. **End pieces, analytic.** On [0, x0] write the integrand x^(A-1)·exp(ℓ(x)) with
   ℓ(x) = (B-1)·log(1-x) - c·S(x) = Σ_j ℓ_j x^j, ℓ_1 = -(B-1) - 2hc,
   ℓ_2 = -(B-1)/2 - (1-2h)c, ℓ_j = -(B-1)/j (j ≥ 3). With x = x0·u and
   exp(ℓ(x0·u)) = Σ_j m_j u^j, ∫_0^x0 = x0^A Σ_j m_j/(A+j) term by term; (1-x)·ℓ'(x) is
   quadratic, so the m_j obey a three-term recurrence (``_end_series_sum``).
   x0 = 0.1/(|B-1| + |c|(2|h|+|1-2h|) + 1)
   keeps |ℓ| ≤ ~0.1 on the piece, so 12 terms leave < 1e-14 relative error; the
   singularity x^(A-1), A down to 1e-6 or less, is integrated exactly (the 1/A term).
   Substituting x = 1 - z maps [1-z0, 1] onto the same form with (A, B) swapped,
   c → -c, h → 1-h and a factor exp(-c), because S(1-z) = 1 - [2(1-h)z + (2h-1)z²].
2. **Interior, Gauss–Legendre panels in y = logit x.** There dx = x(1-x)dy and the
   integrand is exp(L(y)), L = A·log x + B·log(1-x) - c·S(x): smooth, and its features
   (the selection and sample-size cliffs near x ~ 1/(c+B)) have width O(1) in y. A probe
   grid of 32 points brackets the peak y*, safeguarded Newton on L' = A(1-x) - Bx -
   c·S'(x)·x(1-x) places it to 1 % of its scale w = min(1/2, (max(-L'',0) + L'²)^(-1/2)),
   and the range is cut where the probes fall e^-40 below the peak. Panels of a fixed
   template y* + w·(0, ±1.5, ±3, ±6, ±10) resolve the peak (w down to 1/√n ~ 1e-3 for
   n = 1e6); uniform panels no wider than 2 cover the rest. 10 nodes per panel: for an
   O(1) cliff the Bernstein ellipse of a width-2 panel (ρ ≈ 2) bounds the error by ~2^-20
   of the panel's share, and in practice (tests) it is below 1e-10.
3. Pieces are combined with logaddexp; nothing is exponentiated before the row's
   maximum is subtracted, so A, B up to ~1e6 and c up to 5e4 are handled.

Accuracy (checked against mpmath in tests/core/test_drift.py and benchmarks/drift.py):
relative error below 1e-9 in the sweeps, against the 1e-6 required, over 4Ne·mu ∈ [1e-6, 10],
4Ne·s ∈ [0, 1e5], h ∈ [0, 1], 4Ne·nu ∈ [1e-6, 10], n ≤ 1e6. Sample exponents are formed
as b + (n - k), never (b + n) - k, which would lose b when b ≪ 1 ≪ n.

The mean is Z(a+1)/Z(a) and sd² = mean·(Z(a+2)/Z(a+1) - mean); quantiles invert the CDF by
the end series at the ends and by Newton in y on the clipped panels inside.

Shared normalisers: Z(a, b) does not depend on the data. ``log_binomial_probability``
takes it as ``log_z=`` when the caller knows it (``qhat batch`` interpolates it from a
table along mu, :mod:`infer.core.drift.normaliser_table`); otherwise the normaliser of
the last few sets of rows is remembered, so the frequency-dependent observations of one
log-posterior call (the same rows) compute it once.

Rows that differ only in mu (``qhat batch``'s rates of one locus) share the sample's
layout: :func:`log_binomial_probability_along_mu` evaluates the integrand once and
re-weights it by x^δ for each rate where that is safe (criteria in
``infer.core.drift.quadrature._log_z_tilted``).

Large Ne: rows whose density is one narrow interior peak and whose exponents reach
:data:`infer.core.drift.concentrated.LIMIT` (the rule and its tests are in that module)
are integrated around the mode instead, where these integrals of size-Ne exponents lose
their digits; every public function below splits its rows between the two rules.
"""

from __future__ import annotations

import threading

import numpy as np
from scipy import special

from infer.core.drift.quadrature import (
    _MAX_PEAK_SCALE,
    _NEGLIGIBLE,
    _PROBES,
    _end_series_sum,
    _end_width,
    _Layout,
    _coefficients,
    _log_f_rows,
    _log_sum,
    _log_z,
    _log_z_tilted,
    _nodes,
    _panels,
    _value_coefficients,
)
from infer.core.drift import concentrated as _peak_rule
from infer.core.stats import log_choose
from infer.errors import InputError

__all__ = [
    "log_normaliser",
    "stationary_density",
    "stationary_summary",
    "probability_absent",
    "log_binomial_probability",
    "log_binomial_probability_along_mu",
    "log_expectation",
    "stationary_quantile",
    "sample_stationary",
]


# ---------------------------------------------------------------- parameters
def _exponents(Ne, mu, s, h, nu, *extra):
    """Validate and broadcast; return shape and flat (a, b, c, h, *extra) rows."""
    values = [np.asarray(v, dtype=float) for v in (Ne, mu, s, h, nu, *extra)]
    shape = values[0].shape
    if any(v.shape != shape for v in values):
        shape = np.broadcast_shapes(*(v.shape for v in values))
    Ne, mu, s, h, nu, *extra = (
        v.ravel() if v.shape == shape else np.broadcast_to(v, shape).ravel() for v in values
    )
    if Ne.size:  # min/max tests first; NaN fails every comparison and takes the slow path
        low, high = np.minimum.reduce, np.maximum.reduce
        rates = np.concatenate((Ne, mu, nu))
        if (
            low(rates) > 0 and high(rates) < np.inf and low(s) > -np.inf and high(s) <= 1
            and low(h) > -np.inf and high(h) < np.inf
        ):
            return shape, 4 * Ne * mu, 4 * Ne * nu, 2 * Ne * s, h, extra
    for name, value in (("Ne", Ne), ("mu", mu), ("s", s), ("h", h), ("nu", nu)):
        bad = ~np.isfinite(value)
        if name in ("Ne", "mu", "nu"):
            bad |= value <= 0
        if name == "s":
            bad |= value > 1
        if bad.any():
            need = "a positive number" if name in ("Ne", "mu", "nu") else "a finite number"
            if name == "s":
                need = "finite and at most 1"
            raise InputError(
                f"{float(value[bad][0]):g} is not allowed: drift needs {need}", field=name
            )
    return shape, 4 * Ne * mu, 4 * Ne * nu, 2 * Ne * s, h, extra


# ---------------------------------------------------------------- public API
def log_normaliser(Ne, mu, s, h, nu):
    """Log of the normalising integral of Wright's stationary density.

    Parameters
    ----------
    Ne, mu, s, h, nu : array_like
        Effective size, forward and back mutation rates (both > 0), selection and
        dominance coefficients; broadcast against each other.

    Returns
    -------
    numpy.ndarray
        log ∫_0^1 x^(4Ne·mu-1)(1-x)^(4Ne·nu-1) exp(-2Ne·s(2hx+(1-2h)x²)) dx.
    """
    shape, a, b, c, h, _ = _exponents(Ne, mu, s, h, nu)
    mask, peak = _peak_rule.concentrated(a, b, c, h)
    if peak is None:
        return _log_z(a, b, c, h).reshape(shape)
    out = np.empty(a.size)
    out[mask] = _peak_rule.log_z(peak)
    rest = ~mask
    if rest.any():
        out[rest] = _log_z(a[rest], b[rest], c[rest], h[rest])
    return out.reshape(shape)


def stationary_density(x, Ne, mu, s, h, nu):
    """Normalised stationary density φ(x); all arguments broadcast."""
    shape, a, b, c, h, (x,) = _exponents(Ne, mu, s, h, nu, x)
    inside = (x > 0) & (x < 1)
    mask, peak = _peak_rule.concentrated(a, b, c, h)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        log_phi = (a - 1) * np.log(x) + (b - 1) * np.log1p(-x) - c * x * (2 * h + (1 - 2 * h) * x)
        rest = ~mask
        if rest.any():
            log_phi[rest] -= _log_z(a[rest], b[rest], c[rest], h[rest])
        if peak is not None:
            log_phi[mask] = _peak_rule.log_density(peak, x[mask])
        return np.where(inside, np.exp(np.where(inside, log_phi, -np.inf)), 0.0).reshape(shape)


def stationary_summary(Ne, mu, s, h, nu, interval=0.95):
    """Mean, median, central interval and sd of Wright's stationary density.

    Parameters
    ----------
    Ne, mu, s, h, nu : array_like
        As in :func:`log_normaliser`.
    interval : float
        Probability of the central interval, in (0, 1).

    Returns
    -------
    dict
        ``mean``, ``median``, ``lower``, ``upper``, ``sd`` arrays of the broadcast shape.
        Quantiles below the smallest double (common when 4Ne·mu ≪ 1) are 0.0.
    """
    if not 0 < interval < 1:
        raise InputError(f"{interval!r} is not in (0, 1)", field="interval")
    shape, a, b, c, h, _ = _exponents(Ne, mu, s, h, nu)
    probs = {"lower": (1 - interval) / 2, "median": 0.5, "upper": (1 + interval) / 2}
    mask, peak = _peak_rule.concentrated(a, b, c, h)
    if peak is None:
        out = _summary(a, b, c, h, probs)
    else:
        out = {key: np.empty(a.size) for key in ("mean", "sd", *probs)}
        rest = ~mask
        if rest.any():
            for key, value in _summary(a[rest], b[rest], c[rest], h[rest], probs).items():
                out[key][rest] = value
        out["mean"][mask], out["sd"][mask] = _peak_rule.summary(peak)
        for key, p in probs.items():
            out[key][mask] = _peak_rule.quantile(peak, p)
    return {key: value.reshape(shape) for key, value in out.items()}


def _summary(a, b, c, h, probs):
    """Mean, sd and quantiles ``probs`` by the general quadrature (flat rows)."""
    base = _Layout(a, b, c, h)
    log_z = base.log_total()
    mean = np.exp(_log_z(a + 1, b, c, h) - log_z)
    ratio = np.exp(_log_z(a + 2, b, c, h) - _log_z(a + 1, b, c, h))  # E[x²]/E[x]
    sd = np.sqrt(np.maximum(mean * (ratio - mean), 0.0))
    out = {"mean": mean, "sd": sd}
    for key, p in probs.items():
        out[key] = _quantile(base, log_z, p)
    return out


def _quantile(layout, log_z, p):
    """X with P(X ≤ x) = p: series inversion at the ends, Newton in y inside."""
    L = layout
    log_p, log_q = np.log(p), np.log1p(-p)
    result = np.empty_like(log_z)
    in_left = log_p + log_z <= L.log_left
    in_right = log_q + log_z <= L.log_right
    # left end: A·log x + log T(x) = log p + log Z, T slowly varying (contraction ≤ 0.1)
    target = log_p + log_z
    log_x = np.log(L.x0)
    for _ in range(30):
        x = np.exp(log_x)
        log_x = np.minimum(
            (target - np.log(_end_series_sum(L.A, L.B, L.c, L.h, x))) / L.A, np.log(L.x0)
        )
    result = np.where(in_left, np.exp(log_x), np.nan)
    target = log_q + log_z + L.c
    log_zq = np.log(L.z0)
    for _ in range(30):
        z = np.exp(log_zq)
        log_zq = np.minimum(
            (target - np.log(_end_series_sum(L.B, L.A, -L.c, 1 - L.h, z))) / L.B, np.log(L.z0)
        )
    result = np.where(in_right & ~in_left, -np.expm1(log_zq), result)
    middle = ~(in_left | in_right)
    if np.any(middle):
        result[middle] = _quantile_inside(layout, log_z, p, middle)
    return result


def stationary_quantile(p, Ne, mu, s, h, nu):
    """Quantile function of Wright's stationary density; ``p`` broadcasts with the rest.

    Quantiles below the smallest double are 0.0, as in :func:`stationary_summary`.
    """
    shape, a, b, c, h, (p,) = _exponents(Ne, mu, s, h, nu, p)
    if np.any((p <= 0) | (p >= 1)):
        raise InputError("probabilities must lie in (0, 1)", field="p")
    mask, peak = _peak_rule.concentrated(a, b, c, h)
    out = np.empty(a.size)
    rest = ~mask
    if rest.any():
        layout = _Layout(a[rest], b[rest], c[rest], h[rest])
        out[rest] = _quantile(layout, layout.log_total(), p[rest])
    if peak is not None:
        out[mask] = _peak_rule.quantile(peak, p[mask])
    return out.reshape(shape)


def sample_stationary(rng, Ne, mu, s, h, nu):
    """One draw of the allele frequency from Wright's density per parameter row.

    The inverse distribution function of a uniform draw from ``rng``.
    """
    shape = np.broadcast_shapes(*(np.shape(v) for v in (Ne, mu, s, h, nu)))
    u = rng.uniform(np.finfo(float).tiny, 1.0, size=shape)
    return stationary_quantile(u, Ne, mu, s, h, nu)


def _quantile_inside(layout, log_z, p, rows):
    """Safeguarded Newton in y on the CDF for the selected (interior) rows."""
    sub = _Layout.__new__(_Layout)
    sub.coefficients = tuple(v[rows] for v in layout.coefficients)
    sub.panels = tuple(p[rows] for p in layout.panels)
    log_left, log_z = layout.log_left[rows], log_z[rows]
    lo, hi = layout.y_lo[rows].copy(), layout.y_hi[rows].copy()
    y = 0.5 * (lo + hi)
    p = np.broadcast_to(p, rows.shape)[rows] if np.ndim(p) else p
    for _ in range(80):
        cdf = np.exp(np.logaddexp(log_left, sub.log_interior(upper=y)) - log_z)
        gap = cdf - p
        lo, hi = np.where(gap < 0, y, lo), np.where(gap < 0, hi, y)
        slope = np.exp(_log_f_rows(y, sub.coefficients) - log_z)
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            step = y - gap / slope
        ok = (step > lo) & (step < hi)
        y_new = np.where(ok, step, 0.5 * (lo + hi))
        done = np.all(np.abs(y_new - y) <= 1e-12 * (1 + np.abs(y)))
        y = y_new
        if done:
            break
    return special.expit(y)


def _check_counts(k, n):
    k, n = np.asarray(k, dtype=float), np.asarray(n, dtype=float)
    if k.ndim == n.ndim == 0:  # the common case, one observation: plain float tests
        kk, nn = float(k), float(n)
        if 0 <= kk <= nn < np.inf and kk.is_integer() and nn.is_integer():
            return k, n
    for name, value in (("sample_alleles", n), ("observed", k)):
        bad = ~np.isfinite(value) | (value < 0) | (value != np.round(value))
        if np.any(bad):
            raise InputError(
                f"{np.broadcast_to(value, bad.shape)[bad].flat[0]!r} is not a whole number >= 0",
                field=name,
            )
    over = np.broadcast_to(k > n, np.broadcast(k, n).shape)
    if np.any(over):
        kk, nn = np.broadcast_arrays(k, n)
        raise InputError(f"{kk[over][0]:g} is more than sampled {nn[over][0]:g}", field="observed")
    return k, n


def log_binomial_probability(k, n, Ne, mu, s, h, nu, *, log_z=None):
    """Log probability of k copies in a sample of n genes, integrated over φ.

    log ∫ C(n,k) x^k (1-x)^(n-k) φ(x) dx = log C(n,k) + log Z(a+k, b+n-k) - log Z(a, b).

    Parameters
    ----------
    k, n : array_like
        Observed copies and sampled genes (whole numbers, 0 ≤ k ≤ n).
    Ne, mu, s, h, nu : array_like
        As in :func:`log_normaliser`; everything broadcasts.
    log_z : array_like, optional
        :func:`log_normaliser` of these parameters when it is already known (for example
        tabulated by :mod:`infer.core.drift.normaliser_table`, or shared by several
        observations of the same rows); broadcasts with the rest. Computed when None.

    Returns
    -------
    numpy.ndarray
        The log probability, broadcast shape.
    """
    k, n = _check_counts(k, n)
    extra = () if log_z is None else (log_z,)
    if k.ndim == n.ndim == 0:
        shape, a, b, c, h, extra = _exponents(Ne, mu, s, h, nu, *extra)
    else:
        shape, a, b, c, h, (k, n, *extra) = _exponents(Ne, mu, s, h, nu, k, n, *extra)
    given = extra[0] if extra else None
    mask, peak = _peak_rule.concentrated(a, b, c, h)
    if peak is None:
        return (log_choose(n, k) + _log_ratio(k, n, a, b, c, h, given)).reshape(shape)
    k, n = np.broadcast_to(k, a.shape), np.broadcast_to(n, a.shape)
    out = np.empty(a.size)
    rest = ~mask
    out[mask], resolved = _peak_rule.log_binomial(peak, k[mask], n[mask])
    rest[np.flatnonzero(mask)[~resolved]] = True  # the sample pulls off the peak's window
    if rest.any():
        out[rest] = _log_ratio(k[rest], n[rest], a[rest], b[rest], c[rest], h[rest],
                               None if given is None else given[rest])
    return (log_choose(n, k) + out).reshape(shape)


def log_binomial_probability_along_mu(k, n, Ne, mu, s, h, nu, *, log_z):
    """:func:`log_binomial_probability` at several mutation rates of each row at once.

    Rows that differ only in mu differ in the sample's integral Z(a+k, b+n-k) only by the
    factor x^δ, δ = 4Ne·Δmu; where that factor is nearly constant on the row's scale the
    quadrature's layout (peak, range, panels) and its integrand are computed once for
    the middle rate and re-weighted for the others (:func:`infer.core.drift.quadrature.
    _log_z_tilted`, which gives the others their own quadrature); the numbers agree
    with :func:`log_binomial_probability` to its accuracy.

    Parameters
    ----------
    k, n, Ne, s, h, nu : array_like
        As in :func:`log_binomial_probability`; broadcast with ``mu`` and constant along
        its last axis.
    mu : array_like
        Forward mutation rates; the last axis holds each row's rates.
    log_z : array_like
        :func:`log_normaliser` at each (row, rate), broadcast with ``mu``.

    Returns
    -------
    numpy.ndarray
        The log probability, the broadcast shape (last axis: the rates).
    """
    k, n = _check_counts(k, n)
    mu = np.asarray(mu, dtype=float)
    shape = np.broadcast_shapes(k.shape, n.shape, np.shape(Ne), mu.shape, np.shape(s),
                                np.shape(h), np.shape(nu), np.shape(log_z))
    if len(shape) == 0 or shape[-1] < 2:
        return log_binomial_probability(k, n, Ne, mu, s, h, nu, log_z=log_z)
    _, a, b, c, hh, (kk, nn, given) = _exponents(Ne, mu, s, h, nu, k, n, log_z)
    mask, peak = _peak_rule.concentrated(a, b, c, hh)
    if peak is not None:  # large Ne somewhere: the rows' own rule
        return log_binomial_probability(k, n, Ne, mu, s, h, nu, log_z=log_z)
    m = shape[-1]
    a, b, c, hh, kk, nn, given = (v.reshape(-1, m) for v in (a, b, c, hh, kk, nn, given))
    middle = m // 2
    A = a + kk
    sample = _log_z_tilted(A[:, middle], b[:, middle] + (nn[:, middle] - kk[:, middle]),
                           c[:, middle], hh[:, middle], A - A[:, middle:middle + 1])
    return (log_choose(nn, kk) + sample - given).reshape(shape)


def _log_ratio(k, n, a, b, c, h, log_z=None):
    """Log Z(a+k, b+n-k) - log Z(a, b) by the general quadrature (flat rows).

    ``log_z``, when given, is log Z(a, b): only the sample's integral is computed.
    """
    if log_z is None:
        log_z = _recalled_log_z(a, b, c, h)
    if log_z is not None:
        return _log_z(a + k, b + (n - k), c, h) - log_z
    log_z = _log_z(
        np.concatenate((a + k, a)), np.concatenate((b + (n - k), b)), np.concatenate((c, c)),
        np.concatenate((h, h)),
    )
    _remember_log_z(a, b, c, h, log_z[a.size :])
    return log_z[: a.size] - log_z[a.size :]


#: log Z(a, b) of the last few sets of rows: every frequency-dependent observation of one
#: log-posterior call integrates over the same density, so its normaliser is computed once
#: (a pure function of the rows; kept for sets of up to _RECALL_ROWS rows)
_RECALLED: dict = {}
_RECALL_SETS = 4
_RECALL_ROWS = 65536
_RECALL_LOCK = threading.Lock()  # threads of one process (a dask worker) share it


def _recall_key(a, b, c, h):
    if a.size > _RECALL_ROWS:
        return None
    return a.tobytes(), b.tobytes(), c.tobytes(), h.tobytes()


def _recalled_log_z(a, b, c, h):
    """The remembered log Z(a, b) of exactly these rows, or None."""
    key = _recall_key(a, b, c, h)
    if key is None:
        return None
    with _RECALL_LOCK:
        return _RECALLED.get(key)


def _remember_log_z(a, b, c, h, log_z):
    key = _recall_key(a, b, c, h)
    if key is not None:
        kept = np.array(log_z, dtype=float)
        kept.flags.writeable = False
        with _RECALL_LOCK:
            if len(_RECALLED) >= _RECALL_SETS:
                _RECALLED.pop(next(iter(_RECALLED)))
            _RECALLED[key] = kept


def _shared_log_z(a, b, c, h):
    """Log Z(a, b) of flat rows, remembered for the next observation of the same rows."""
    log_z = _recalled_log_z(a, b, c, h)
    if log_z is None:
        log_z = _log_z(a, b, c, h)
        _remember_log_z(a, b, c, h, log_z)
    return log_z


def probability_absent(sample_alleles, Ne, mu, s, h, nu):
    """Probability that a sample of ``sample_alleles`` genes carries no copy: Z(a, b+n)/Z(a, b)."""
    return np.exp(log_binomial_probability(0, sample_alleles, Ne, mu, s, h, nu))


# ---------------------------------------------------------------- arbitrary P(data | x)
#: nodes of the end pieces' rule: Chebyshev points (first kind) of [0, 1]
_END_NODES = 0.5 * (1 + np.cos(np.pi * (np.arange(6) + 0.5) / 6))[::-1]
#: monomial coefficients of their Lagrange polynomials, l_i(u) = Σ_j _END_LAGRANGE[j, i] u^j
_END_LAGRANGE = np.linalg.inv(np.vander(_END_NODES, increasing=True))


def _end_weights(A):
    """Weights (rows, 6) of ∫_0^1 u^(A-1) f(u) du ≈ Σ_i w_i f(u_i) at :data:`_END_NODES`.

    Product integration: f is replaced by its interpolating polynomial at the nodes, whose
    moments against u^(A-1) are exact, ∫ u^(A-1) u^j du = 1/(A+j); so the singular weight
    costs nothing and the rule is exact for f of degree 5 (on the end pieces log f varies
    by < ~0.15, where degree 5 leaves a relative error ~1e-11).
    """
    moments = 1.0 / (A[:, None] + np.arange(_END_NODES.size))
    return moments @ _END_LAGRANGE


_PROBE_FRACTIONS = np.linspace(0, 1, 2 * _PROBES)
_THREE = np.array([-1.0, 0.0, 1.0])


def _parabola_peak(log_f, probes, values, y_lo, y_hi):
    """Peak, scale and range that matters of an arbitrary smooth log integrand.

    ``values`` is ``log_f`` at the probe grid ``probes`` (rows, 2·_PROBES); parabola fits
    through the best point and its neighbours at a shrinking spacing follow, each moving
    the peak by up to one probe spacing (the peak lies that close to the best probe; a
    fit at the peak's own scale may thus reach it from many scales away), until every
    row's move is below 10 % of its scale (the peak template's panels, 1.5 scales wide,
    resolve a peak that far off their centre to rounding); the range is cut where the
    probes fall _NEGLIGIBLE below the top.
    """
    rows = np.arange(len(y_lo))
    best = np.argmax(values, axis=1)
    y = probes[rows, best]
    step = probes[:, 1] - probes[:, 0]
    spacing = step.copy()
    width = np.full_like(y, _MAX_PEAK_SCALE)
    top = values[rows, best]
    # the first fit is through the best probe and its neighbours, already evaluated
    last_probe = probes.shape[1] - 1
    around = np.minimum(np.maximum(best[:, None] + np.array([-1, 0, 1]), 0), last_probe)
    f = np.maximum(values[rows[:, None], around], -1e300)
    for fit in range(5):
        if fit:
            pts = np.minimum(np.maximum(y[:, None] + step[:, None] * _THREE, y_lo[:, None]),
                             y_hi[:, None])
            f = np.maximum(log_f(pts), -1e300)
        f0, f1, f2 = f[:, 0], f[:, 1], f[:, 2]
        if fit:  # elementwise: a reduction along an axis of three is dearer
            top = np.maximum(top, np.maximum(np.maximum(f0, f1), f2))
        second = f0 - 2 * f1 + f2
        curv = second / step**2
        good = np.isfinite(curv) & (curv < 0)
        shift = step * (f0 - f2) / (2 * second)
        sigma = 1 / np.sqrt(-curv)
        y = np.where(good & (np.abs(shift) <= spacing),
                     np.minimum(np.maximum(y + shift, y_lo), y_hi), y)
        width = np.where(good, np.minimum(np.maximum(sigma, 1e-5), _MAX_PEAK_SCALE),
                         _MAX_PEAK_SCALE)
        settled = np.all((np.abs(shift) <= 0.1 * width) | ~good) and np.all(step <= width)
        step = np.maximum(np.minimum(width, step), 1e-6)
        if settled:  # every row's peak moved by < 10 % of its scale at its own scale
            break
    keep = values >= (top - _NEGLIGIBLE)[:, None]
    first = np.maximum(np.argmax(keep, axis=1) - 1, 0)
    last = np.minimum(last_probe + 1 - np.argmax(keep[:, ::-1], axis=1), last_probe)
    t_lo = np.minimum(probes[rows, first], y - spacing)
    t_hi = np.maximum(probes[rows, last], y + spacing)
    return y, width, np.maximum(t_lo, y_lo), np.minimum(t_hi, y_hi)


def log_expectation(log_p_given_x, Ne, mu, s, h, nu):
    """Log ∫ P(data | x) φ(x) dx for any smooth sampling probability P(data | x).

    Parameters
    ----------
    log_p_given_x : callable
        Takes frequencies ``x`` of shape (rows, m) and returns log P(data | x) of the
        same shape (rows in the order of the flattened broadcast parameters).
    Ne, mu, s, h, nu : array_like
        As in :func:`log_normaliser`.

    Returns
    -------
    numpy.ndarray
        The log expectation, broadcast shape of the parameters.

    Notes
    -----
    Same pieces as ``_log_z`` with P folded into the integrand: the end pieces use a
    6-point product rule for the weight x^(a-1) (resp. (1-x)^(b-1)) on an end width
    shrunk by factors of 100 until log P varies by < 0.05 over three points across it; the
    interior peak of log φ + log P is located by parabola fits on a probe grid, and the
    interior range is cut where the probes fall e^-40 below it. P must be smooth on the
    scale of its own peak (binomial or multinomial-type likelihoods are). Near x = 1 the
    callable sees x rounded to double precision (1 - x resolved to ~1e-16).
    """
    shape, a, b, c, h, _ = _exponents(Ne, mu, s, h, nu)
    mask, peak = _peak_rule.concentrated(a, b, c, h)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore", under="ignore"):
        if peak is None:
            return _log_expectation(log_p_given_x, a, b, c, h).reshape(shape)
        out = np.empty(a.size)
        out[mask], resolved = _peak_rule.log_expectation(peak, _on_rows(log_p_given_x, mask))
        rest = ~mask
        rest[np.flatnonzero(mask)[~resolved]] = True
        if rest.any():
            out[rest] = _log_expectation(
                _on_rows(log_p_given_x, rest), a[rest], b[rest], c[rest], h[rest]
            )
        return out.reshape(shape)


def _on_rows(log_p_given_x, rows):
    """The callable restricted to the rows ``rows`` (it is always called with every row)."""

    def log_p(x):
        full = np.full((rows.size, x.shape[1]), 0.5)
        full[rows] = x
        out = np.asarray(log_p_given_x(full), dtype=float)
        if out.shape != full.shape:
            raise InputError(
                f"returned shape {out.shape}, expected {full.shape}", field="log_p_given_x"
            )
        return out[rows]

    return log_p


#: end widths tried, as fractions of the analytic end width: 9 levels 100x apart, and
#: three points across each (where log P must vary by < 0.05)
_SHRINK = (10.0 ** (-2 * np.arange(9)))[:, None] * np.array([1.0, 0.1, 0.01])


def _log_expectation(log_p_given_x, a, b, c, h):
    """Log ∫ P φ dx by the general rule (flat rows; see :func:`log_expectation`).

    The callable is asked four times for all rows at once, then five times by the peak
    search: the end-width candidates of both ends; the product-rule nodes of both ends
    with the interior probes; the parabola fits; the interior nodes.
    """
    rows = a.size

    def log_p(x):
        out = np.asarray(log_p_given_x(x), dtype=float)
        if out.shape != x.shape:
            raise InputError(
                f"returned shape {out.shape}, expected {x.shape}", field="log_p_given_x"
            )
        return out

    # end widths: left x = x0·f, right x = 1 - z0·f (f in _SHRINK), in one call
    base = np.stack((_end_width(b, c, h), _end_width(a, -c, 1 - h)))      # (2, rows)
    levels, across = _SHRINK.shape
    cand = base[:, :, None] * _SHRINK.ravel()                              # (2, rows, 27)
    points = cand.copy()
    points[1] = 1 - points[1]
    vals = log_p(np.concatenate((points[0], points[1]), axis=1))
    vals = vals.reshape(rows, 2, levels, across)
    # max and min over the three points by elementwise steps (a reduction along an axis
    # this short costs more than the rest of the search)
    high = np.maximum(np.maximum(vals[..., 0], vals[..., 1]), vals[..., 2])
    low = np.minimum(np.minimum(vals[..., 0], vals[..., 1]), vals[..., 2])
    flat = ((high - low) <= 0.05) | np.isneginf(high)
    flat = flat.transpose(1, 0, 2)                                        # (2, rows, 9)
    first = np.where(flat.any(axis=2), np.argmax(flat, axis=2), levels - 1)
    widths = np.take_along_axis(cand, across * first[:, :, None], axis=2)[:, :, 0]
    x0, z0 = widths
    # the ends' product-rule nodes (weights x^(a-1), (1-x)^(b-1)) and the interior probes
    A2, B2 = np.concatenate((a, b)), np.concatenate((b, a))
    c2, h2 = np.concatenate((c, -c)), np.concatenate((h, 1 - h))
    wts = _end_weights(A2)
    z = widths.reshape(-1, 1) * _END_NODES                                # (2 rows, 6)
    g = (B2[:, None] - 1) * np.log1p(-z) - c2[:, None] * z * (
        2 * h2[:, None] + (1 - 2 * h2[:, None]) * z
    )
    g += (A2 * np.log(widths.ravel()))[:, None]
    g[rows:] -= c[:, None]
    y_lo, y_hi = np.log(x0) - np.log1p(-x0), np.log1p(-z0) - np.log(z0)
    probes = y_lo[:, None] + (y_hi - y_lo)[:, None] * _PROBE_FRACTIONS
    cols = _value_coefficients(_coefficients(a[:, None], b[:, None], c[:, None], h[:, None]))
    ends = z.shape[1]
    both = log_p(np.concatenate((z[:rows], 1 - z[rows:], special.expit(probes)), axis=1))
    g += np.concatenate((both[:, :ends], both[:, ends:2 * ends]))
    values = _log_f_rows(probes, cols) + both[:, 2 * ends:]

    def log_f(y):
        return _log_f_rows(y, cols) + log_p(special.expit(y))

    y_peak, width, t_lo, t_hi = _parabola_peak(log_f, probes, values, y_lo, y_hi)
    nodes, weights = _nodes(_panels(t_lo, t_hi, y_peak, width))
    # the two ends and the interior summed in one pass (one call: all rows at once)
    terms = np.concatenate((g[:rows], g[rows:], log_f(nodes)), axis=1)
    total = _log_sum(terms, np.concatenate((wts[:rows], wts[rows:], weights), axis=1))
    return total - _shared_log_z(a, b, c, h)
