"""Exact deterministic mutation-selection equilibria (docs/model.md, 'Autosomal equilibrium').

Life cycle, census at birth: zygotes -> viability/fertility selection -> gametes with
forward mutation A->a (rate ``mu``) and back mutation a->A (rate ``nu``) -> union with
inbreeding coefficient ``F`` -> zygotes. Fitnesses AA 1, Aa 1-hs, aa 1-s.

Every function takes numpy arrays (or scalars) that broadcast against each other and
returns arrays of the broadcast shape; nothing loops over rows in Python. Parameter
values outside the model's domain (mu outside [0, 1), s outside [0, 1], h outside
[0, 1], F or nu outside [0, 1), alpha <= 0, NaN) give NaN with ``exists = False``;
user-facing validation lives in the commands.

General genotype fitness (autosomal, ``any_dominance=True``): h may be any finite number
with 1 - hs >= 0. h < 0 is heterozygote advantage (Aa fitter than both homozygotes:
overdominance), h > 1 a heterozygote less fit than aa (underdominance relative to aa).
Fitnesses given directly map onto this scale by dividing by w_AA
(:func:`fitness_coefficients`): s = 1 - w_aa/w_AA, h = (1 - w_Aa/w_AA)/s, which needs
w_aa < w_AA (a is the less fit homozygote). Fisher's (1922, "On the dominance ratio",
Proc. Roy. Soc. Edinburgh 42:321) overdominance w_AA = 1 - t, w_Aa = 1, w_aa = 1 - s'
(s' > t) is s = (s' - t)/(1 - t), h = -t/(s' - t) < 0, and its balanced polymorphism
q = t/(s' + t) is the mu -> 0 limit of the stable root below (derived in
``_closed_form_root``).

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
    "fitness_coefficients",
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
        Genetic load relative to the fittest genotype, 1 - mean_fitness / w_max: the
        mutation load 1 - mean_fitness for 0 <= h (AA fittest); for h < 0 the
        heterozygote (fitness 1 - hs) is fittest and the load includes the segregational
        load of the balanced polymorphism (s't/(s' + t) in Fisher's scale at mu = 0).
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


def _selected_share(q, s, h, F):
    """1 - w̄ = s q (2h(1-q)(1-F) + q(1-F) + F): fitness lost to selection, any h."""
    one_f = 1.0 - F
    return s * q * (2.0 * h * (1.0 - q) * one_f + q * one_f + F)


def load(q, s, h, F=0.0):
    """Genetic load among zygotes, 1 - w̄/w_max, evaluated without cancellation.

    For h >= 0 the fittest genotype is AA (w_max = 1) and the load is
    1 - w̄ = s(h Aa + aa). For h < 0 it is the heterozygote, w_max = 1 - hs = 1 - k, and
    w_max - w̄ = -k AA + (s - k) aa (both terms >= 0), so the load is that over 1 - k.

    Parameters
    ----------
    q, s, h, F : array_like
        Allele frequency, selection and dominance coefficients, inbreeding coefficient.

    Returns
    -------
    numpy.ndarray
    """
    q, s, h, F = (np.asarray(v, dtype=float) for v in (q, s, h, F))
    value = _selected_share(q, s, h, F)
    if np.any(h < 0):
        value = np.where(h < 0, _overdominant_load(q, s, h * s, F), value)
    return value


def _overdominant_load(q, s, k, F):
    """1 - w̄/(1 - k) for a fitter heterozygote (k = hs < 0): (-k AA + (s - k) aa)/(1 - k)."""
    homozygote_a, _, homozygote_aa = genotype_frequencies(q, F)
    return (-k * homozygote_a + (s - k) * homozygote_aa) / (1.0 - k)


def fitness_coefficients(w_AA, w_Aa, w_aa):
    """The (s, h) of three genotype fitnesses, on qhat's scale AA = 1.

    Dividing by w_AA: 1 - hs = w_Aa / w_AA and 1 - s = w_aa / w_AA, so
    s = 1 - w_aa / w_AA and h = (1 - w_Aa / w_AA) / s. Fisher's (1922) overdominance
    w_AA = 1 - t, w_Aa = 1, w_aa = 1 - s' gives s = (s' - t)/(1 - t) and
    h = -t/(s' - t).

    Parameters
    ----------
    w_AA, w_Aa, w_aa : array_like
        Fitnesses (any common scale), w_AA > 0, w_Aa >= 0, 0 <= w_aa < w_AA.

    Returns
    -------
    tuple of numpy.ndarray
        ``(s, h)``; NaN where the fitnesses are outside that domain (equal homozygotes
        leave h undefined: s = 0).
    """
    w_AA, w_Aa, w_aa = (np.asarray(v, dtype=float) for v in (w_AA, w_Aa, w_aa))
    ok = (w_AA > 0) & (w_Aa >= 0) & (w_aa >= 0) & (w_aa < w_AA)
    with np.errstate(all="ignore"):
        s = (w_AA - w_aa) / w_AA
        h = (w_AA - w_Aa) / (w_AA - w_aa)
    return np.where(ok, s, np.nan), np.where(ok, h, np.nan)


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

    h < 0 (heterozygote advantage): a > 0, and the product of the roots -mu/a < 0
    leaves exactly one positive root, stable as f rises through it. b can be negative
    (when the advantage outweighs inbreeding, -(1-F)h > F); that root is then written
    (-b + sqrt(b² + 4a mu)) / (2a), again free of cancellation. As mu -> 0 it tends
    to -b/a = -((1-F)h + F)/((1-F)(1-2h)); at F = 0 with Fisher's fitnesses
    (s = (s'-t)/(1-t), hs = -t/(1-t)) that is t/(s' + t). h > 1 (the heterozygote
    below aa, hs <= 1) is the a < 0 case above: the small stable root near mu/(hs).
    """
    one_f = 1.0 - F
    a = one_f * (1.0 - 2.0 * h) * s
    b = one_f * h * s * (1.0 + mu) + F * s
    with np.errstate(invalid="ignore", divide="ignore"):
        disc = b * b + 4.0 * a * mu
        root = (2.0 * mu) / (b + np.sqrt(disc))
        negative_b = b < 0
        if np.any(negative_b):
            # h < 0 (a > 0, b may be < 0): then -b + sqrt(disc) adds two positive terms
            root = np.where(negative_b, (np.sqrt(disc) - b) / (2.0 * a), root)
    # The smaller root lies in (0, 1) iff f(1) > 0, or both roots lie below 1 (h > 1/2
    # with the vertex -b/(2a) below 1); tested on f itself, not on the rounded root.
    with np.errstate(invalid="ignore"):
        f_one = s * (one_f * (1.0 - h + h * mu) + F) - mu
    exists = (disc > 0) & (root < 1.0) & ((f_one > 0) | ((a < 0) & (b < -2.0 * a)))
    # mu = 0: the loss boundary q = 0 is the equilibrium whenever selection acts, unless
    # the heterozygote's advantage makes it unstable (b < 0): then f(q)/q = aq + b gives
    # the balanced polymorphism -b/a (Fisher's t/(s' + t) at F = 0).
    if not np.all(mu):
        zero = mu == 0
        with np.errstate(invalid="ignore", divide="ignore"):
            balanced = zero & negative_b
            exists = np.where(zero, (s > 0) & (~balanced | (-b < a)), exists)
            root = np.where(zero, np.where(balanced, -b / a, 0.0), root)
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
    if not np.all(mu):
        root = _balanced_without_mutation(root, mu, a, b, nu, k0, k1)
    return root, exists


def _balanced_without_mutation(root, mu, a, b, nu, k0, k1):
    """Return the interior root at mu = 0, nu > 0 where the heterozygote's advantage repels q = 0.

    G(q)/q = g(q) = -a q² + (a - b - nu k1) q + b + nu(1 - k0). q = 0 is stable iff
    g(0) >= 0; otherwise (only possible for h < 0, a > 0) g(0) < 0 <= g(1) = nu(1 - s),
    and the stable root is the smaller root of the concave g, written
    -2 g(0) / (A1 + sqrt(A1² + 4a g(0))) with A1 = a - b - nu k1.
    """
    g0 = b + nu * (1.0 - k0)
    repelled = (mu == 0) & (g0 < 0)
    if not np.any(repelled):
        return root
    a1 = a - b - nu * k1
    with np.errstate(invalid="ignore", divide="ignore"):
        interior = -2.0 * g0 / (a1 + np.sqrt(a1 * a1 + 4.0 * a * g0))
    return np.where(repelled, interior, root)


def autosomal_balance(mu, s, h, F=0.0, nu=0.0, *, any_dominance=False) -> AutosomalBalance:
    """Exact autosomal mutation-selection equilibrium.

    Parameters
    ----------
    mu : array_like
        Forward mutation rate A -> a per gamete per generation, in [0, 1).
    s : array_like
        Selection coefficient against aa, in [0, 1].
    h : array_like
        Dominance coefficient, in [0, 1] (Aa fitness 1 - hs); with ``any_dominance``
        any finite h with 1 - hs >= 0 (h < 0: heterozygote advantage; h > 1: the
        heterozygote less fit than aa).
    F : array_like, optional
        Inbreeding coefficient, in [0, 1) (default 0).
    nu : array_like, optional
        Back mutation rate a -> A, in [0, 1) (default 0).
    any_dominance : bool, optional
        Accept h outside [0, 1] (default False: such rows give NaN, as before).

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
    valid = _valid(mu, s, h, F, nu, any_dominance)
    if not np.any(nu):
        root, exists = _closed_form_root(mu, s, h, F)
        exists = np.broadcast_to(exists & valid, shape)
        q = np.broadcast_to(np.where(exists, root, np.nan), shape)
        # 1 - w̄ = mu + (1-mu)(1-F)hs q̂ at the nu = 0 equilibrium (no cancellation).
        genetic_load = mu + (1.0 - mu) * ((1.0 - F) * h * s) * q
        if any_dominance and np.any(h < 0):
            # relative to the fittest genotype, the heterozygote (see ``load``)
            with np.errstate(invalid="ignore"):
                genetic_load = np.where(h < 0, _overdominant_load(q, s, h * s, F),
                                        genetic_load)
            return AutosomalBalance(
                q_hat=q, exists=exists,
                mean_fitness=1.0 - _selected_share(q, s, h, F),
                load=genetic_load)
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
    mean_fitness = (1.0 - genetic_load if not np.any(h < 0) else
                    1.0 - _selected_share(q, s, h, F))
    return AutosomalBalance(
        q_hat=q, exists=exists, mean_fitness=mean_fitness, load=genetic_load
    )


def q_hat(mu, s, h, F=0.0, nu=0.0, *, any_dominance=False) -> np.ndarray:
    """Exact autosomal equilibrium frequency; shorthand for ``autosomal_balance(...).q_hat``.

    Parameters
    ----------
    mu, s, h, F, nu, any_dominance : array_like
        As in `autosomal_balance`.

    Returns
    -------
    numpy.ndarray
        Stable interior equilibrium among zygotes, NaN where none.
    """
    return autosomal_balance(mu, s, h, F, nu, any_dominance=any_dominance).q_hat


# The X-linked equilibrium lives in its own module; re-exported here so that
# ``infer.core.balance`` stays the one place to import the balance maths from.
from infer.core.x_linked import (  # noqa: E402
    XLinkedBalance,
    daughter_genotype_frequencies,
    sex_specific_rates,
    x_linked_balance,
)
