"""Tests of ``qhat batch``: infer/jobs/batch/ (maths), infer/files/loci.py, the command.

References outside the code under test:

* the life-cycle recursion of docs/model.md, 'Life cycle', iterated to its fixed point, and
  ``infer.core.balance.q_hat`` (exact balance, separate implementation);
* scipy.integrate.quad of the same one-dimensional posterior (mu integrated by an
  inner quad over its log-normal), and an emcee run of the joint (ln s_het, z) posterior
  (Foreman-Mackey et al. 2013, PASP 125:306) — neither uses the lattice rule;
* the Poisson approximation k ~ Poisson(n·mu/s_het) of Cassa et al. 2017 (Nat. Genet.
  49:806), computed with scipy.stats.poisson on an independent grid;
* simulated loci with known generating values (benchmarks/make_batch_demo.py) for the
  empirical-Bayes recovery and interval coverage (Cook, Gelman & Rubin 2006 /
  Talts et al. 2018: a correct posterior's intervals cover the truth at their level
  when the truth is drawn from the prior).
"""

from __future__ import annotations

import csv
import importlib.util
import json
import math
import os
from pathlib import Path

import numpy as np
import pytest
from scipy import integrate, optimize, special, stats

from infer.jobs.batch import run as batch
from infer.cli import main
from infer.reporting.folder import MARKER

ROOT = Path(__file__).resolve().parents[3]
_spec = importlib.util.spec_from_file_location("make_batch_demo",
                                               ROOT / "benchmarks" / "make_batch_demo.py")
demo = importlib.util.module_from_spec(_spec)
_spec.loader.exec_module(demo)

Z975 = stats.norm.ppf(0.975)


def _posterior_quad(k, n, mu, sigma, s_low=1e-5, s_high=0.5):
    """Normalised posterior density of u = ln s_het by nested scipy quad (log-uniform prior).

    p(u) ∝ ∫ Binom(k; n, mu(z)/(e^u (1+mu(z)))) φ(z) dz, ln mu(z) = ln mu + sigma·z,
    z cut at ±6 (as the lattice rule); q ≥ 1 gives probability [k = n].
    """
    log_choose = math.lgamma(n + 1) - math.lgamma(k + 1) - math.lgamma(n - k + 1)

    def log_binom(q):   # the binomial log pmf, written out (fast inside quad)
        return log_choose + (k * math.log(q) if k else 0.0) + (n - k) * math.log1p(-q)

    log_peak = log_binom(k / n) if 0 < k < n else 0.0
    root_2pi = math.sqrt(2 * math.pi)

    def likelihood(u):
        def inner(z):
            m = mu * math.exp(sigma * z)
            q = m / (math.exp(u) * (1 + m))
            density = math.exp(-0.5 * z * z) / root_2pi
            if q >= 1:
                return float(k == n) * density
            return math.exp(log_binom(q) - log_peak) * density
        if sigma == 0:
            return inner(0.0) * root_2pi
        centre = (math.log(max(k, 0.5) / n) + u - math.log(mu)) / sigma
        pts = [c for c in (centre,) if -6 < c < 6]
        return integrate.quad(inner, -6, 6, points=pts or None, limit=200,
                              epsabs=0, epsrel=1e-10)[0]

    u0, u1 = math.log(s_low), math.log(s_high)
    u_mle = math.log(mu / max(k / n, 1e-12))
    pts = [u_mle] if u0 < u_mle < u1 else None
    total = integrate.quad(likelihood, u0, u1, points=pts, limit=400, epsrel=1e-10)[0]
    return likelihood, total, (u0, u1, pts)


def _run_one(k, n, mu, sigma, settings=None, prior="log-uniform"):
    settings = settings or batch.BatchSettings()
    result = batch.analyse([k], [n], [mu], [sigma], settings, prior=prior)
    return {name: values[0] for name, values in result.loci.items()}


# ------------------------------------------------------------------ balance convention

def test_balance_frequency_is_the_fixed_point_of_the_life_cycle():
    """Derived: q_hat = mu/(s_het(1+mu)) is the fixed point of docs/model.md, 'Life cycle' with
    h = 1/2, s = 2 s_het, F = nu = 0 (iterate q' = q_sel + (1 - q_sel)·mu); it also equals
    infer.core.balance.q_hat (independent implementation)."""
    from infer.core.balance import q_hat

    mu = np.array([1e-6, 3e-6, 1e-4, 2e-5])
    s_het = np.array([1e-3, 0.05, 0.3, 2e-3])
    q = np.full(mu.shape, 1e-3)
    s, h = 2 * s_het, 0.5
    for _ in range(30_000):   # converges at rate ~s_het per generation
        p = 1 - q
        w = p * p + 2 * p * q * (1 - h * s) + q * q * (1 - s)
        q_sel = (p * q * (1 - h * s) + q * q * (1 - s)) / w
        q = q_sel + (1 - q_sel) * mu
    np.testing.assert_allclose(batch.balance_frequency(mu, s_het), q, rtol=1e-9,
                               err_msg="not the fixed point of the life cycle")
    np.testing.assert_allclose(batch.balance_frequency(mu, s_het), q_hat(mu, s, h), rtol=1e-12,
                               err_msg="differs from infer.core.balance.q_hat at h = 1/2")
    assert np.isnan(batch.balance_frequency(0.2, 0.1)), (  # mu' > s_het: no interior root
        "mu/(1+mu) > s_het has no interior balance and must give NaN")


