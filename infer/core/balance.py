"""Exact deterministic mutation-selection equilibria (docs/model.md, 'Autosomal equilibrium').

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

from infer.core.choices import MODES
from infer.core.roots import (
    _as_float,
    _cubic_sign_is_positive,
    _newton_in_bracket,
    _take,
    _valid,
)
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
AFFECTED_MODES = MODES



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

    Derivation (docs/model.md, 'Autosomal equilibrium'). Zygotes AA = p(1 - q(1-F)), Aa = 2pq(1-F),
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


# The X-linked equilibrium lives in its own module; re-exported here so that
# ``infer.core.balance`` stays the one place to import the balance maths from.
from infer.core.x_linked import (  # noqa: E402
    XLinkedBalance,
    daughter_genotype_frequencies,
    sex_specific_rates,
    x_linked_balance,
)
