"""Carrier mothers of affected sons at an X-linked balance (infer.core.carriers)."""

import numpy as np
import pytest

from infer.core.carriers import carrier_mother_share
from infer.core.x_linked import sex_specific_rates, x_linked_balance


@pytest.mark.parametrize("alpha", [0.1, 1.0, 3.0, 30.0])
def test_lethal_recessive_share_is_haldanes(alpha):
    # Haldane 1935 (J. Genet. 31:317): for a lethal X-linked recessive a third of cases are
    # new mutations in the mother at equal rates; in general x = 2 mu_f + mu_m at a rare
    # balance, so the carrier share is (1 + alpha) / (2 + alpha) (derived in the module)
    mu, s, h = 1e-7, 1.0, 0.0
    b = x_linked_balance(mu, s, h, alpha=alpha)
    share = carrier_mother_share(b.q_male, b.q_female, mu, s, h, alpha=alpha)
    assert float(share) == pytest.approx((1 + alpha) / (2 + alpha), rel=1e-5)


def test_phenocopies_lower_the_carrier_share():
    mu, s, h = 1e-5, 0.9, 0.0
    b = x_linked_balance(mu, s, h, alpha=2.0)
    plain = carrier_mother_share(b.q_male, b.q_female, mu, s, h, alpha=2.0)
    # phenocopies per male birth equal to the genetic cases: half the sons, mothers AA
    diluted = carrier_mother_share(b.q_male, b.q_female, mu, s, h, alpha=2.0,
                                   phenocopy=float(b.q_male))
    assert float(diluted) == pytest.approx(float(plain) / 2, rel=1e-9)


def _forward(mu, s, h, alpha, females, males, generations, keep, seed):
    """Individual-based Wright-Fisher run with the mothers of the last generations' sons.

    Each generation: parents drawn by fitness (daughters 1, 1 - hs, 1 - s; sons 1, 1 - s),
    an egg carries one of its mother's two alleles, a sperm its father's X; A -> a by
    mutation at mu_female in eggs and mu_male in sperm. Returns the share of affected
    sons whose mother carried a, over the last ``keep`` generations.
    """
    rng = np.random.default_rng(seed)
    mu_f, mu_m = (float(v) for v in sex_specific_rates(mu, alpha))
    b = x_linked_balance(mu, s, h, alpha=alpha)
    x, y = float(b.q_male), 2 * float(b.q_female) - float(b.q_male)
    daughters = (rng.random(females) < x).astype(int) + (rng.random(females) < y)
    sons = (rng.random(males) < x).astype(int)
    carriers = affected = 0
    for generation in range(generations):
        w_f = np.array([1.0, 1 - h * s, 1 - s])[daughters]
        w_m = np.array([1.0, 1 - s])[sons]
        mothers = rng.choice(females, size=females + males, p=w_f / w_f.sum())
        fathers = rng.choice(males, size=females, p=w_m / w_m.sum())
        egg = rng.random(mothers.size) < daughters[mothers] / 2
        egg |= rng.random(mothers.size) < mu_f
        sperm = sons[fathers].astype(bool) | (rng.random(females) < mu_m)
        new_sons = egg[females:].astype(int)
        if generation >= generations - keep:
            hit = new_sons == 1
            affected += int(hit.sum())
            carriers += int((daughters[mothers[females:]][hit] >= 1).sum())
        daughters = egg[:females].astype(int) + sperm
        sons = new_sons
    return carriers / affected, affected


@pytest.mark.slow
def test_carrier_share_matches_an_individual_based_simulation():
    # inflated rates so that a 2 x 150,000-person population holds thousands of cases
    mu, s, h, alpha = 2e-3, 0.8, 0.1, 3.0
    simulated, cases = _forward(mu, s, h, alpha, 150_000, 150_000, generations=60, keep=30,
                                seed=11)
    b = x_linked_balance(mu, s, h, alpha=alpha)
    expected = float(carrier_mother_share(b.q_male, b.q_female, mu, s, h, alpha=alpha))
    se = np.sqrt(expected * (1 - expected) / cases)
    # 5 binomial standard errors, and drift of the frequency in a finite population
    assert abs(simulated - expected) < 5 * se + 0.005, (simulated, expected, cases)