# ------------------------------------------------------------ quadrature vs references

@pytest.mark.parametrize("k, n, mu, sigma", [
    (12, 120_000, 3e-6, 0.0),       # point mu, moderate count
    (12, 120_000, 3e-6, 0.3),       # uncertain mu
    (0, 100_000, 2e-6, 0.3),        # zero observed
    (850, 110_000, 5e-6, 0.25),     # many copies: likelihood narrower than the mu prior
    (5, 10, 0.2, 0.5),              # mu'·e^(6 sigma) > 1: kernel nodes past mu = infinity
])
def test_posterior_matches_scipy_quad(k, n, mu, sigma):
    """The grid median splits the nested-quad posterior mass in half (to 5e-4), the lower
    2.5 % point too, and the posterior mean of s_het agrees to 0.1 %
    (scipy.integrate.quad, an independent adaptive rule; measured errors ~1e-4)."""
    out = _run_one(k, n, mu, sigma)
    likelihood, total, (u0, u1, pts) = _posterior_quad(k, n, mu, sigma)
    below = integrate.quad(likelihood, u0, math.log(out["median"]), limit=400, epsrel=1e-10)[0]
    assert abs(below / total - 0.5) < 5e-4, (
        f"quad puts {below / total:.5f} of the mass below the grid median, not 0.5")
    mean = integrate.quad(lambda u: math.exp(u) * likelihood(u), u0, u1, points=pts, limit=400,
                          epsrel=1e-10)[0] / total
    assert out["mean"] == pytest.approx(mean, rel=1e-3), (
        f"grid mean {out['mean']:.6g}, quad mean {mean:.6g}")
    lower = integrate.quad(likelihood, u0, math.log(out["lower"]), limit=400, epsrel=1e-10)[0]
    assert abs(lower / total - 0.025) < 5e-4, (
        f"quad puts {lower / total:.5f} of the mass below the grid 2.5 % point")


@pytest.mark.slow
@pytest.mark.parametrize("k, n, mu, sigma", [(12, 120_000, 3e-6, 0.3), (400, 120_000, 4e-6, 0.3),
                                             (3, 90_000, 1e-6, 0.0)])
def test_median_matches_emcee(k, n, mu, sigma):
    """emcee on the joint (ln s_het, z) posterior — mu sampled, not integrated by a rule —
    gives the same median within 2 % (the acceptance criterion of issue 6)."""
    import emcee

    u0, u1 = math.log(1e-5), math.log(0.5)

    def log_prob(p):
        u, z = p[:, 0], p[:, 1]
        m = mu * np.exp(sigma * z)
        q = m / (np.exp(u) * (1 + m))
        inside = (u > u0) & (u < u1) & (q < 1)
        q = np.where(inside, q, 0.5)
        lp = special.xlogy(k, q) + special.xlog1py(n - k, -q) - 0.5 * z * z   # binomial kernel
        return np.where(inside, lp, -np.inf)

    rng = np.random.default_rng(7)
    walkers = 32
    centre = math.log(mu / max(k, 0.5) * n)
    start = np.column_stack([np.clip(centre + 0.1 * rng.normal(size=walkers), u0 + 0.1, u1 - 0.1),
                             0.1 * rng.normal(size=walkers)])
    sampler = emcee.EnsembleSampler(walkers, 2, log_prob, vectorize=True)
    sampler._random = np.random.RandomState(np.random.MT19937(int(rng.integers(2**32))))
    sampler.run_mcmc(start, 5000)
    chain = sampler.get_chain(discard=1000, flat=True)
    tau = np.max(sampler.get_autocorr_time(discard=1000, tol=0))
    assert tau < 80, f"emcee autocorrelation time {tau:.1f}: fewer than 50 τ kept"
    emcee_median = math.exp(np.median(chain[:, 0]))
    out = _run_one(k, n, mu, sigma)
    assert out["median"] == pytest.approx(emcee_median, rel=0.02), (
        f"grid median {out['median']:.5g}, emcee median {emcee_median:.5g}")


def test_poisson_approximation_agrees_for_rare_alleles():
    """Cassa et al. 2017 (Nat. Genet. 49:806) model counts as Poisson(n·mu/s_het); for rare
    alleles (q < 1e-3) the binomial balance model gives the same posterior median (0.5 %).
    Reference posterior: scipy.stats.poisson on an independent 20,001-point grid."""
    u = np.linspace(math.log(1e-5), math.log(0.5), 20_001)
    for k, n, mu in [(5, 120_000, 2e-6), (40, 100_000, 4e-6), (0, 120_000, 1e-6)]:
        density = stats.poisson.pmf(k, n * mu / np.exp(u))
        cdf = integrate.cumulative_trapezoid(density, u, initial=0)
        median = math.exp(np.interp(0.5, cdf / cdf[-1], u))
        got = _run_one(k, n, mu, 0.0)["median"]
        assert got == pytest.approx(median, rel=5e-3), (
            f"k={k}, n={n}: binomial median {got:.5g}, Poisson reference {median:.5g}")


