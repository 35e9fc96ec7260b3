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


def test_stuck_threshold_is_half_the_chi_square_quantile():
    # Twice the log-density drop from a regular mode is chi-square(ndim) distributed
    # (common practice; Wilks 1938, Ann. Math. Statist. 9:60), checked with scipy.stats.
    from scipy import stats

    from infer.inference.sampling import stuck_threshold

    for ndim in (1, 3, 5, 12):
        expected = max(10.0, stats.chi2.ppf(1 - 1e-6, ndim) / 2)
        assert np.isclose(stuck_threshold(ndim), expected, rtol=1e-10), (
            f"ndim {ndim}: threshold {stuck_threshold(ndim)} vs chi2 quantile / 2 {expected}")


def test_stuck_walkers_are_those_far_below_their_own_ensemble():
    from infer.inference.sampling import stuck_walkers

    rng = np.random.default_rng(3)
    lp = -0.5 * rng.chisquare(2, size=(2, 50, 10))  # (ensembles, steps, walkers)
    lp[0, :, 3] -= 40.0
    lp[1] -= 100.0  # a whole ensemble lower is not stuck relative to itself
    stuck = stuck_walkers(lp, 2)
    assert stuck[0, 3] and stuck.sum() == 1, f"only walker 3 of ensemble 0 is stuck: {stuck}"


def _plateau(z):
    # a standard normal mode, and far away behind a gap of zero density a flat plateau
    # 40 log units lower: walkers that start there cannot reach the mode by ensemble moves
    x = z[:, 0]
    lp = np.where(np.abs(x) < 8, -0.5 * x**2, -np.inf)
    lp = np.where((x >= 20) & (x <= 30), -40.0, lp)
    return lp[:, None]


def _some_on_the_plateau(rng, n):
    x = rng.normal(size=n)
    x[: max(1, n // 8)] = rng.uniform(21, 29, size=max(1, n // 8))
    return x[:, None]


def test_walkers_stuck_on_a_far_plateau_are_moved_not_averaged_in():
    run = run_to_convergence(_plateau, _some_on_the_plateau, 1, np.random.default_rng(5))
    flat = run.z.ravel()
    # (a few escape by a lucky differential-evolution jump; the rest must be moved)
    assert run.moved_walkers > 0, "6 walkers per ensemble started on the plateau; none moved"
    assert np.all(flat < 8), (
        f"{np.mean(flat >= 8):.2%} of draws sit on a plateau holding e^-40 of the mass")
    assert run.converged, f"the run must converge once they are moved: {run.messages}"
    assert abs(flat.mean()) < 5 / np.sqrt(run.ess_bulk[0]) and abs(flat.std() - 1) < 0.05, (
        f"mean {flat.mean():.3f}, sd {flat.std():.3f}: the mode is a standard normal")


def test_tau_must_be_stable_between_checks():
    # The run never stops at its first check of the sampling phase: a stable
    # autocorrelation time needs two estimates (the first block is check_block steps).
    settings = SamplerSettings(target_ess=10, tau_multiple=1)
    run = run_to_convergence(gaussian, start, 2, np.random.default_rng(1), settings)
    assert run.converged
    assert run.steps - run.exploration_steps >= 2 * settings.check_block, (
        f"stopped after {run.steps - run.exploration_steps} sampling steps: at the first "
        "check, before a second estimate of tau could confirm the first")


def test_a_walker_that_never_moves_does_not_crash_the_run():
    # One coordinate of the target is a point mass for walkers that start on it: every
    # proposal off it is refused, emcee's tau estimate is then NaN (0/0 autocorrelation).
    from infer.inference.sampling import _autocorr_times
    from infer.inference.emcee_loader import load_emcee

    chain = np.random.default_rng(1).normal(size=(200, 8, 2))
    chain[:, 3, 1] = 0.5  # walker 3 never moves in coordinate 1
    tau = _autocorr_times(load_emcee(), chain)
    assert np.all(np.isfinite(tau)), f"tau must stay finite: {tau}"
