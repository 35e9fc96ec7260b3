"""Wright–Fisher forward simulation of a deleterious allele under the qhat life cycle.

Each generation, for every replicate at once (docs/model.md, 'Life cycle'; autosomal, F = 0):
zygotes at frequency q in Hardy–Weinberg proportions p², 2pq, q² are selected with
fitnesses 1, 1-hs, 1-s, giving q_sel = (pq(1-hs) + q²(1-s))/w̄; gametes mutate,
q_gam = q_sel(1-nu) + (1-q_sel)·mu; the next zygotes are 2Ne genes drawn binomially,
q' = Binomial(2Ne, q_gam)/(2Ne). q is censused among zygotes, as everywhere in qhat.

All randomness comes from the one ``numpy.random.Generator`` passed in.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from infer.errors import InputError

__all__ = ["SimulationResult", "wright_fisher", "next_generation_expected"]

DEFAULT_PROBABILITIES = (0.025, 0.25, 0.5, 0.75, 0.975)
#: the most genes (2Ne) drawn per generation: counts stay exact in float64 (2**53)
MAX_GENES = 2**53


@dataclass(frozen=True)
class SimulationResult:
    """Recorded trajectories and their time-averaged summaries.

    Attributes
    ----------
    generations : numpy.ndarray
        Generation index of each recorded column (after burn-in, every ``thin``).
    trajectories : numpy.ndarray
        (replicates, recorded) frequencies of the deleterious allele among zygotes.
    mean, sd : float
        Mean and sd of q pooled over replicates and recorded generations.
    quantiles : dict[float, float]
        Pooled quantiles of q (probability -> value).
    mean_standard_error : float
        Monte Carlo standard error of ``mean`` from the spread of the replicate means
        (replicates are independent); NaN with a single replicate.
    replicate_means : numpy.ndarray
        Time average of each replicate.
    genes : int
        2Ne, the number of genes drawn each generation.
    """

    generations: np.ndarray
    trajectories: np.ndarray
    mean: float
    sd: float
    quantiles: dict
    mean_standard_error: float
    replicate_means: np.ndarray
    genes: int


def next_generation_expected(q, mu, s, h, nu=0.0):
    """Deterministic map q -> q_gam (selection on zygotes then mutation in gametes)."""
    q = np.asarray(q, dtype=float)
    p = 1 - q
    het, hom = p * q * (1 - h * s), q * q * (1 - s)
    w_bar = p * p + 2 * het + hom
    q_sel = (het + hom) / w_bar
    return q_sel * (1 - nu) + (1 - q_sel) * mu


def _check(name, value, low, high, *, low_open=False, integer=False):
    ok = np.isfinite(value) and (value > low if low_open else value >= low) and value <= high
    if integer:
        ok = ok and float(value) == int(value)
    if not ok:
        raise InputError(f"{value!r} is not allowed", field=name)


def wright_fisher(
    Ne,
    mu,
    s,
    h,
    nu=0.0,
    *,
    rng,
    replicates=100,
    generations=10_000,
    burn_in=1_000,
    thin=1,
    initial=None,
    probabilities=DEFAULT_PROBABILITIES,
    progress=None,
):
    """Simulate ``replicates`` independent Wright–Fisher populations.

    Parameters
    ----------
    Ne : float
        Effective size; 2Ne is rounded to whole genes (at least 1).
    mu, s, h, nu : float
        Forward mutation, selection, dominance and back mutation (docs/model.md, 'Life cycle').
    rng : numpy.random.Generator
        The only source of randomness.
    replicates, generations, burn_in, thin : int
        Populations simulated; generations run in total; generations dropped at the start;
        keep every ``thin``-th generation after burn-in.
    initial : float, optional
        Starting frequency of every replicate; default the deterministic equilibrium,
        reached by iterating the expected map from q = 0 (at most 1e5 generations).
    probabilities : sequence of float
        Probabilities of the pooled quantiles reported.
    progress : callable, optional
        Called as ``progress(done, generations)`` about a thousand times during the run.

    Returns
    -------
    SimulationResult
    """
    _check("Ne", Ne, 0, MAX_GENES / 2, low_open=True)
    _check("mu", mu, 0, 1)
    _check("s", s, 0, 1)
    _check("h", h, 0, 1)
    _check("nu", nu, 0, 1)
    _check("replicates", replicates, 1, 1e7, integer=True)
    _check("generations", generations, 1, 1e9, integer=True)
    _check("burn_in", burn_in, 0, generations - 1, integer=True)
    _check("thin", thin, 1, max(1, generations - burn_in), integer=True)
    genes = max(1, int(round(2 * Ne)))
    if initial is None:
        q = 0.0
        for _ in range(100_000):
            q_next = float(next_generation_expected(q, mu, s, h, nu))
            if abs(q_next - q) <= 1e-15:
                break
            q = q_next
        initial = q
    _check("initial", initial, 0, 1)
    q = np.full(int(replicates), float(initial))
    kept = np.arange(burn_in, generations, thin)
    traj = np.empty((int(replicates), kept.size))
    column = 0
    every = max(1, int(generations) // 1000)
    for generation in range(int(generations)):
        q = rng.binomial(genes, next_generation_expected(q, mu, s, h, nu)) / genes
        if column < kept.size and generation == kept[column]:
            traj[:, column] = q
            column += 1
        if progress is not None and (generation + 1) % every == 0:
            progress(generation + 1, int(generations))
    replicate_means = traj.mean(axis=1)
    se = (
        float(replicate_means.std(ddof=1) / np.sqrt(replicates)) if replicates > 1 else float("nan")
    )
    pooled = traj.ravel()
    quantiles = {float(p): float(np.quantile(pooled, p)) for p in probabilities}
    return SimulationResult(
        generations=kept,
        trajectories=traj,
        mean=float(pooled.mean()),
        sd=float(pooled.std()),
        quantiles=quantiles,
        mean_standard_error=se,
        replicate_means=replicate_means,
        genes=genes,
    )
