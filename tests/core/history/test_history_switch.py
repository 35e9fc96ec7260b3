"""The switch between the exact discrete transition and the diffusion, at its boundary.

Rows with 2Ne <= EXACT_GENES = 200 genes use the exact Wright–Fisher transition (Wright
1931, Genetics 16:97), rows above it the forward diffusion equation (Kimura 1955, PNAS
41:144). At 2Ne = 200 both are carried through the same selected, mutating history and
must agree to the size of the diffusion's O(1/(2Ne)) corrections.
"""

import numpy as np
from scipy import special

from infer.core.history.discrete import EXACT_GENES
from infer.core.history.distribution import history_distributions
from infer.core.history.spec import Epoch, Founder, History


def _params(Ne):
    rows = dict(Ne=Ne, mu=2e-3, s=0.03, h=0.3, nu=1e-4)
    return {k: np.atleast_1d(np.asarray(v, dtype=float)) for k, v in rows.items()}


HISTORY = History(
    epochs=(Epoch(generations=30), Epoch(generations=20, ends=30, values={"s": 0.1})),
    founder=Founder(founders=40, generations_ago=30),
)


def test_the_switch_is_at_200_genes():
    assert EXACT_GENES == 200
    exact = history_distributions(HISTORY, _params(100.0), times=(0,))[0]
    above = history_distributions(HISTORY, _params(100.5), times=(0,))[0]
    # the exact transition lands on k/200; the diffusion on its cells
    support = exact.points[0][exact.masses[0] > 0]
    np.testing.assert_allclose(support * 200, np.rint(support * 200), atol=1e-12)
    assert above.points.shape[1] != 201


def test_both_methods_agree_at_the_boundary():
    exact = history_distributions(HISTORY, _params(100.0), times=(0, 30))
    diffusion = history_distributions(HISTORY, _params(100.0), times=(0, 30), exact_genes=0)
    for t in (0, 30):
        np.testing.assert_allclose(diffusion[t].mean, exact[t].mean, rtol=0.02)
        np.testing.assert_allclose(diffusion[t].heterozygosity, exact[t].heterozygosity,
                                   rtol=0.02)
        # the probability of each count in a sample of 40 genes
        k = np.arange(41)

        def sample(d, k=k):
            x = d.points[0][:, None]
            return d.masses[0] @ (special.comb(40, k) * x**k * (1 - x) ** (40 - k))

        # the largest gap, ~0.009 in P(k = 0), is the diffusion limit's own: the
        # finite-volume solution with 4x the cells and steps moves by < 3e-4
        np.testing.assert_allclose(sample(diffusion[t]), sample(exact[t]), atol=0.012)
