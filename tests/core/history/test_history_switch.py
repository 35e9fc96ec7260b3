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

        assert np.max(np.abs(sample(diffusion[t]) - sample(exact[t]))) < 0.05


def _scaled(scale):
    """The boundary case with 2Ne times ``scale`` and every force and time rescaled, so
    Ne·mu, Ne·s, Ne·nu and t/(2Ne) stay fixed: the same diffusion limit."""
    rows = dict(Ne=100.0 * scale, mu=2e-3 / scale, s=0.03 / scale, h=0.3, nu=1e-4 / scale)
    history = History(
        epochs=(Epoch(generations=30 * scale),
                Epoch(generations=20 * scale, ends=30 * scale, values={"s": 0.1 / scale})),
        founder=Founder(founders=40 * scale, generations_ago=30 * scale))
    return history, {k: np.atleast_1d(np.asarray(v, dtype=float)) for k, v in rows.items()}


def test_the_gap_at_the_switch_is_the_diffusion_limits_first_order_error():
    """The diffusion approximates the discrete Wright–Fisher chain to O(1/(2Ne)) (Ewens
    2004, Mathematical Population Genetics I, ch. 4; from memory): doubling 2Ne with the
    scaled forces fixed halves the largest gap in the probability of a count of 40."""
    k = np.arange(41)

    def gaps(scale):
        history, params = _scaled(scale)
        times = (0, 30 * scale)
        exact = history_distributions(history, params, times=times, exact_genes=10_000)
        diffusion = history_distributions(history, params, times=times, exact_genes=0)
        out = []
        for t in times:
            rows = [d[t].points[0][:, None] for d in (exact, diffusion)]
            probability = [d[t].masses[0] @ (special.comb(40, k) * x**k * (1 - x) ** (40 - k))
                           for d, x in zip((exact, diffusion), rows, strict=True)]
            out.append(np.max(np.abs(probability[1] - probability[0])))
        return np.array(out)

    at_200, at_400, at_800 = gaps(1), gaps(2), gaps(4)
    for coarse, fine in ((at_200, at_400), (at_400, at_800)):
        ratio = coarse / fine
        assert np.all((1.6 < ratio) & (ratio < 2.6)), (
            f"the gap must halve as 2Ne doubles (first order); ratios {ratio}, gaps {coarse}")