def test_results_do_not_depend_on_chunking():
    """Each locus's arithmetic is row-local: chunk sizes 37 and 1000 give identical bits,
    also with the empirical-Bayes prior (fitted values rounded to 10 digits)."""
    data = demo.simulate(300, 11)
    args = (data["observed"], data["sampled"], data["mu"],
            batch.mu_sigma_from_interval(data["mu_lower"], data["mu_upper"]))
    for prior in ("log-uniform", "empirical"):
        a = batch.analyse(*args, batch.BatchSettings(), prior=prior, chunk_size=37)
        b = batch.analyse(*args, batch.BatchSettings(), prior=prior, chunk_size=1000)
        assert a.prior == b.prior, f"{prior}: chunk sizes 37 and 1000 fit {a.prior} vs {b.prior}"
        for name in a.loci:
            np.testing.assert_array_equal(a.loci[name], b.loci[name],
                                          err_msg=f"{prior}: {name} depends on the chunk size")


def test_a_locus_does_not_depend_on_its_neighbours_mu_uncertainty():
    """Row-locality (module docstring): k = n = 1000 at mu = 1e-6 (log L ~ -2300 over the
    grid, far below its q = 1 value) gives the same bits alone as beside a locus with an
    uncertain mu, whose kernel widens the shared lattice (it once overflowed to NaN).
    ``expected`` is left out: it is read off every second point of that shared lattice."""
    alone = batch.analyse([1000], [1000], [1e-6], [0.0], batch.BatchSettings())
    beside = batch.analyse([1000, 3], [1000, 1000], [1e-6, 1e-6], [0.0, 0.3],
                           batch.BatchSettings())
    assert beside.settings.half_width > alone.settings.half_width == 0, (
        "the uncertain neighbour should widen the shared kernel")
    for name, values in alone.loci.items():
        if name != "expected":
            np.testing.assert_array_equal(beside.loci[name][:1], values,
                                          err_msg=f"{name} changes beside another locus")
    assert np.isfinite(alone.loci["median"][0]) and not alone.loci["flags"][0] & 16, (
        "k = n = 1000 lost its likelihood (NaN or flag no-likelihood)")


def test_mu_sigma_from_interval():
    """Common practice: a log-normal's central 95 % interval is median·exp(±1.96 sigma)."""
    sigma = batch.mu_sigma_from_interval([1e-6, np.nan], [4e-6, np.nan], 0.95)
    np.testing.assert_allclose(sigma, [math.log(4) / (2 * Z975), 0.0],
                               err_msg="sigma of ln mu is not ln(U/L) / (2 z)")


def test_flags():
    settings = batch.BatchSettings()
    zero = _run_one(0, 120_000, 2e-6, 0.0, settings)
    assert zero["flags"] & 1, f"k = 0 lacks flag zero-observed: {zero['flags']}"
    assert zero["flags"] & 4, (  # log-uniform prior: the upper end reaches s_high
        f"k = 0 lacks flag at-prior-bound: {zero['flags']}")
    high = _run_one(30_000, 100_000, 1e-6, 0.0, settings)   # q = 0.3 needs s_het ~ 3e-6
    assert high["flags"] & 2 and high["flags"] & 4, (
        f"q = 0.3 lacks frequency-too-high or at-prior-bound: {high['flags']}")
    sharp = _run_one(20_000, 1_000_000, 1e-5, 0.0, settings)  # sd of ln s ~ 0.007 < 2Δ
    assert sharp["flags"] & 8, f"a posterior narrower than 2 grid steps lacks flag 8: {sharp}"
    plain = _run_one(20, 120_000, 3e-6, 0.3, settings)
    assert plain["flags"] == 0, f"an ordinary locus is flagged {plain['flags']}"


# ------------------------------------------------------------ empirical Bayes recovery

def test_fit_matches_direct_optimisation():
    """The spline-of-the-surface optimum equals a direct scipy.optimize maximisation of the
    summed log marginal computed from the per-locus grids (derived: same objective)."""
    data = demo.simulate(400, 5)
    sigma = batch.mu_sigma_from_interval(data["mu_lower"], data["mu_upper"])
    settings = batch.with_half_width(batch.BatchSettings(), sigma)
    like, scale = batch.likelihood_grid(data["observed"], data["sampled"], data["mu"], sigma,
                                        settings)
    u = settings.log_s
    weights = np.full(u.size, settings.step)
    weights[[0, -1]] /= 2

    def negative(theta):
        prior = weights * stats.norm.pdf(u, theta[0], math.exp(theta[1]))
        return -np.sum(np.log(like @ (prior / prior.sum())) + scale)

    direct = optimize.minimize(negative, [math.log(0.01), 0.3], method="Nelder-Mead",
                               options={"xatol": 1e-7, "fatol": 1e-9})
    fitted = batch.fit_log_normal_prior(batch.log_marginal_surface(like, scale, settings), settings)
    assert math.log(fitted.prior.median) == pytest.approx(direct.x[0], abs=3e-3), (
        f"ln median {math.log(fitted.prior.median):.5f} vs Nelder-Mead {direct.x[0]:.5f}")
    assert math.log(fitted.prior.sigma) == pytest.approx(direct.x[1], abs=3e-3), (
        f"ln sigma {math.log(fitted.prior.sigma):.5f} vs Nelder-Mead {direct.x[1]:.5f}")
    assert fitted.log_marginal == pytest.approx(-direct.fun, abs=1e-2), (
        f"log marginal {fitted.log_marginal:.4f} vs direct {-direct.fun:.4f}")


