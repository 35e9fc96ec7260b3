"""Simulation-based calibration, small run (slow; the full run is
benchmarks/calibration.py). Talts et al. 2018, arXiv:1804.06788: for a correct posterior
the posterior distribution function at a prior-drawn truth is uniform, so central
intervals cover at their nominal rate."""

from pathlib import Path

import numpy as np
import pytest

from infer.inference.calibration import (
    coverage,
    draw_truth,
    posterior_cdf_at_truth,
    simulate_study,
    uniformity_p_value,
)
from infer.inference.grid import grid_posterior
from infer.model.posterior import Model
from infer.files.study import load_study

DEMO = Path(__file__).resolve().parents[2] / "data_demo"


def test_rank_helpers_on_known_inputs():
    # closed forms: a truth below every draw has rank 0, above every draw rank 1
    assert posterior_cdf_at_truth(np.arange(10.0), -1) == 0.0
    assert posterior_cdf_at_truth(np.arange(10.0), 100) == 1.0
    assert posterior_cdf_at_truth(np.arange(10.0), 4.0) == pytest.approx(0.45)
    u = np.random.default_rng(0).uniform(size=20_000)
    assert coverage(u, 0.9) == pytest.approx(0.9, abs=0.01)
    assert uniformity_p_value(u) > 0.001
    assert uniformity_p_value(u ** 2) < 1e-6


@pytest.mark.slow
@pytest.mark.parametrize("name", ["island-dominant", "valley-recessive", "northholm-x-linked"])
def test_demo_studies_are_calibrated(name):
    study = load_study(DEMO / f"{name}.toml")
    model = Model(study)
    rng = np.random.default_rng(1804)
    ranks = {n: [] for n in model.free}
    for _ in range(100):
        truth = draw_truth(model, rng)
        grid = grid_posterior(Model(simulate_study(study, truth, rng)), points=101)
        for n in model.free:
            ranks[n].append(grid.cdf_at(n, truth[n]))
    for n, u in ranks.items():
        u = np.array(u)
        # clear miscalibration only: binomial sd of a 95 % coverage over 100 replicates
        # is 2.2 points
        assert coverage(u, 0.95) >= 0.88, (n, coverage(u, 0.95))
        assert coverage(u, 0.5) == pytest.approx(0.5, abs=0.15), (n, coverage(u, 0.5))
        assert uniformity_p_value(u) > 0.001, (n, np.histogram(u, bins=10)[0])
