"""Exact deterministic mutation-selection equilibria (DESIGN.md section 2).

Life cycle, census at birth: zygotes -> viability/fertility selection -> gametes with
forward mutation A->a (rate ``mu``) and back mutation a->A (rate ``nu``) -> union with
inbreeding coefficient ``F`` -> zygotes. Fitnesses AA 1, Aa 1-hs, aa 1-s.

Every function takes numpy arrays (or scalars) that broadcast against each other and
returns arrays of the broadcast shape; nothing loops over rows in Python. Parameter
values outside the model's domain (mu outside [0, 1), s outside [0, 1], h outside
[0, 1], F or nu outside [0, 1), alpha <= 0, NaN) give NaN with ``exists = False``;
user-facing validation lives in the commands.

Stability of the equilibria returned: write the recursion as q' = q + g(q). The
functions solved below, G, satisfy g(q) = -G(q) / w (w > 0), with G(0) = -mu < 0, so the
frequency rises while G < 0. The smallest root of G in (0, 1) at which G changes sign
from - to + is therefore stable from both sides (the selection-mutation map is
increasing in q, so no oscillation); that is the root returned. For the X-linked
system the map (x, y) -> (x', y') is increasing in both arguments (cooperative), so
the same reduced sign argument applies.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from infer.errors import InputError

__all__ = [
    "AutosomalBalance",
    "XLinkedBalance",
    "autosomal_balance",
    "q_hat",
    "x_linked_balance",
    "sex_specific_rates",
    "genotype_frequencies",
    "daughter_genotype_frequencies",
    "affected_fraction",
    "load",
    "AFFECTED_MODES",
]

#: modes of ``affected_fraction``
AFFECTED_MODES = ("dominant", "recessive", "x-linked-male")

_EPS = np.finfo(float).eps
_SQRT_EPS = np.sqrt(_EPS)
_MAX_ITERATIONS = 200


@dataclass(frozen=True)
class AutosomalBalance:
    """Autosomal equilibrium among zygotes.

    Attributes
    ----------
    q_hat : numpy.ndarray
        Stable interior equilibrium frequency of the deleterious allele a; NaN where none.
    exists : numpy.ndarray
        Boolean: a stable interior root exists.
    mean_fitness : numpy.ndarray
        Mean fitness among zygotes at ``q_hat`` (AA = 1): 1 - s(h*Aa + aa).
    load : numpy.ndarray
        Mutation load, 1 - mean_fitness.
    """

    q_hat: np.ndarray
    exists: np.ndarray
    mean_fitness: np.ndarray
    load: np.ndarray


@dataclass(frozen=True)
class XLinkedBalance:
    """X-linked equilibrium among newborns.

    Attributes
    ----------
    q_male : numpy.ndarray
        Frequency of a among newborn sons (= frequency among eggs, x).
    q_female : numpy.ndarray
        Frequency of a among newborn daughters, (x + y) / 2.
    q_hat : numpy.ndarray
        Frequency over all X chromosomes, (2 q_female + q_male) / 3.
    exists : numpy.ndarray
        Boolean: a stable interior root exists.
    load_male, load_female : numpy.ndarray
        1 - mean fitness of newborn sons (s x) and daughters (s(h Aa + aa)).
    new_mutation_share : numpy.ndarray
        Share of affected (hemizygous a) sons whose a is a new mutation in the
        mother's germ line: mu_female (1 - q_f*) / x, q_f* the frequency in mothers
        after selection. Haldane (1935): 1/3 when s = 1 and alpha = 1.
    """

    q_male: np.ndarray
    q_female: np.ndarray
    q_hat: np.ndarray
    exists: np.ndarray
    load_male: np.ndarray
    load_female: np.ndarray
    new_mutation_share: np.ndarray


def _as_float(*values):
    arrays = [np.asarray(v, dtype=float) for v in values]
    return arrays, np.broadcast_shapes(*(a.shape for a in arrays))


def _valid(mu, s, h, F, nu):
    """Boolean mask of parameter vectors inside the model's domain (NaN is outside).

    Checked first with one min/max pass per array (cheap); the element-wise mask is
    only built when some value falls outside.
    """
    closed = ((s, 1.0), (h, 1.0))
    half_open = ((mu, 1.0), (F, 1.0), (nu, 1.0))
    try:
        inside = all(v.min() >= 0 and v.max() <= top for v, top in closed) and all(
            v.min() >= 0 and v.max() < top for v, top in half_open
        )
    except ValueError:  # empty arrays
        inside = False
    if inside:
        return np.True_
    return (
        (mu >= 0) & (mu < 1) & (s >= 0) & (s <= 1) & (h >= 0) & (h <= 1)
        & (F >= 0) & (F < 1) & (nu >= 0) & (nu < 1)
    )


def genotype_frequencies(q, F=0.0):
    """Zygote genotype frequencies with inbreeding coefficient F.

    Parameters
    ----------
    q : array_like
        Frequency of the deleterious allele a.
    F : array_like, optional
        Inbreeding coefficient (default 0).

    Returns
    -------
    tuple of numpy.ndarray
        ``(AA, Aa, aa)`` = (p²(1-F) + pF, 2pq(1-F), q²(1-F) + qF), p = 1 - q.
    """
    q = np.asarray(q, dtype=float)
    F = np.asarray(F, dtype=float)
    p = 1.0 - q
    one_f = 1.0 - F
    return p * (p * one_f + F), 2.0 * p * q * one_f, q * (q * one_f + F)


def affected_fraction(mode, q, F=0.0, penetrance=1.0):
    """Expected fraction of newborns affected.

    Parameters
    ----------
    mode : {"dominant", "recessive", "x-linked-male"}
        ``dominant``: penetrance * (Aa + aa); ``recessive``: penetrance * aa;
        ``x-linked-male``: penetrance * q among male births (pass q = q_male).
    q : array_like
        Allele frequency among zygotes (sons' frequency for ``x-linked-male``).
    F : array_like, optional
        Inbreeding coefficient (autosomal modes only).
    penetrance : array_like, optional
        Probability that an affected genotype shows the condition (default 1).

    Returns
    -------
    numpy.ndarray
    """
    penetrance = np.asarray(penetrance, dtype=float)
    if mode == "x-linked-male":
        return penetrance * np.asarray(q, dtype=float)
    if mode not in AFFECTED_MODES:
        raise InputError(
            f"{mode!r} is not one of {', '.join(AFFECTED_MODES)}", field="mode"
        )
    _, heterozygote, homozygote = genotype_frequencies(q, F)
    if mode == "dominant":
        return penetrance * (heterozygote + homozygote)
    return penetrance * homozygote


def load(q, s, h, F=0.0):
    """Mutation load among zygotes, 1 - w̄ = s(h Aa + aa), evaluated without cancellation.

    Parameters
    ----------
    q, s, h, F : array_like
        Allele frequency, selection and dominance coefficients, inbreeding coefficient.

    Returns
    -------
    numpy.ndarray
    """
    q, s, h, F = (np.asarray(v, dtype=float) for v in (q, s, h, F))
    one_f = 1.0 - F
    return s * q * (2.0 * h * (1.0 - q) * one_f + q * one_f + F)


def _closed_form_root(mu, s, h, F):
    """Stable root of (1-F)(1-2h)s q² + [(1-F)hs(1+mu) + Fs] q = mu (nu = 0).

    Derivation (DESIGN.md section 2). Zygotes AA = p(1 - q(1-F)), Aa = 2pq(1-F),
    aa = q(q(1-F) + F). After selection the a-carrying share is N / w̄ with

        N = Aa(1-hs)/2 + aa(1-s) = q - s q A,   A = h p(1-F) + q(1-F) + F,
        w̄ = 1 - s(h Aa + aa)    = 1 - s q B,   B = A + h p (1-F),

    and the gametes give q' = mu + (1-mu) N / w̄. At equilibrium (q - mu) w̄ = (1-mu) N.
    Expanding, A - qB = p[h(1-F)(1-2q) + q(1-F) + F] and B - A = hp(1-F), so

        (1-mu)N - (q-mu)w̄ = -p f(q),
        f(q) = (1-F)(1-2h)s q² + [(1-F)hs(1+mu) + Fs] q - mu.

    The factor p = 1 - q is the fixed point q = 1; dividing it out leaves f(q) = 0.
    With a = (1-F)(1-2h)s and b = (1-F)hs(1+mu) + Fs >= 0 the smaller positive root is
    written q = 2mu / (b + sqrt(b² + 4 a mu)), which never subtracts nearly equal
    numbers (the textbook form (-b + sqrt(...))/(2a) loses all digits when a mu << b²
    and divides by zero at h = 1/2). f(0) = -mu < 0 and f rises through this root, so it
    is stable. For h > 1/2 (a < 0) f has a second root 2mu / (b - sqrt(...)) near 1, the
    unstable threshold below the absorbing q = 1; a negative discriminant means both
    have merged and vanished: mutation overwhelms selection. At the root,
    w̄ = (1-mu)(1 - (1-F)hs q) (substitute f = 0).
    """
    one_f = 1.0 - F
    a = one_f * (1.0 - 2.0 * h) * s
    b = one_f * h * s * (1.0 + mu) + F * s
    with np.errstate(invalid="ignore", divide="ignore"):
        disc = b * b + 4.0 * a * mu
        root = (2.0 * mu) / (b + np.sqrt(disc))
    # The smaller root lies in (0, 1) iff f(1) > 0, or both roots lie below 1 (h > 1/2
    # with the vertex -b/(2a) below 1); tested on f itself, not on the rounded root.
    f_one = s * (one_f * (1.0 - h + h * mu) + F) - mu
    exists = (disc > 0) & (root < 1.0) & ((f_one > 0) | ((a < 0) & (b < -2.0 * a)))
    # mu = 0: the loss boundary q = 0 is the equilibrium whenever selection acts.
    if not np.all(mu):
        exists |= (mu == 0) & (s > 0)
        root = np.where(mu == 0, 0.0, root)
    return root, exists


def _take(values, index):
    """``values`` restricted to ``index`` (``None`` = all elements, no copy)."""
    return values if index is None else [v[index] for v in values]


def _newton_in_bracket(evaluate, lo, hi, start, curvature):
    """Vectorised safeguarded Newton iteration for one root per element.

    ``evaluate(x, index)`` returns ``(G, dG/dx)`` for the elements ``index`` (``None`` for
    all); ``curvature(x, index)`` an estimate of |d²G/dx²|. The bracket ``[lo, hi]`` must
    hold G(lo) <= 0 <= G(hi) with G monotone inside it; a Newton step that leaves the
    bracket is replaced by bisection. A Newton step d leaves an error of about
    |G''| d² / (2|G'|); the iteration stops for an element once that is below one ulp,
    once the step is a few ulps, or once steps stop shrinking below sqrt(eps) x (the
    rounding floor of G at an ill-conditioned root: weak selection near q ~ 1).
    """
    x = np.where((start > lo) & (start < hi), start, 0.5 * (lo + hi))
    lo, hi = lo.copy(), hi.copy()
    previous = np.full(x.size, np.inf)
    active = None
    for _ in range(_MAX_ITERATIONS):
        if active is None:
            xa, la, ha, pa = x, lo, hi, previous
        elif active.size == 0:
            break
        else:
            xa, la, ha, pa = x[active], lo[active], hi[active], previous[active]
        value, slope = evaluate(xa, active)
        below = value < 0
        la = np.where(below, xa, la)
        ha = np.where(below, ha, xa)
        with np.errstate(invalid="ignore", divide="ignore"):
            candidate = xa - value / slope
            change = np.abs(candidate - xa)
            left_error = 0.5 * curvature(xa, active) * change * change / np.abs(slope)
        newton = (candidate >= la) & (candidate <= ha)  # False for NaN too
        candidate = np.where(newton, candidate, 0.5 * (la + ha))
        candidate = np.where(value == 0, xa, candidate)
        size = np.abs(candidate)
        converged = (
            (newton & (left_error <= 0.5 * _EPS * size))
            | (change <= 4.0 * _EPS * size)
            | (value == 0)
            | (ha - la <= 4.0 * _EPS * np.abs(ha))
            | ((change <= _SQRT_EPS * size) & (change > 0.25 * pa))
        )
        change = np.where(newton, change, np.inf)
        if active is None:
            x, lo, hi, previous = candidate, la, ha, change
            active = np.flatnonzero(~converged)
        else:
            x[active], lo[active], hi[active], previous[active] = candidate, la, ha, change
            active = active[~converged]
    return x


def _cubic_value(c0, c1, c2, c3, x):
    """c0 + c1 x + c2 x² + c3 x³ (Horner)."""
    return ((c3 * x + c2) * x + c1) * x + c0


def _cubic_sign_is_positive(coefficients, x, evaluate, index):
    """Whether G(x) > 0, from the coefficient form unless it is too close to call.

    Coefficients carry absolute errors of a few ulps of their size; only elements
    whose polynomial value lies within that margin are evaluated exactly.
    """
    c0, c1, c2, c3 = (c[index] for c in coefficients)
    value = _cubic_value(c0, c1, c2, c3, x)
    margin = 64.0 * _EPS * (np.abs(c0) + np.abs(c1) + np.abs(c2) + np.abs(c3))
    close = np.flatnonzero(np.abs(value) <= margin)
    if close.size:
        value[close] = evaluate(x[close], index[close])[0]
    return value > 0


def _autosomal_cubic_root(mu, s, h, F, nu):
    """Smallest stable root in (0, 1) of G(q) = p f(q) + nu N(q) (nu > 0), 1-D arrays.

    With back mutation q' = mu + (1-mu-nu) N/w̄, so G = (q-mu)w̄ - (1-mu-nu)N
    = p f(q) + nu N(q) with f of ``_closed_form_root`` and N = q(1 - k0 - k1 q),
    k0 = s(h(1-F) + F), k1 = s(1-F)(1-h): a cubic, G(0) = -mu, G(1) = nu(1-s).
    In coefficient form G = -a q³ + c2 q² + c1 q - mu; the coefficients only place
    the bracket (critical points), G itself is evaluated in the factored form.
    For h <= 1/2 (a >= 0) G has one root in (0, 1). For h > 1/2 (a < 0) G rises to its
    first critical point c_lo; if G(c_lo) >= 0 the stable root is in [0, c_lo], else
    in [c_hi, 1] (the allele is then near fixation, held off it by back mutation).
    """
    one_f = 1.0 - F
    a = one_f * (1.0 - 2.0 * h) * s
    b = one_f * h * s * (1.0 + mu) + F * s
    k0 = s * (h * one_f + F)
    k1 = s * one_f * (1.0 - h)

    def evaluate(q, index):
        aa, bb, mm, nn, kk0, kk1 = _take((a, b, mu, nu, k0, k1), index)
        p = 1.0 - q
        f = (aa * q + bb) * q - mm
        slope_f = 2.0 * aa * q + bb
        n = q * (1.0 - kk0 - kk1 * q)
        slope_n = 1.0 - kk0 - 2.0 * kk1 * q
        return p * f + nn * n, p * slope_f - f + nn * slope_n

    c2 = a - b - nu * k1
    c1 = b + mu + nu * (1.0 - k0)
    lo = np.zeros_like(mu)
    hi = np.ones_like(mu)
    negative = a < 0
    if np.any(negative):
        # G' = -3a q² + 2 c2 q + c1 with -3a > 0, c2 < 0, c1 > 0: critical points
        # (-c2 -+ sqrt(c2² + 3a c1)) / (-3a), the smaller one in cancellation-free form.
        with np.errstate(invalid="ignore", divide="ignore"):
            disc = c2 * c2 + 3.0 * a * c1
            root_disc = np.sqrt(disc)
            c_lo = c1 / (-c2 + root_disc)
            c_hi = (-c2 + root_disc) / (-3.0 * a)
        split = negative & (disc > 0) & (c_lo < 1.0)
        index = np.flatnonzero(split)
        if index.size:
            coefficients = (-mu, c1, c2, -a)
            first = _cubic_sign_is_positive(coefficients, c_lo[index], evaluate, index)
            hi[index[first]] = c_lo[index[first]]
            lo[index[~first]] = np.fmin(c_hi[index[~first]], 1.0)
    # Start from the root of the quadratic part of G (exact when q² terms dominate q³).
    with np.errstate(invalid="ignore", divide="ignore"):
        start = 2.0 * mu / (c1 + np.sqrt(c1 * c1 + 4.0 * c2 * mu))

    def curvature(q, index):
        aa, cc2 = _take((a, c2), index)
        return np.abs(2.0 * cc2 - 6.0 * aa * q)

    root = _newton_in_bracket(evaluate, lo, hi, start, curvature)
    exists = (root > 0) & (root < 1)
    exists |= (mu == 0)
    root = np.where(mu == 0, 0.0, root)
    return root, exists


def autosomal_balance(mu, s, h, F=0.0, nu=0.0) -> AutosomalBalance:
    """Exact autosomal mutation-selection equilibrium.

    Parameters
    ----------
    mu : array_like
        Forward mutation rate A -> a per gamete per generation, in [0, 1).
    s : array_like
        Selection coefficient against aa, in [0, 1].
    h : array_like
        Dominance coefficient, in [0, 1] (Aa fitness 1 - hs).
    F : array_like, optional
        Inbreeding coefficient, in [0, 1) (default 0).
    nu : array_like, optional
        Back mutation rate a -> A, in [0, 1) (default 0).

    Returns
    -------
    AutosomalBalance
        Arrays of the broadcast shape. With nu = 0 the closed form of
        ``_closed_form_root`` is used; with nu > 0 the cubic is solved by safeguarded
        Newton iteration to full double precision. Where no stable interior root
        exists (mutation overwhelms selection, or s = 0 with nu = 0), ``q_hat`` is NaN
        and ``exists`` False. With mu = 0 the equilibrium is the loss boundary q = 0.

    Examples
    --------
    >>> float(autosomal_balance(1e-5, 1.0, 0.0).q_hat)  # ≈ sqrt(mu/s)
    0.0031622...
    """
    (mu, s, h, F, nu), shape = _as_float(mu, s, h, F, nu)
    valid = _valid(mu, s, h, F, nu)
    if not np.any(nu):
        root, exists = _closed_form_root(mu, s, h, F)
        exists = np.broadcast_to(exists & valid, shape)
        q = np.broadcast_to(np.where(exists, root, np.nan), shape)
        # 1 - w̄ = mu + (1-mu)(1-F)hs q̂ at the nu = 0 equilibrium (no cancellation).
        genetic_load = mu + (1.0 - mu) * ((1.0 - F) * h * s) * q
        return AutosomalBalance(
            q_hat=q, exists=exists, mean_fitness=1.0 - genetic_load, load=genetic_load
        )
    else:
        mu, s, h, F, nu = (np.broadcast_to(v, shape).ravel() for v in (mu, s, h, F, nu))
        root = np.empty(mu.size)
        exists = np.empty(mu.size, dtype=bool)
        plain = nu == 0
        if np.any(plain):
            root[plain], exists[plain] = _closed_form_root(mu[plain], s[plain], h[plain], F[plain])
        mutant = ~plain & np.broadcast_to(valid, shape).ravel()
        if np.any(mutant):
            root[mutant], exists[mutant] = _autosomal_cubic_root(
                mu[mutant], s[mutant], h[mutant], F[mutant], nu[mutant]
            )
        rest = ~plain & ~mutant
        root[rest], exists[rest] = np.nan, False
        root, exists = root.reshape(shape), exists.reshape(shape)
        mu, s, h, F = (v.reshape(shape) for v in (mu, s, h, F))
    exists = exists & valid
    q = np.where(exists, root, np.nan)
    genetic_load = load(q, s, h, F)
    return AutosomalBalance(
        q_hat=q, exists=exists, mean_fitness=1.0 - genetic_load, load=genetic_load
    )


def q_hat(mu, s, h, F=0.0, nu=0.0) -> np.ndarray:
    """Exact autosomal equilibrium frequency; shorthand for ``autosomal_balance(...).q_hat``.

    Parameters
    ----------
    mu, s, h, F, nu : array_like
        As in `autosomal_balance`.

    Returns
    -------
    numpy.ndarray
        Stable interior equilibrium among zygotes, NaN where none.
    """
    return autosomal_balance(mu, s, h, F, nu).q_hat


def sex_specific_rates(mu, alpha=1.0):
    """Germ-line mutation rates from the sex-averaged rate per X chromosome.

    Parameters
    ----------
    mu : array_like
        Sex-averaged rate, mu = (2 mu_female + mu_male) / 3.
    alpha : array_like, optional
        Male-to-female rate ratio, mu_male = alpha * mu_female (default 1).

    Returns
    -------
    tuple of numpy.ndarray
        ``(mu_female, mu_male)`` = (3 mu / (2 + alpha), alpha * mu_female).
    """
    mu = np.asarray(mu, dtype=float)
    alpha = np.asarray(alpha, dtype=float)
    mu_female = 3.0 * mu / (2.0 + alpha)
    return mu_female, alpha * mu_female


def _x_linked_coefficients(s, h, F, mu_f, mu_m, nu):
    """Coefficients (c0, c1, c2, c3) of the X-linked equilibrium cubic G(x).

    G = (x - mu_f) W - (1 - mu_f - nu) M, where W = D w̄_daughters and M = D (a share
    of mothers after selection), D = 1 - s x, y = Y/D the sperm frequency. Write
    W = D - s L and M = Q - s K with Q = D (x + y)/2 = (x D + Y)/2, L = h Aa + aa and
    K = h Aa/2 + aa (all D-multiplied). With a = mu_f + nu, b = mu_m + nu, c_f = 1 - a,
    c_m = 1 - b, the selection-free part is

        x D - c_f Q - mu_f D = (x/2) P - D R,
        P = a(2 - b) + b + s(c_f c_m - x(1 + a)),   R = c_f mu_m / 2 + mu_f,

    using 1 + a - c_f c_m = a(2 - b) + b, and the selected part is
    (x - mu_f) L - c_f K = Aa (h x - e1) + aa (x - e2), e1 = h(mu_f + c_f/2),
    e2 = 1 - nu. With daughters' aa = hom0 + hom1 x + hom2 x² and Aa likewise
    (k = c_m(1-s) - mu_m s is the slope of Y = mu_m + k x):

        hom = (F/2) mu_m + [(1-F) mu_m + (F/2)(1 + k)] x + [(1-F) k - (F/2) s] x²,
        het = (1-F) mu_m + (1-F)(1 + k - 2 mu_m) x - (1-F)(s + 2k) x²,

    and G = (x/2) P - D R - s[Aa (h x - e1) + aa (x - e2)]. No coefficient is formed by
    subtracting terms of order one: every part is O(s) or O(mu), so each coefficient's
    rounding is a few ulps of parts no larger than the terms that balance at the root,
    and the root keeps full relative precision.
    """
    one_f, half_f = 1.0 - F, 0.5 * F
    a, b = mu_f + nu, mu_m + nu
    c_f, c_m = 1.0 - a, 1.0 - b
    k = c_m * (1.0 - s) - mu_m * s
    hom0 = half_f * mu_m
    hom1 = one_f * mu_m + half_f * (1.0 + k)
    hom2 = one_f * k - half_f * s
    het0 = one_f * mu_m
    het1 = one_f * (1.0 + k - 2.0 * mu_m)
    het2 = -one_f * (s + 2.0 * k)
    p0 = a * (2.0 - b) + b + s * c_f * c_m
    r = 0.5 * c_f * mu_m + mu_f
    e1 = h * (mu_f + 0.5 * c_f)
    e2 = 1.0 - nu
    c0 = s * (e1 * het0 + e2 * hom0) - r
    c1 = 0.5 * p0 + s * r + s * (e1 * het1 + e2 * hom1 - h * het0 - hom0)
    c2 = -0.5 * s * (1.0 + a) - s * (h * het1 - e1 * het2 + hom1 - e2 * hom2)
    c3 = -s * (h * het2 + hom2)
    return c0, c1, c2, c3


def _sperm_frequency(x, s, mu_m, nu):
    """X-bearing sperm frequency y from sons born at frequency x (after selection, mutation)."""
    with np.errstate(invalid="ignore", divide="ignore"):
        return mu_m + (1.0 - mu_m - nu) * (1.0 - s) * x / (1.0 - s * x)


def x_linked_balance(mu, s, h, F=0.0, nu=0.0, alpha=1.0) -> XLinkedBalance:
    """Exact X-linked mutation-selection equilibrium with male mutation bias.

    Eggs carry a at frequency x, X-bearing sperm at y. Sons receive the egg's X
    (fitness 1, 1-s); daughters one of each (1, 1-hs, 1-s; inbreeding F on daughters
    only). Germ-line rates mu_female = 3mu/(2+alpha), mu_male = alpha mu_female; back
    mutation nu in both germ lines. Census at birth.

    Parameters
    ----------
    mu : array_like
        Sex-averaged forward rate per X chromosome, (2 mu_female + mu_male) / 3.
    s, h : array_like
        Selection coefficient (a-hemizygous sons and aa daughters) and dominance in
        daughters.
    F : array_like, optional
        Inbreeding coefficient of daughters (default 0).
    nu : array_like, optional
        Back mutation rate (default 0).
    alpha : array_like, optional
        Male-to-female mutation rate ratio (default 1).

    Returns
    -------
    XLinkedBalance

    Notes
    -----
    Sperm follow sons: y = mu_m + (1-mu_m-nu)(1-s)x/(1-sx). Substituting into the egg
    recursion x' = mu_f + (1-mu_f-nu) q_f*(x, y) and clearing the denominators
    D = 1 - s x and w̄_daughters gives the cubic G(x) = (x - mu_f) W - (1-mu_f-nu) M,
    G(0) = -mu_f W(0) < 0, whose smallest sign change (- to +) in (0, 1) is the stable
    equilibrium. It is bracketed by the critical points of the cubic and polished by
    safeguarded Newton steps; the coefficients are formed without cancellation
    (`_x_linked_coefficients`).
    """
    (mu, s, h, F, nu, alpha), shape = _as_float(mu, s, h, F, nu, alpha)
    valid = _valid(mu, s, h, F, nu) & (alpha > 0) & np.isfinite(alpha)
    flat = [np.broadcast_to(v, shape).ravel() for v in (mu, s, h, F, nu, alpha, valid)]
    mu, s, h, F, nu, alpha, valid = flat
    mu_f, mu_m = sex_specific_rates(mu, alpha)
    x = np.full(mu.size, np.nan)
    exists = np.zeros(mu.size, dtype=bool)
    zero = valid & (mu == 0) & ((s > 0) | (nu > 0))
    x[zero], exists[zero] = 0.0, True
    solve = np.flatnonzero(valid & (mu > 0))
    if solve.size:
        args = [v[solve] for v in (s, h, F, mu_f, mu_m, nu)]
        x[solve], exists[solve] = _x_linked_root(*args)
    s, h, F, mu_f, mu_m, nu = (v.reshape(shape) for v in (s, h, F, mu_f, mu_m, nu))
    x, exists = x.reshape(shape), exists.reshape(shape)
    x = np.where(exists, x, np.nan)
    y = _sperm_frequency(x, s, mu_m, nu)
    q_female = 0.5 * (x + y)
    _, heterozygote, homozygote = daughter_genotype_frequencies(x, y, F)
    load_female = s * (h * heterozygote + homozygote)
    with np.errstate(invalid="ignore", divide="ignore"):
        # a share among mothers after selection, then new A -> a mutations in eggs.
        selected = (0.5 * (1.0 - h * s) * heterozygote + (1.0 - s) * homozygote) / (
            1.0 - load_female
        )
        share = np.where(x > 0, mu_f * (1.0 - selected) / x, np.nan)
    return XLinkedBalance(
        q_male=x,
        q_female=q_female,
        q_hat=(2.0 * q_female + x) / 3.0,
        exists=exists,
        load_male=s * x,
        load_female=load_female,
        new_mutation_share=share,
    )


def daughter_genotype_frequencies(x, y, F=0.0):
    """X-linked daughters' genotype frequencies.

    Parameters
    ----------
    x, y : array_like
        Frequency of a among eggs and among X-bearing sperm.
    F : array_like, optional
        Inbreeding coefficient, acting around the daughters' mean (x + y)/2.

    Returns
    -------
    tuple of numpy.ndarray
        ``(AA, Aa, aa)`` with aa = (1-F)xy + F(x+y)/2 and Aa = (1-F)(x(1-y) + y(1-x)).
    """
    x, y, F = (np.asarray(v, dtype=float) for v in (x, y, F))
    one_f = 1.0 - F
    mean = 0.5 * (x + y)
    aa = one_f * x * y + F * mean
    het = one_f * (x * (1.0 - y) + y * (1.0 - x))
    return 1.0 - aa - het, het, aa


def _x_linked_root(s, h, F, mu_f, mu_m, nu):
    """Smallest stable root in (0, 1) of the X-linked cubic G(x), 1-D arrays."""
    g0, c1, c2, c3 = _x_linked_coefficients(s, h, F, mu_f, mu_m, nu)

    def evaluate(x, index):
        cc0, cc1, cc2, cc3 = _take((g0, c1, c2, c3), index)
        return ((cc3 * x + cc2) * x + cc1) * x + cc0, (3.0 * cc3 * x + 2.0 * cc2) * x + cc1

    # Critical points: roots of 3 c3 x² + 2 c2 x + c1, in cancellation-free form.
    with np.errstate(invalid="ignore", divide="ignore"):
        disc = c2 * c2 - 3.0 * c3 * c1
        signed = -c2 - np.copysign(np.sqrt(disc), c2)
        r1, r2 = signed / (3.0 * c3), c1 / signed
    inside1 = (disc > 0) & (r1 > 0) & (r1 < 1)
    inside2 = (disc > 0) & (r2 > 0) & (r2 < 1)
    t1 = np.fmin(np.where(inside1, r1, np.nan), np.where(inside2, r2, np.nan))
    t2 = np.fmax(np.where(inside1, r1, np.nan), np.where(inside2, r2, np.nan))
    t2 = np.where(t2 > t1, t2, np.nan)
    # G is monotone on [0, t1], [t1, t2], [t2, 1]; take the first that ends with G > 0.
    # With nu = 0, G(1) = 0 exactly (fixation is a fixed point) and the last piece never
    # holds an interior sign change; with nu > 0, G(1) >= nu W(1) >= 0 (M <= W).
    lo = np.zeros(s.size)
    hi = np.ones(s.size)
    found = np.zeros(s.size, dtype=bool)
    for left, right in ((lo.copy(), t1), (t1, t2)):
        index = np.flatnonzero(~found & np.isfinite(right))
        if index.size:
            chosen = index[evaluate(right[index], index)[0] > 0]
            lo[chosen], hi[chosen], found[chosen] = left[chosen], right[chosen], True
    last = ~found & (nu > 0)
    lo[last] = np.fmax(np.nan_to_num(t1[last]), np.nan_to_num(t2[last]))
    found |= last
    # Start from the root of the quadratic part, g0 + c1 x + c2 x² = 0 (g0 < 0).
    with np.errstate(invalid="ignore", divide="ignore"):
        start = -2.0 * g0 / (c1 + np.sqrt(c1 * c1 - 4.0 * c2 * g0))

    def curvature(x, index):
        cc2, cc3 = _take((c2, c3), index)
        return np.abs(2.0 * cc2 + 6.0 * cc3 * x)

    root = np.full(s.size, np.nan)
    index = np.flatnonzero(found)
    if index.size == s.size:
        root = _newton_in_bracket(evaluate, lo, hi, start, curvature)
    elif index.size:

        def subset(function):
            return lambda x, i: function(x, index if i is None else index[i])

        root[index] = _newton_in_bracket(
            subset(evaluate), lo[index], hi[index], start[index], subset(curvature)
        )
    exists = found & (root > 0) & (root < 1)
    return root, exists