@pytest.mark.slow
def test_recovery_and_coverage_on_simulated_loci():
    """3,000 simulated genes (benchmarks/make_batch_demo.py generating values): the fitted
    log-normal lands near median 0.01, sigma 1.5, and the per-locus 95 % intervals cover
    the true s_het at 95 % ± 3 %; 80 % intervals at 80 % ± 3 %."""
    g = demo.GENERATING
    data = demo.simulate(3000, 123)
    sigma = batch.mu_sigma_from_interval(data["mu_lower"], data["mu_upper"])
    result = batch.analyse(data["observed"], data["sampled"], data["mu"], sigma,
                           batch.BatchSettings(), prior="empirical")
    fit = result.fitted
    assert abs(math.log(fit.prior.median / g["s_het_median"])) < max(4 * fit.se_log_median, 0.08), (
        f"fitted median {fit.prior.median:.4g}, generating {g['s_het_median']}")
    assert fit.prior.sigma == pytest.approx(g["s_het_sigma"], rel=0.06), (
        f"fitted sigma {fit.prior.sigma:.4g}, generating {g['s_het_sigma']}")
    truth = data["s_het"]
    cover = np.mean((result.loci["lower"] <= truth) & (truth <= result.loci["upper"]))
    assert abs(cover - 0.95) < 0.03, f"95 % intervals cover the truth for {cover:.3f}"
    narrow = batch.analyse(data["observed"], data["sampled"], data["mu"], sigma,
                           batch.BatchSettings(interval=0.8), prior=fit.prior)
    cover80 = np.mean((narrow.loci["lower"] <= truth) & (truth <= narrow.loci["upper"]))
    assert abs(cover80 - 0.80) < 0.03, f"80 % intervals cover the truth for {cover80:.3f}"


# ------------------------------------------------------------------ command line

def _write_demo(path, loci=200, seed=3):
    demo.write_csv(path, demo.simulate(loci, seed))
    return path


def _leftovers(folder):
    return [p.name for p in Path(folder).iterdir() if p.name.startswith(".")]


def test_cli_writes_the_report_folder(tmp_path, capsys):
    """The folder holds exactly the documented files; each PNG is the size its figure was
    built at (6 x 4 and 6 x 5 inches at 110 dpi); the report is marked a research
    estimate. What the figures draw is tested in tests/reporting/test_batch_report.py."""
    from matplotlib.image import imread

    source = _write_demo(tmp_path / "loci.csv")
    out = tmp_path / "report"
    status = main(["batch", str(source), "--out", str(out), "--prior", "empirical"])
    printed = capsys.readouterr()
    assert status == 0, printed.err
    names = sorted(p.name for p in out.iterdir())
    assert names == sorted([MARKER, "loci.csv", "medians.png", "observed_vs_expected.png",
                            "prior.png", "report.html", "report.md", "summary.json",
                            "timing.json"]), (
        f"report folder holds {names}")
    sizes = {"medians.png": (440, 660), "observed_vs_expected.png": (550, 660),
             "prior.png": (440, 660)}
    for name, shape in sizes.items():
        png = out / name
        assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n", f"{name} is not a PNG file"
        image = imread(png)
        assert image.shape[:2] == shape, f"{name} is {image.shape[:2]} pixels, want {shape}"
        assert image[..., :3].std() > 0.05, f"{name} looks blank"
    summary = json.loads((out / "summary.json").read_text())
    assert "not a clinical or genetic-counselling result" in summary["caution"], (
        f"caution {summary['caution']!r}")
    assert summary["prior"]["fitted"]["sigma"] > 0, f"fitted prior {summary['prior']['fitted']}"
    assert summary["files"] == ["loci.csv", "summary.json", "timing.json", "report.md",
                                "report.html", "medians.png", "observed_vs_expected.png",
                                "prior.png"], (
        summary["files"])
    with open(out / "loci.csv", newline="") as handle:
        rows = list(csv.DictReader(handle))
    assert len(rows) == 200 and rows[0]["locus"] == "GENE0001", (
        f"{len(rows)} rows, first locus {rows[0]['locus']!r}")
    first = {key: float(rows[0][f"s_het_{key}"]) for key in ("lower", "median", "upper")}
    assert first["lower"] < first["median"] < first["upper"], f"first locus interval {first}"
    assert "research estimate" in printed.out.lower(), f"summary line {printed.out!r}"
    # never overwrite without --force
    assert main(["batch", str(source), "--out", str(out)]) == 2, "an existing folder was replaced"
    assert "--force" in capsys.readouterr().err, "the refusal does not mention --force"
    assert main(["batch", str(source), "--out", str(out), "--force", "--quiet"]) == 0, (
        capsys.readouterr().err)
    assert _leftovers(tmp_path) == [], f"left behind: {_leftovers(tmp_path)}"


def _close(a, b) -> bool:
    """Equal structures, floats within a relative 1e-10."""
    if isinstance(a, dict) and isinstance(b, dict):
        return a.keys() == b.keys() and all(_close(a[k], b[k]) for k in a)
    if isinstance(a, list) and isinstance(b, list):
        return len(a) == len(b) and all(_close(x, y) for x, y in zip(a, b, strict=True))
    if isinstance(a, float) and isinstance(b, float):
        return math.isclose(a, b, rel_tol=1e-10, abs_tol=1e-300)
    return a == b


def _comparable(folder):
    summary = json.loads((Path(folder) / "summary.json").read_text())
    summary.pop("execution")
    summary["settings"].pop("chunk_size")
    return (Path(folder) / "loci.csv").read_bytes(), summary


