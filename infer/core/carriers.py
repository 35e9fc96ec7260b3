"""Carrier mothers of affected sons at an X-linked balance.

An affected son's X is his mother's egg. Mothers, as parents, are daughters after
selection (fitnesses 1, 1 − hs, 1 − s of AA, Aa, aa; genotypes at birth from the egg and
sperm frequencies x and y with inbreeding F). An egg of an AA mother carries the allele
only by a new mutation (rate mu_female), so among affected sons at birth the share whose
mother is a non-carrier is M_AA · mu_female / x, M_AA the AA share of mothers (derived
from the life cycle of :mod:`infer.core.x_linked`). With penetrance P and phenocopies φ
(affected sons per male birth without a germ-line mutation, whose mothers are
non-carriers) the affected sons are P·x + φ, and

    P(mother carries a | affected son) = P·(x − M_AA·mu_female) / (P·x + φ).

For a lethal recessive (s = 1, h = 0) at a rare balance x = 2 mu_female + mu_male = 3 mu,
so the share is (1 + alpha) / (2 + alpha): 2/3 at equal rates (Haldane 1935, "The rate of
spontaneous mutation of a human gene", J. Genet. 31:317), towards 1 when mutations arise
in fathers (alpha large).
"""

from __future__ import annotations

import numpy as np

from infer.core.x_linked import daughter_genotype_frequencies, sex_specific_rates

__all__ = ["carrier_mother_share", "mothers_non_carrier_share"]


def mothers_non_carrier_share(x, q_female, s, h, F=0.0):
    """M_AA: the AA share of mothers after selection, from the newborn frequencies.

    ``x`` the frequency among newborn sons (= eggs), ``q_female`` among daughters
    ((x + y) / 2, y the sperm frequency).
    """
    x, q_female = np.asarray(x, dtype=float), np.asarray(q_female, dtype=float)
    s, h = np.asarray(s, dtype=float), np.asarray(h, dtype=float)
    y = 2.0 * q_female - x
    aa_free, het, aa = daughter_genotype_frequencies(x, y, F)
    mean = aa_free + het * (1.0 - h * s) + aa * (1.0 - s)
    return aa_free / mean


def carrier_mother_share(x, q_female, mu, s, h, F=0.0, alpha=1.0, penetrance=1.0,
                         phenocopy=0.0):
    """P(the mother of an affected son carries the allele), per row (module docstring)."""
    mu_female, _ = sex_specific_rates(mu, alpha)
    x = np.asarray(x, dtype=float)
    genetic_new = mothers_non_carrier_share(x, q_female, s, h, F) * np.asarray(mu_female)
    penetrance = np.asarray(penetrance, dtype=float)
    with np.errstate(invalid="ignore", divide="ignore"):
        share = penetrance * (x - genetic_new) / (penetrance * x + phenocopy)
    return np.clip(share, 0.0, 1.0)
