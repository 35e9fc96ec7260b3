"""Autosomal balance with sex-specific selection (docs/model.md, 'Sex-specific fitness').

When affected men and affected women differ in fitness (selection ``s_male`` in males,
``s_female`` in females, the same dominance h), the sperm and the eggs that make a
generation carry the allele at different frequencies, x (sperm) and y (eggs). The life
cycle, census at birth as everywhere in qhat:

* zygotes from one sperm and one egg, with inbreeding F: aa = (1-F)xy + F·q̄,
  Aa = (1-F)(x(1-y) + y(1-x)), AA = the rest, q̄ = (x + y)/2 the newborns' frequency (an
  identical-by-descent pair carries the allele at the mean gamete frequency, an
  assumption that is exact at F = 0);
* the same genotype frequencies in both sexes at birth; males selected with fitnesses
  1, 1 - h·s_male, 1 - s_male, females with 1, 1 - h·s_female, 1 - s_female;
* each sex's gametes mutate (A->a at mu, a->A at nu): x' from the males, y' from the
  females.

The equilibrium is the fixed point of the map (x, y) -> (x', y'), found by Newton's method
in two dimensions from the one-sex balance at the sex-averaged s̄ = (s_male + s_female)/2,
and checked for stability (spectral radius of the map's Jacobian below one).

To first order in q the two sexes' losses add: the newborns' frequency changes by
mu - (h·s_male + h·s_female)/2 · q (dominant-acting, h > 0) or mu - s̄·q² (h = 0), so
q ≈ 2mu / (h(s_male + s_female)) and q ≈ sqrt(2mu / (s_male + s_female)) -- the one-sex
approximations at s̄ (derivation: each sex's gametes lose h·s_sex·q of their copies per
generation to first order, and the newborns draw half their genes from each sex).

Every function takes arrays that broadcast against each other; nothing loops over rows.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from infer.core.balance import AutosomalBalance, autosomal_balance
from infer.core.x_linked import daughter_genotype_frequencies

__all__ = ["TwoSexBalance", "two_sex_balance", "two_sex_step", "two_sex_genotypes"]

_MAX_NEWTON = 60
_TOLERANCE = 1e-13


@dataclass(frozen=True)
class TwoSexBalance(AutosomalBalance):
    """Autosomal equilibrium with sex-specific selection.

    Attributes
    ----------
    q_hat : numpy.ndarray
        Newborns' frequency (x + y)/2; NaN where no stable interior equilibrium.
    exists : numpy.ndarray
        A stable interior fixed point was found.
    mean_fitness, load : numpy.ndarray
        Averages over the two sexes of each sex's mean fitness and load at birth.
    q_sperm, q_egg : numpy.ndarray
        x and y, the frequencies among the sperm and the eggs that made the newborns.
    """

    q_sperm: np.ndarray = None
    q_egg: np.ndarray = None


#: zygotes (AA, Aa, aa) from sperm at x and eggs at y, F around (x + y)/2: the same
#: products as X-linked daughters' genotypes, whose eggs and sperm also differ
two_sex_genotypes = daughter_genotype_frequencies


def _gamete_change(x, y, s, h, F, mu, nu):
    """One sex's mutated gametes minus the newborns' frequency q̄ = (x + y)/2.

    Formed without subtracting terms of order one: since Aa/2 + aa = q̄ for any F,
    selected - q̄ = s(q̄(h·Aa + aa) - h·Aa/2 - aa) / w̄, then mutation adds
    mu(1 - selected) - nu·selected.
    """
    _, het, hom = two_sex_genotypes(x, y, F)
    mean = 0.5 * (x + y)
    loss = h * het + hom
    w_bar = 1.0 - s * loss
    selection = s * (mean * loss - 0.5 * h * het - hom) / w_bar
    selected = mean + selection
    return selection + mu * (1.0 - selected) - nu * selected


def two_sex_step(x, y, mu, s_male, s_female, h, F=0.0, nu=0.0):
    """Sperm and egg frequencies one generation on.

    Parameters
    ----------
    x, y : array_like
        Frequencies among the sperm and eggs that made the current newborns.
    mu, s_male, s_female, h, F, nu : array_like
        Forward mutation rate, selection in males and in females, dominance, inbreeding
        coefficient, back mutation rate.

    Returns
    -------
    tuple of numpy.ndarray
        (x', y'). With s_male = s_female = s and x = y = q this is
        :func:`infer.core.life_cycle.autosomal_step` in both components.
    """
    mean = 0.5 * (np.asarray(x, dtype=float) + np.asarray(y, dtype=float))
    return (mean + _gamete_change(x, y, s_male, h, F, mu, nu),
            mean + _gamete_change(x, y, s_female, h, F, mu, nu))


def two_sex_balance(mu, s_male, s_female, h, F=0.0, nu=0.0) -> TwoSexBalance:
    """Exact autosomal equilibrium with selection s_male in males and s_female in females.

    Parameters
    ----------
    mu : array_like
        Forward mutation rate A -> a per gamete per generation.
    s_male, s_female : array_like
        Selection against aa in males and in females, in [0, 1]; their mean must be > 0.
    h : array_like
        Dominance (the same in both sexes), in [0, 1].
    F, nu : array_like, optional
        Inbreeding coefficient and back mutation rate (default 0).

    Returns
    -------
    TwoSexBalance
        With s_male = s_female it equals :func:`infer.core.balance.autosomal_balance`.
    """
    arrays = np.broadcast_arrays(*(np.asarray(v, dtype=float)
                                   for v in (mu, s_male, s_female, h, F, nu)))
    shape = arrays[0].shape
    mu, s_m, s_f, h, F, nu = (a.ravel() for a in arrays)
    valid = ((s_m >= 0) & (s_m <= 1) & (s_f >= 0) & (s_f <= 1)
             & np.isfinite(s_m) & np.isfinite(s_f))
    start = autosomal_balance(mu, 0.5 * (s_m + s_f), h, F, nu)
    exists = np.asarray(start.exists, dtype=bool) & valid
    x = np.where(exists, start.q_hat, 0.5)
    y = x.copy()
    args = (mu, s_m, s_f, h, F, nu)
    converged = np.zeros(x.shape, dtype=bool)
    for _ in range(_MAX_NEWTON):
        (rx, ry), jacobian = _residual_and_jacobian(x, y, *args)
        (a, b), (c, d) = jacobian
        det = a * d - b * c
        dx = (-rx * d + ry * b) / det
        dy = (-ry * a + rx * c) / det
        x_new = np.clip(x + dx, 1e-300, 1.0)
        y_new = np.clip(y + dy, 1e-300, 1.0)
        small = ((np.abs(x_new - x) <= _TOLERANCE * x_new)
                 & (np.abs(y_new - y) <= _TOLERANCE * y_new))
        x, y = np.where(converged, x, x_new), np.where(converged, y, y_new)
        converged |= small
        if np.all(converged | ~exists):
            break
    _, jacobian = _residual_and_jacobian(x, y, *args)
    exists &= converged & _stable(jacobian) & (x > 0) & (x < 1) & (y > 0) & (y < 1)
    x, y = np.where(exists, x, np.nan), np.where(exists, y, np.nan)
    _, het, hom = two_sex_genotypes(x, y, F)
    genetic_load = 0.5 * (s_m + s_f) * (h * het + hom)
    q = 0.5 * (x + y)

    def shaped(values):
        return np.asarray(values).reshape(shape)

    return TwoSexBalance(q_hat=shaped(q), exists=shaped(exists),
                         mean_fitness=shaped(1.0 - genetic_load), load=shaped(genetic_load),
                         q_sperm=shaped(x), q_egg=shaped(y))


def _residual(x, y, mu, s_m, s_f, h, F, nu):
    """(x' - x, y' - y): zero at a fixed point of the map."""
    half_gap = 0.5 * (y - x)
    return (half_gap + _gamete_change(x, y, s_m, h, F, mu, nu),
            -half_gap + _gamete_change(x, y, s_f, h, F, mu, nu))


def _residual_and_jacobian(x, y, *args):
    """The residual at (x, y) and its Jacobian by central differences (relative steps)."""
    rx, ry = _residual(x, y, *args)
    step_x, step_y = 1e-6 * x + 1e-18, 1e-6 * y + 1e-18
    xp, yp = _residual(x + step_x, y, *args)
    xm, ym = _residual(x - step_x, y, *args)
    drx_dx, dry_dx = (xp - xm) / (2 * step_x), (yp - ym) / (2 * step_x)
    xp, yp = _residual(x, y + step_y, *args)
    xm, ym = _residual(x, y - step_y, *args)
    drx_dy, dry_dy = (xp - xm) / (2 * step_y), (yp - ym) / (2 * step_y)
    return (rx, ry), ((drx_dx, drx_dy), (dry_dx, dry_dy))


def _stable(jacobian) -> np.ndarray:
    """The map's Jacobian (the residual's plus the identity) has spectral radius < 1."""
    (a, b), (c, d) = jacobian
    a, d = a + 1.0, d + 1.0
    half_trace = 0.5 * (a + d)
    det = a * d - b * c
    discriminant = half_trace**2 - det
    root = np.sqrt(np.abs(discriminant))
    real_radius = np.maximum(np.abs(half_trace + root), np.abs(half_trace - root))
    radius = np.where(discriminant >= 0, real_radius, np.sqrt(np.abs(det)))
    return radius < 1.0