@pytest.mark.slow
def test_jobs_two_equals_jobs_one(tmp_path, monkeypatch):
    import infer.commands.batch

    # 600 loci would run in one process whatever --jobs says: start the workers anyway
    monkeypatch.setattr(infer.commands.batch, "SERIAL_WORK", 0.0)
    source = _write_demo(tmp_path / "loci.csv", loci=600)
    one, two = tmp_path / "one", tmp_path / "two"
    assert main(["batch", str(source), "--out", str(one), "--prior", "empirical", "--quiet",
                 "--chunk-size", "100"]) == 0, "the one-process run failed"
    assert main(["batch", str(source), "--out", str(two), "--prior", "empirical", "--quiet",
                 "--chunk-size", "100", "--jobs", "2"]) == 0, "the --jobs 2 run failed"
    assert _comparable(one) == _comparable(two), "--jobs 2 gives other results than --jobs 1"


@pytest.mark.slow
def test_drift_jobs_two_equals_jobs_one(tmp_path):
    """Drift model with the empirical prior (coarse log-likelihoods kept on disk between the
    passes): the same chunks in 2 processes give the same bytes as in 1."""
    source = _write_demo(tmp_path / "loci.csv", loci=40)
    common = ["--model", "drift", "--Ne", "20000", "--prior", "empirical", "--quiet",
              "--chunk-size", "10", "--grid-points", "120"]
    one, two = tmp_path / "one", tmp_path / "two"
    assert main(["batch", str(source), "--out", str(one), *common]) == 0, "drift run failed"
    assert main(["batch", str(source), "--out", str(two), *common, "--jobs", "2"]) == 0, (
        "drift run with --jobs 2 failed")
    assert _comparable(one) == _comparable(two), "drift: --jobs 2 differs from --jobs 1"


@pytest.mark.slow
def test_dask_local_cluster_equals_local_run(tmp_path):
    """A real dask.distributed LocalCluster (2 worker processes) gives exactly the local result."""
    distributed = pytest.importorskip("dask.distributed")
    source = _write_demo(tmp_path / "loci.csv", loci=600)
    local, remote = tmp_path / "local", tmp_path / "remote"
    assert main(["batch", str(source), "--out", str(local), "--prior", "empirical", "--quiet",
                 "--chunk-size", "100"]) == 0, "the local run failed"
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, dashboard_address=None,
                                  processes=True) as cluster:
        assert main(["batch", str(source), "--out", str(remote), "--prior", "empirical",
                     "--quiet", "--chunk-size", "100", "--scheduler",
                     cluster.scheduler_address]) == 0, "the dask run failed"
    local_csv, local_summary = _comparable(local)
    remote_csv, remote_summary = _comparable(remote)
    assert local_csv == remote_csv, "dask loci.csv differs from the local run"
    # The prior fit's curvature goes through a BLAS matrix product, and a dask worker
    # (one thread) may round its last bit differently from a multi-threaded BLAS here.
    assert _close(local_summary, remote_summary), (
        "dask summary.json differs from the local run beyond the last digits")


HEADER = "locus,observed,sampled,mu,mu_lower,mu_upper\n"
GOOD = "GENE0001,3,1000,1e-6,5e-7,2e-6\n"


@pytest.mark.parametrize("text, where", [
    ("", "empty"),
    ("locus,observed,mu\nG1,1,1e-6\n", "line 1"),
    (HEADER + GOOD + "GENE0002,abc,1000,1e-6,,\n", "line 3, column observed"),
    (HEADER + GOOD + "GENE0002,-1,1000,1e-6,,\n", "line 3, column observed"),
    (HEADER + GOOD + "GENE0002,1001,1000,1e-6,,\n", "line 3, column observed"),
    (HEADER + GOOD + "GENE0001,1,1000,1e-6,,\n", "line 3, column locus"),
    (HEADER + GOOD + "GENE0002,1,1000,nan,,\n", "line 3, column mu"),
    (HEADER + GOOD + "\n# note\nGENE0002,1,1000,1e-6,5e-7,\n", "line 5, column mu_lower"),
    (HEADER + GOOD + "GENE0002,1,1000\n", "line 3"),
    (HEADER + GOOD + "GENE0002,1.5,1000,1e-6,,\n", "line 3, column observed"),
    (HEADER + GOOD + "GENE0002,1,1000,1.5,,\n", "line 3, column mu"),
    (HEADER, "no usable loci"),
])
def test_bad_csv_exits_2_with_one_line_and_writes_nothing(tmp_path, capsys, text, where):
    source = tmp_path / "bad.csv"
    source.write_text(text)
    out = tmp_path / "out"
    assert main(["batch", str(source), "--out", str(out)]) == 2, "a bad file must exit 2"
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and err.startswith("qhat: error: "), f"stderr {err!r}"
    assert str(source) in err and where in err, f"{err!r} should name the file and {where!r}"
    assert not out.exists() and _leftovers(tmp_path) == [], "a bad file left files behind"


def test_skip_bad_rows_lists_each_one(tmp_path, capsys):
    source = tmp_path / "some_bad.csv"
    source.write_text(HEADER + GOOD + "GENE0002,abc,1000,1e-6,,\nGENE0003,2,1000,2e-6,,\n"
                      "GENE0004,5,4,1e-6,,\n")
    out = tmp_path / "out"
    assert main(["batch", str(source), "--out", str(out)]) == 2, "bad rows must exit 2"
    err = capsys.readouterr().err
    assert "1 more bad row" in err, f"the count of further bad rows is missing: {err!r}"
    assert main(["batch", str(source), "--out", str(out), "--skip-bad-rows", "--quiet"]) == 0, (
        "--skip-bad-rows should run")
    err = capsys.readouterr().err
    assert "line 3, column observed" in err and "line 5, column observed" in err, (
        f"each skipped row should be listed: {err!r}")
    skipped = json.loads((out / "summary.json").read_text())["input"]["skipped_rows"]
    assert [(s["line"], s["column"]) for s in skipped] == [(3, "observed"), (5, "observed")], (
        f"summary.json skipped_rows {skipped}")
    with open(out / "loci.csv", newline="") as handle:
        rows = list(csv.DictReader(handle))
    assert [r["locus"] for r in rows] == ["GENE0001", "GENE0003"], (
        f"loci.csv keeps {[r['locus'] for r in rows]}")


