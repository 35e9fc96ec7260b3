"""The convergence loop on targets with known answers."""

import numpy as np

from infer.inference.sampling import SamplerSettings, run_to_convergence

MEAN = np.array([1.0, -2.0])
SD = np.array([0.5, 2.0])


def gaussian(z):
    ll = -0.5 * ((z - MEAN) / SD) ** 2
    return np.column_stack([ll.sum(axis=1), ll])


def start(rng, n):
    return rng.normal(size=(n, 2))


def test_recovers_gaussian_mean_and_sd_and_converges():
    # Closed form: independent normals; Monte Carlo error of a mean is sd/sqrt(ESS).
    run = run_to_convergence(gaussian, start, 2, np.random.default_rng(1))
    assert run.converged, f"a 2-d Gaussian must converge; messages: {run.messages}"
    # the stopping rule of DEVELOPERS.md, 'The sampler in one paragraph'
    assert np.all(run.ess_bulk >= 1000) and np.all(run.r_hat < 1.01), (
        f"converged needs bulk ESS >= 1000 and R-hat < 1.01; ESS {run.ess_bulk}, "
        f"R-hat {run.r_hat}")
    assert np.all(run.steps - run.burn_in > 50 * run.autocorr_time), (
        f"converged needs chains longer than 50 tau: {run.steps - run.burn_in} kept steps, "
        f"tau {run.autocorr_time}")
    flat = run.z.reshape(-1, 2)
    tolerance = 5 * SD / np.sqrt(run.ess_bulk)
    assert np.all(np.abs(flat.mean(axis=0) - MEAN) < tolerance), (
        f"sample mean {flat.mean(axis=0)} vs the target's {MEAN}: more than 5 Monte Carlo "
        f"standard errors {tolerance} apart")
    assert np.allclose(flat.std(axis=0), SD, rtol=0.05), (
        f"sample sd {flat.std(axis=0)} vs the target's {SD} (5 %)")
    # the per-observation blobs travel with their draws
    assert run.blobs.shape == run.z.shape, (
        f"one blob column per observation: blobs {run.blobs.shape}, draws {run.z.shape}")
    assert np.allclose(run.blobs[..., 0], -0.5 * ((run.z[..., 0] - MEAN[0]) / SD[0]) ** 2), (
        "blob 0 must be the first coordinate's log density at the draw it came with")


def test_same_seed_same_draws():
    a = run_to_convergence(gaussian, start, 2, np.random.default_rng(7))
    b = run_to_convergence(gaussian, start, 2, np.random.default_rng(7))
    assert np.array_equal(a.z, b.z), "the same seed must give the same draws"


def test_step_cap_is_reported():
    settings = SamplerSettings(first_block=100, max_steps=200, target_ess=1e9)
    run = run_to_convergence(gaussian, start, 2, np.random.default_rng(1), settings)
    assert not run.converged, "an ESS target of 1e9 cannot be met in 200 steps"
    assert run.steps == 200, f"the run must stop at max_steps = 200; ran {run.steps}"
    assert any("step cap" in m for m in run.messages), (
        f"the messages must say the step cap was reached: {run.messages}")


def test_ensembles_do_not_exchange_information():
    # Two ensembles started far apart on a bimodal target stay apart: a proposal within
    # one block never uses walkers of another block.
    def bimodal(z):
        lp = np.logaddexp(-0.5 * ((z[:, 0] - 10) / 0.5) ** 2, -0.5 * ((z[:, 0] + 10) / 0.5) ** 2)
        return lp[:, None]

    def apart(rng, n, state={"calls": 0}):  # noqa: B006 (the calls persist on purpose)
        centre = 10.0 if state["calls"] % 2 == 0 else -10.0
        state["calls"] += 1
        return centre + 0.1 * rng.normal(size=(n, 1))

    settings = SamplerSettings(ensembles=2, first_block=300, max_steps=300)
    run = run_to_convergence(bimodal, apart, 1, np.random.default_rng(2), settings)
    assert np.all(run.z[0] > 0) and np.all(run.z[1] < 0), (
        "ensemble 0 (started at +10) and ensemble 1 (at -10) must stay on their own modes; "
        f"ensemble 0 reached {run.z[0].min():.3g}, ensemble 1 reached {run.z[1].max():.3g}")
    assert not run.converged, "two ensembles on different modes must not count as converged"
    assert run.r_hat[0] > 1.5, f"R-hat must flag the two modes; got {run.r_hat[0]}"
