"""Classic closed-form approximations to mutation-selection balance, checked against the exact root.

Each `Approximation` carries its value, its relative error against the exact
equilibrium of `infer.core.balance` (value / exact - 1) and an ``in_range`` flag. The flag
is decided a priori, from a stated first-order error estimate of the approximation
(not from the exact root): ``in_range`` is True where that estimate is at most
`RANGE_TOLERANCE` (10 %) and an exact stable equilibrium exists. Each estimate is
derived in the docstring of the function that computes it.

Sources: the rare-allele forms mu/(hs), sqrt(mu/s) and the quadratic
hs q + (1-2h)s q² = mu are in Haldane (1927, Proc. Camb. Phil. Soc. 23:838) and Crow &
Kimura (1970, *An Introduction to Population Genetics Theory*, ch. 6); the inbred form
mu/(s(h(1-F) + F)) follows from the exact quadratic of `infer.core.balance` (derived); the
X-linked 3mu/s = (2 mu_female + mu_male)/s for sons is Haldane (1935, J. Genet. 31:317).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from infer.core.balance import autosomal_balance, sex_specific_rates, x_linked_balance

__all__ = [
    "Approximation",
    "autosomal_approximations",
    "x_linked_approximations",
    "RANGE_TOLERANCE",
]

#: largest first-order relative error for which an approximation counts as in range
RANGE_TOLERANCE = 0.1


@dataclass(frozen=True)
class Approximation:
    """One closed-form approximation evaluated over parameter arrays.

    Attributes
    ----------
    name : str
        Short key (``"mu/(hs)"``).
    formula : str
        The formula in words a reader can check.
    value : numpy.ndarray
        Approximate equilibrium frequency (NaN where the formula has no value).
    relative_error : numpy.ndarray
        value / exact - 1 (NaN where no exact equilibrium exists).
    in_range : numpy.ndarray
        Boolean; False where the stated criterion says the approximation is used
        outside its range of validity.
    range_note : str
        The criterion, in words.
    """

    name: str
    formula: str
    value: np.ndarray
    relative_error: np.ndarray
    in_range: np.ndarray
    range_note: str


def _finish(name, formula, value, predicted_error, exact, exists, note):
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        value = np.where(np.isfinite(value), value, np.nan)
        relative = np.where(exists, value / exact - 1.0, np.nan)
    in_range = exists & np.isfinite(value) & (predicted_error <= RANGE_TOLERANCE)
    return Approximation(name, formula, value, relative, in_range, note)


def autosomal_approximations(mu, s, h, F=0.0) -> dict[str, Approximation]:
    """Classic autosomal approximations with their errors against the exact root (nu = 0).

    The exact condition (see `infer.core.balance`) is A q² + B q = mu with
    A = (1-F)(1-2h)s and B = (1-F)hs(1+mu) + Fs; write B_F = s(h(1-F) + F).
    Its smaller root is (mu/B) * 2/(1 + sqrt(1 + 4A mu/B²)) ≈ (mu/B)(1 - A mu/B²), which
    gives the first-order error estimates below.

    - ``mu/(hs)`` (partial dominance, random mating): error ≈ |1-2h| mu/(h² s) at F = 0,
      i.e. in range when h ≫ sqrt(mu/s) (hs ≫ sqrt(mu s)); in general
      |A| mu/B_F² + |B_F/(hs) - 1| + mu.
    - ``sqrt(mu/s)`` (complete recessive): the root is sqrt(mu/A)(sqrt(1+z²) - z),
      z = B/(2 sqrt(A mu)); to first order the error is z - h - F/2 with
      z ≈ (h + F) sqrt(s/mu)/2, so the estimate is (h + F) sqrt(s/mu)/2 + h + F/2:
      in range when h and F are ≪ sqrt(mu/s).
    - ``mu/(s(h(1-F)+F))`` (with inbreeding): error ≈ |A| mu/B_F² + mu, in range when
      h(1-F) + F ≫ sqrt(mu/s).
    - ``quadratic`` hs q + (1-2h)s q² = mu (random mating, solved without
      cancellation): it differs from the exact condition by dA = -F(1-2h)s and
      dB = B - hs, so the error is ≈ |dA q + dB| / |2(1-2h)s q + hs|, large near the fold
      where the two roots for h > 1/2 meet.

    Parameters
    ----------
    mu, s, h, F : array_like
        Mutation rate, selection and dominance coefficients, inbreeding coefficient.

    Returns
    -------
    dict of str to Approximation
        Keys ``"mu/(hs)"``, ``"sqrt(mu/s)"``, ``"mu/(s(h(1-F)+F))"``, ``"quadratic"``;
        where some h < 0 (heterozygote advantage) also ``"overdominant"``, and the four
        rare-allele forms have no value there.
    """
    mu, s, h, F = (np.asarray(v, dtype=float) for v in (mu, s, h, F))
    exact = autosomal_balance(mu, s, h, F, any_dominance=True)
    q, exists = exact.q_hat, exact.exists
    one_f = 1.0 - F
    a = one_f * (1.0 - 2.0 * h) * s
    b = one_f * h * s * (1.0 + mu) + F * s
    b_f = s * (h * one_f + F)
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        hs = h * s
        linear = mu / hs
        linear_error = np.abs(a) * mu / b_f**2 + np.abs(b_f / hs - 1.0) + mu
        recessive = np.sqrt(mu / s)
        recessive_error = 0.5 * (h + F) * np.sqrt(s / mu) + h + 0.5 * F
        inbred = mu / b_f
        inbred_error = np.abs(a) * mu / b_f**2 + mu
        a0 = (1.0 - 2.0 * h) * s
        quadratic = 2.0 * mu / (hs + np.sqrt(hs * hs + 4.0 * a0 * mu))
        quadratic_error = np.abs((a - a0) * quadratic + (b - hs)) / np.abs(
            2.0 * a0 * quadratic + hs
        )
    advantage = h < 0
    if np.any(advantage):
        # the rare-allele forms assume selection against a; with a fitter heterozygote
        # they have no value (mu/(hs) < 0) and are never in range
        never = np.where(advantage, np.inf, 0.0)
        linear, recessive, inbred, quadratic = (
            np.where(advantage, np.nan, v) for v in (linear, recessive, inbred, quadratic))
        linear_error, recessive_error, inbred_error, quadratic_error = (
            v + never for v in (linear_error, recessive_error, inbred_error, quadratic_error))
    found = {
        "mu/(hs)": _finish(
            "mu/(hs)", "q = mu / (h s)", linear, linear_error, q, exists,
            "rare allele with partial dominance: needs h >> sqrt(mu/s) and F << h",
        ),
        "sqrt(mu/s)": _finish(
            "sqrt(mu/s)", "q = sqrt(mu / s)", recessive, recessive_error, q, exists,
            "complete recessive: needs h and F << sqrt(mu/s)",
        ),
        "mu/(s(h(1-F)+F))": _finish(
            "mu/(s(h(1-F)+F))", "q = mu / (s (h (1-F) + F))", inbred, inbred_error, q, exists,
            "rare allele with inbreeding: needs h(1-F) + F >> sqrt(mu/s)",
        ),
        "quadratic": _finish(
            "quadratic", "h s q + (1-2h) s q^2 = mu, smaller root", quadratic,
            quadratic_error, q, exists,
            "rare allele, random mating: needs F small and q away from the fold (h > 1/2)",
        ),
    }
    if np.any(advantage):
        found["overdominant"] = _overdominant(mu, s, h, F, q, exists)
    return found


def _overdominant(mu, s, h, F, q, exists) -> Approximation:
    """Fisher's (1922) balanced polymorphism, the mu = 0 root of the exact quadratic.

    With mu = 0 the condition A q² + B q = mu of `autosomal_approximations` leaves
    q0 = -B0/A, B0 = s(h(1-F) + F): t/(s' + t) in Fisher's scale at F = 0 (see
    `infer.core.balance`). Its first-order error (derived): f(q0) = mu((1-F)hs q0 - 1)
    and f'(q0) = A q0 + (1-F)hs mu ≈ -B0, so the error is about
    mu |1 - (1-F)hs q0| / (|B0| q0). Only h < 0 with B0 < 0 has a value.
    """
    one_f = 1.0 - F
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        b0 = s * (h * one_f + F)
        a = one_f * (1.0 - 2.0 * h) * s
        q0 = np.where((h < 0) & (b0 < 0), -b0 / a, np.nan)
        error = mu * np.abs(1.0 - one_f * h * s * q0) / (np.abs(b0) * q0)
    return _finish(
        "overdominant", "q = -(h(1-F) + F) / ((1-F)(1-2h)) = t/(s'+t) at F = 0 (Fisher 1922)",
        q0, error, q, exists,
        "heterozygote advantage (h < 0): needs mu << |h(1-F) + F| s q",
    )


def x_linked_approximations(mu, s, h, alpha=1.0) -> dict[str, Approximation]:
    """X-linked approximations for the frequency among sons, against the exact root.

    Rare allele, first order in x and y but exact in s (derived): sperm
    y ≈ mu_m + (1-s)x and eggs x ≈ mu_f + (1-hs)(x + y)/2, so

        x ≈ (2 mu_f + (1-hs) mu_m) / (s (1 + 2h - hs)),

    which for h = 0 is Haldane's (1935) (2 mu_f + mu_m)/s = 3 mu/s (the sex-averaged
    rate makes 2 mu_f + mu_m = 3 mu for every alpha).

    - ``3mu/s`` (Haldane 1935, selection in hemizygous sons only): error estimate
      |3mu/s / rare-allele - 1| + 3 x (about 2h for small s), in range when h ≪ 0.05.
    - ``rare-allele`` (the formula above): error estimate 3 x (second order terms),
      in range while q_male ≪ 1.

    Parameters
    ----------
    mu, s, h, alpha : array_like
        Sex-averaged mutation rate per X, selection, dominance in daughters,
        male-to-female mutation ratio.

    Returns
    -------
    dict of str to Approximation
        Keys ``"3mu/s"`` and ``"rare-allele"``, values for q_male.
    """
    mu, s, h, alpha = (np.asarray(v, dtype=float) for v in (mu, s, h, alpha))
    exact = x_linked_balance(mu, s, h, 0.0, 0.0, alpha)
    x, exists = exact.q_male, exact.exists
    mu_f, mu_m = sex_specific_rates(mu, alpha)
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        haldane = 3.0 * mu / s
        hs = h * s
        rare = (2.0 * mu_f + (1.0 - hs) * mu_m) / (s * (1.0 + 2.0 * h - hs))
        rare_error = 3.0 * rare
        haldane_error = np.abs(haldane / rare - 1.0) + rare_error
    return {
        "3mu/s": _finish(
            "3mu/s", "q_male = 3 mu / s = (2 mu_female + mu_male) / s", haldane,
            haldane_error, x, exists,
            "selection in hemizygous sons only: needs h << 0.05 and q_male << 1",
        ),
        "rare-allele": _finish(
            "rare-allele",
            "q_male = (2 mu_female + (1-hs) mu_male) / (s (1 + 2h - hs))",
            rare, rare_error, x, exists, "rare allele: needs q_male << 1",
        ),
    }