@pytest.mark.parametrize("options, option", [
    (["--model", "drift"], "--Ne"),
    (["--s-low", "0.6"], "--s-low"),
    (["--s-high", "0.9"], "--s-high"),
    (["--interval", "1.2"], "--interval"),
    (["--jobs", "0"], "--jobs"),
    (["--scheduler", "tcp://127.0.0.1:1", "--jobs", "2"], "--jobs"),
])
def test_bad_options_exit_2(tmp_path, capsys, options, option):
    source = _write_demo(tmp_path / "loci.csv", loci=5)
    assert main(["batch", str(source), "--out", str(tmp_path / "o"), *options]) == 2, (
        f"{options} must exit 2")
    err = capsys.readouterr().err
    assert err.startswith("qhat: error: " + option) and err.count("\n") == 1, (
        f"want one line naming {option}, got {err!r}")


def test_locus_names_never_become_paths(tmp_path):
    source = tmp_path / "odd.csv"
    source.write_text(HEADER + "../../escape,3,1000,1e-6,,\n/etc/passwd,1,1000,1e-6,,\n")
    out = tmp_path / "out"
    assert main(["batch", str(source), "--out", str(out), "--quiet"]) == 0, "odd names must run"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["odd.csv", "out"], (
        f"a locus name became a path: {sorted(p.name for p in tmp_path.iterdir())}")
    assert len(list(out.iterdir())) == 9, f"report holds {sorted(os.listdir(out))} (8 + {MARKER})"


def test_demo_file_is_the_documented_simulation(tmp_path):
    """data_demo/batch_loci.csv is regenerated byte for byte by the generator script."""
    again = tmp_path / "again.csv"
    demo.write_csv(again, demo.simulate(demo.GENERATING["loci"], demo.GENERATING["seed"]))
    assert again.read_bytes() == (ROOT / "data_demo" / "batch_loci.csv").read_bytes(), (
        "data_demo/batch_loci.csv is not what benchmarks/make_batch_demo.py writes")


# ------------------------------------------------------------------ drift model

def test_drift_model_approaches_deterministic_for_large_Ne():
    """Derived: as Ne·s_het grows, Wright's density concentrates at the deterministic
    balance, so the drift posterior of a strongly selected locus tends to the
    deterministic one (Ne = 1e6: 4·Ne·s_het ≥ 4e4 over the interval)."""
    settings = batch.BatchSettings(model="drift", Ne=1e6, nu=1e-8, grid_points=200,
                                   s_low=1e-3, s_high=0.5)
    deterministic = batch.BatchSettings(grid_points=200, s_low=1e-3, s_high=0.5)
    drift = _run_one(20, 120_000, 5e-6, 0.0, settings)
    plain = _run_one(20, 120_000, 5e-6, 0.0, deterministic)
    assert drift["median"] == pytest.approx(plain["median"], rel=0.02), (
        f"drift median {drift['median']:.5g}, deterministic {plain['median']:.5g}")


def test_drift_likelihood_matches_direct_integral():
    """The drift likelihood of one grid node equals scipy quad of C(n,k) x^k (1-x)^(n-k)
    times Wright's density φ ∝ x^(4Ne·mu-1)(1-x)^(4Ne·nu-1) exp(-4Ne·s_het·x)
    (Wright 1931; h = 1/2 so the exponent is -2Ne·s·x with s = 2 s_het)."""
    Ne, mu, nu, k, n = 1e4, 2e-6, 1e-8, 3, 5000
    settings = batch.BatchSettings(model="drift", Ne=Ne, nu=nu, grid_points=21)
    like, scale = batch.likelihood_grid([k], [n], [mu], [0.0], settings)
    s_het = math.exp(settings.log_s[10])
    a, b, c = 4 * Ne * mu, 4 * Ne * nu, 4 * Ne * s_het

    def phi(x):
        return math.exp(-c * x) * (1 - x) ** (b - 1)

    z = integrate.quad(phi, 0, 1, weight="alg", wvar=(a - 1, 0), limit=200, points=None)[0]
    num = integrate.quad(lambda x: stats.binom.pmf(k, n, x) * phi(x), 0, 1, weight="alg",
                         wvar=(a - 1, 0), limit=400, epsabs=0, epsrel=1e-10)[0]
    assert math.log(like[0, 10]) + scale[0] == pytest.approx(math.log(num / z), abs=1e-5), (
        f"log L {math.log(like[0, 10]) + scale[0]:.7f} vs quad {math.log(num / z):.7f}")


