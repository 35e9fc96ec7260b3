"""Exact X-linked mutation-selection equilibrium (docs/model.md, 'X-linked equilibrium').

Eggs carry the deleterious allele at frequency x, X-bearing sperm at y. Daughters get
one X of each (fitnesses 1, 1-hs, 1-s, inbreeding F on daughters only); sons get the
egg's X (fitnesses 1, 1-s). Mutation in each sex's germ line: mu_female and
mu_male = alpha * mu_female, with the study's mu the average per X chromosome,
(2 mu_female + mu_male) / 3; back mutation nu in both. See infer.core.balance for the
stability argument (the map is cooperative, so the smallest sign-changing root is
stable). A (mu, alpha) pair that makes either germ-line rate 1 or more is outside the
model: no equilibrium (NaN, ``exists`` False).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from infer.core.roots import (
    _as_float,
    _newton_in_bracket,
    _take,
    _valid,
)

__all__ = [
    "XLinkedBalance",
    "x_linked_balance",
    "sex_specific_rates",
    "daughter_genotype_frequencies",
    "germ_line_rate_problem",
]


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
        ``(mu_female, mu_male)`` = (3 mu / (2 + alpha), alpha * mu_female); both NaN
        where either is 1 or more (a germ line cannot mutate more than every gamete,
        so the life cycle is undefined there: e.g. alpha = 1000, mu = 0.5 would give
        mu_male = 1.497).
    """
    mu = np.asarray(mu, dtype=float)
    alpha = np.asarray(alpha, dtype=float)
    with np.errstate(invalid="ignore", divide="ignore"):
        mu_female = 3.0 * mu / (2.0 + alpha)
        mu_male = alpha * mu_female
        inside = (mu_female < 1.0) & (mu_male < 1.0)
    if np.all(inside):
        return mu_female, mu_male
    return np.where(inside, mu_female, np.nan), np.where(inside, mu_male, np.nan)


def germ_line_rate_problem(mu: float, alpha: float) -> str | None:
    """Why a fixed (mu, alpha) pair is outside the life cycle, or None when it is not.

    Each germ line's rate (:func:`sex_specific_rates`) must be below 1, as mu is.
    """
    mu_female = 3.0 * mu / (2.0 + alpha)
    for name, rate in (("mu_female", mu_female), ("mu_male", alpha * mu_female)):
        if rate >= 1.0:
            return (f"{mu:g} with alpha = {alpha:g} gives {name} = {rate:.4g} per gamete; "
                    "each germ line's rate must be below 1")
    return None


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
    valid = valid & np.isfinite(mu_f)  # a germ-line rate of 1 or more: no life cycle
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
