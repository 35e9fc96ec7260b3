"""The arviz DataTree of an estimate (posterior, prior, log_likelihood, observed data)."""

from __future__ import annotations

from pathlib import Path

import numpy as np

__all__ = ["to_datatree", "write_netcdf"]


def _observation_names(result) -> list[str]:
    return [f"obs{i + 1}" for i in range(len(result.study.observations))]


def to_datatree(result, log_prob: np.ndarray | None = None):
    """Build the arviz 1.x DataTree of an :class:`~infer.results.EstimateResult`.

    Observations are named ``obs1, obs2, ...`` in study order; their labels and kinds are
    stored as attributes of the ``observed_data`` group.
    """
    import arviz_base as az  # the converters alone; all of arviz costs seconds to import

    names = _observation_names(result)
    ll = result.log_likelihood
    groups = {
        "posterior": {k: np.asarray(v) for k, v in result.posterior.items()},
        "prior": {k: np.asarray(v) for k, v in result.prior.items()},
        "log_likelihood": {n: ll[..., i] for i, n in enumerate(names)},
        "posterior_predictive": {n: np.asarray(r) for n, r in zip(names, result.replicated,
                                                                   strict=True)},
        "observed_data": {n: np.asarray([float(o.statistic())])
                          for n, o in zip(names, result.study.observations, strict=True)},
    }
    if log_prob is not None:
        groups["sample_stats"] = {"lp": np.asarray(log_prob)}
    attrs = {
        "/": {"title": result.study.title, "inheritance": result.study.inheritance,
              "model": result.study.model, "interval": result.study.interval,
              "caution": "research estimate, not a clinical or genetic-counselling result"},
        "observed_data": {n: f"{o.kind}: {o.label}"
                          for n, o in zip(names, result.study.observations, strict=True)},
    }
    return az.from_dict(groups, attrs=attrs)


def write_netcdf(result, path: Path, log_prob: np.ndarray | None = None) -> None:
    """Write the DataTree to ``path`` (netCDF via h5netcdf)."""
    tree = to_datatree(result, log_prob)
    tree.to_netcdf(str(path), engine="h5netcdf")