def test_drift_interpolation_matches_direct_evaluation():
    """The spline shortcuts of the drift likelihood (coarse s_het nodes, 9 ln mu nodes)
    agree with direct evaluation at every grid node and a 481-point trapezoid in z
    (log-normal mu) to 1.5e-2 in log L (1.5 % in L, at a few nodes; independent: no
    interpolation), and the posterior medians under a log-uniform prior to 0.3 %."""
    from scipy.special import logsumexp

    from infer.core.drift.stationary import log_binomial_probability

    k = np.array([0.0, 3.0, 40.0, 700.0])
    n = np.full(4, 120_000.0)
    mu = np.array([2e-6, 1e-6, 4e-6, 2e-5])
    sigma = np.array([0.0, 0.3, 0.3, 0.3])
    settings = batch.with_half_width(batch.BatchSettings(model="drift", Ne=2e4), sigma, k)
    like, scale = batch.likelihood_grid(k, n, mu, sigma, settings)
    two_s = 2 * np.exp(settings.log_s)
    z = np.linspace(-6, 6, 481)
    log_w = -0.5 * z**2 + np.log(np.r_[0.5, np.ones(479), 0.5])
    log_w -= logsumexp(log_w)
    for i in range(4):
        nodes = mu[i] * np.exp(sigma[i] * z) if sigma[i] else np.array([mu[i]])
        direct = log_binomial_probability(k[i], n[i], 2e4, nodes[None, :], two_s[:, None], 0.5,
                                          1e-8)
        direct = logsumexp(direct + log_w, axis=1) if sigma[i] else direct[:, 0]
        np.testing.assert_allclose(np.log(like[i]) + scale[i], direct, atol=1.5e-2,
                                   err_msg=f"locus {i}: splined drift log L off direct")
        u = settings.log_s
        cdf = integrate.cumulative_trapezoid(np.exp(direct - direct.max()), u, initial=0)
        median = math.exp(np.interp(0.5, cdf / cdf[-1], u))
        mine = _run_one(k[i], n[i], mu[i], sigma[i], settings)["median"]
        assert mine == pytest.approx(median, rel=3e-3), (
            f"locus {i}: median {mine:.5g}, direct-evaluation median {median:.5g}")


def test_scheduler_without_dask_says_install_the_extra(tmp_path, capsys, monkeypatch):
    """Without dask.distributed the --scheduler branch exits 2 naming the qhat[dist] extra."""
    import sys

    monkeypatch.setitem(sys.modules, "dask.distributed", None)   # import now fails
    source = _write_demo(tmp_path / "loci.csv", loci=5)
    out = tmp_path / "out"
    status = main(["batch", str(source), "--out", str(out), "--scheduler", "tcp://127.0.0.1:1"])
    err = capsys.readouterr().err
    assert status == 2, f"--scheduler without dask exited {status}: {err!r}"
    assert "install qhat[dist]" in err and err.count("\n") == 1, f"stderr {err!r}"
    assert not out.exists(), "a failed --scheduler run left a report folder"


def test_sigterm_during_the_run_leaves_nothing(tmp_path):
    """SIGTERM (a cluster scheduler's kill) during the computation ends like Ctrl-C: exit
    130, the one interrupted line, and neither the report folder nor the temporary chunk
    store left behind (infer.reporting.folder.terminate_as_interrupt, as for estimate)."""
    import os
    import subprocess
    import sys

    source = _write_demo(tmp_path / "loci.csv", loci=20)
    temporary = tmp_path / "tmp"
    temporary.mkdir()
    script = ("import os, signal, sys\n"
              "from infer.jobs.batch import run as batch\n"
              "from infer.cli import main\n"
              "real = batch.run_chunk\n"
              "def run_chunk(task):\n"
              "    os.kill(os.getpid(), signal.SIGTERM)\n"
              "    return real(task)\n"
              "batch.run_chunk = run_chunk\n"
              "sys.exit(main(sys.argv[1:]))\n")
    done = subprocess.run([sys.executable, "-c", script, "batch", str(source),
                           "--out", str(tmp_path / "out")], capture_output=True, timeout=300,
                          env={**os.environ, "TMPDIR": str(temporary)})
    assert done.returncode == 130, done.stderr
    assert done.stderr.decode() == "qhat: interrupted; nothing was written\n", done.stderr
    assert sorted(p.name for p in tmp_path.iterdir()) == ["loci.csv", "tmp"], (
        f"SIGTERM left {sorted(p.name for p in tmp_path.iterdir())}")
    assert list(temporary.iterdir()) == [], (
        f"the chunk store was left in TMPDIR: {list(temporary.iterdir())}")


# ------------------------------------------------- streaming: chunks, bounded work, SIGTERM


def test_recut_gives_whole_chunks_whatever_the_blocks():
    """Derived: blocks of 5, 1, 0 and 7 rows cut into chunks of 4 are rows 0-3, 4-7, 8-11, 12."""
    rows = np.arange(13.0)
    blocks = [{"observed": rows[a:b], "names": [f"G{i}" for i in range(a, b)]}
              for a, b in ((0, 5), (5, 6), (6, 6), (6, 13))]
    chunks = list(batch.recut(blocks, 4))
    assert [list(c["observed"]) for c in chunks] == [[0, 1, 2, 3], [4, 5, 6, 7], [8, 9, 10, 11],
                                                     [12]], f"chunks {chunks}"
    assert chunks[1]["names"] == ["G4", "G5", "G6", "G7"], f"names {chunks[1]['names']}"


def test_grouped_rows_give_the_same_per_locus_results(monkeypatch):
    """Deterministic model: each row's results are elementwise (module docstring), so
    working a chunk's rows one at a time (a large grid's guard for a prompt SIGTERM)
    changes nothing; the summed surface agrees to rounding."""
    data = demo.simulate(40, 5)
    sigma = batch.mu_sigma_from_interval(data["mu_lower"], data["mu_upper"])
    settings = batch.with_half_width(batch.BatchSettings(grid_points=120), sigma)
    arrays = {"observed": data["observed"].astype(float), "sampled": data["sampled"].astype(float),
              "mu": data["mu"], "mu_sigma": sigma}
    whole = batch.run_chunk(("posterior", arrays, settings, batch.SHetPrior()))
    surface = batch.run_chunk(("surface", arrays, settings, None))[0]
    monkeypatch.setattr(batch, "WORK_PER_CALL", 1.0)
    assert batch.rows_per_call(settings) == 1, "the guard should work one row a call"
    grouped = batch.run_chunk(("posterior", arrays, settings, batch.SHetPrior()))
    for name in whole:
        np.testing.assert_array_equal(grouped[name], whole[name], err_msg=name)
    np.testing.assert_allclose(batch.run_chunk(("surface", arrays, settings, None))[0], surface,
                               rtol=1e-12, err_msg="surface summed in groups")


def test_bounded_map_keeps_few_tasks_in_flight():
    """Executor.map would submit all 50 tasks at once; at most `ahead` may be pending."""
    from concurrent.futures import ThreadPoolExecutor

    from infer.commands.batch import bounded_map

    taken, most = [], [0]

    def tasks():
        for i in range(50):
            taken.append(i)
            yield i

    with ThreadPoolExecutor(2) as pool:
        results = []
        for value in bounded_map(pool.submit, lambda x: x * x, tasks(), 3):
            most[0] = max(most[0], len(taken) - len(results))
            results.append(value)
    assert results == [i * i for i in range(50)], "results out of order"
    assert most[0] <= 3, f"{most[0]} tasks taken ahead of the results (bound 3)"


def test_streamed_command_matches_the_in_memory_report(tmp_path, capsys, monkeypatch):
    """qhat batch streams the file in blocks of 2 x 37 rows; loci.csv and summary.json's
    numbers are those of analyse + write_batch_report on the whole table (chunk size 37)."""
    from infer.commands import batch as command
    from infer.files.loci import read_loci
    from infer.jobs.batch.report import summarise_batch
    from infer.reporting.batch_report import write_batch_report

    source = _write_demo(tmp_path / "loci.csv", loci=200)
    monkeypatch.setattr(command, "BLOCK_ROWS", 74)
    for prior in ("log-uniform", "empirical"):
        out = tmp_path / f"streamed-{prior}"
        assert main(["batch", str(source), "--out", str(out), "--quiet", "--chunk-size", "37",
                     "--prior", prior]) == 0, capsys.readouterr().err
        table = read_loci(source)
        sigma = batch.mu_sigma_from_interval(table.mu_lower, table.mu_upper, 0.95)
        result = batch.analyse(table.observed, table.sampled, table.mu, sigma,
                               batch.BatchSettings(), prior=prior, chunk_size=37)
        report = summarise_batch(table, result, sigma, requested_prior=prior, mu_level=0.95,
                                 chunk_size=37)
        memory = write_batch_report(report, tmp_path / f"memory-{prior}")
        assert (out / "loci.csv").read_bytes() == (memory / "loci.csv").read_bytes(), (
            f"{prior}: streamed loci.csv differs from the in-memory one")
        streamed = json.loads((out / "summary.json").read_text())
        held = json.loads((memory / "summary.json").read_text())
        for key in ("flags", "medians_across_loci", "log_marginal_likelihood", "input", "prior"):
            assert streamed[key] == held[key], f"{prior}: summary.json {key} differs"


@pytest.mark.slow
@pytest.mark.parametrize("jobs", ["1", "2"])
def test_sigterm_during_a_large_grid_is_prompt(tmp_path, jobs):
    """A chunk of 512 loci on the largest grid --grid-points allows is many seconds of
    numpy work (the cost grows as S squared); SIGTERM must end the run within 2 s, exit
    130 (128 + SIGINT's 2, the shell convention for an interrupt: common practice) and
    leave no folder behind."""
    import signal
    import subprocess
    import sys
    import time

    from infer.commands.options import BATCH_MAX_GRID_POINTS

    source = _write_demo(tmp_path / "loci.csv", loci=1024)
    out = tmp_path / "out"
    child = subprocess.Popen([sys.executable, "-m", "infer", "batch", str(source), "--out",
                              str(out), "--quiet", "--grid-points", str(BATCH_MAX_GRID_POINTS),
                              "--jobs", jobs],
                             stderr=subprocess.PIPE, text=True, cwd=ROOT)
    deadline = time.monotonic() + 30
    while not [p for p in tmp_path.iterdir() if p.name.endswith(".partial")]:
        assert time.monotonic() < deadline and child.poll() is None, "the run never started"
        time.sleep(0.05)
    time.sleep(1.0)
    sent = time.monotonic()
    child.send_signal(signal.SIGTERM)
    status = child.wait(timeout=30)
    waited = time.monotonic() - sent
    err = child.stderr.read()
    child.stderr.close()
    assert waited < 2.0, f"SIGTERM took {waited:.1f} s to end the run (jobs {jobs})"
    assert status == 130 and err.strip().splitlines() == [
        "qhat: interrupted; nothing was written"], f"exit {status}, stderr {err!r}"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["loci.csv"], (
        f"left behind: {sorted(p.name for p in tmp_path.iterdir())}")
