"""posterior.nc: the arviz DataTree of an estimate (posterior, prior, log_likelihood, ...).

Two routes to the same groups:

- :func:`to_datatree` builds the arviz 1.x ``xarray.DataTree`` with ``arviz_base.from_dict``
  (for Python users, who get the arviz object in memory);
- :func:`write_netcdf` writes the same groups, variables, dimensions and coordinates to a
  netCDF-4 file with h5netcdf directly. Importing arviz_base and xarray, which then import
  dask for xarray's write locks, and building the labelled tree cost about as much as the
  whole sampling run of a two-parameter study; h5netcdf alone costs a few hundredths of a
  second. ``xarray.open_datatree`` and ``arviz_base.from_netcdf`` read the file back equal
  to :func:`to_datatree` (tests/reporting/test_netcdf.py checks group by group).

Layout (arviz's convention for arrays given without dims): the sampled groups have
dimensions ``chain`` and ``draw`` with integer coordinates, further axes of a variable
``v`` are ``v_dim_0, v_dim_1, ...``; ``observed_data`` has no sample dimensions.
"""

from __future__ import annotations

import datetime
from pathlib import Path

import numpy as np

from infer.core.text import CAUTION_LINE

__all__ = ["netcdf_groups", "to_datatree", "write_netcdf"]

#: groups without the (chain, draw) sample dimensions
UNSAMPLED_GROUPS = ("observed_data",)



def _observation_names(result) -> list[str]:
    return [f"obs{i + 1}" for i in range(len(result.study.observations))]


def netcdf_groups(result, log_prob: np.ndarray | None = None) -> tuple[dict, dict]:
    """The arrays and attributes of every group of posterior.nc.

    Observations are named ``obs1, obs2, ...`` in study order; their labels and kinds are
    stored as attributes of the ``observed_data`` group.

    Returns
    -------
    (dict, dict)
        ``groups``: group -> variable -> array, sampled arrays shaped (chain, draw, ...);
        ``attrs``: ``"/"`` and group names -> attribute dict.
    """
    names = _observation_names(result)
    observations = result.study.observations
    ll = result.log_likelihood
    groups = {
        "posterior": {k: np.asarray(v) for k, v in result.posterior.items()},
        "prior": {k: np.asarray(v) for k, v in result.prior.items()},
        "log_likelihood": {n: ll[..., i] for i, n in enumerate(names)},
        "posterior_predictive": {n: np.asarray(r) for n, r in zip(names, result.replicated,
                                                                   strict=True)},
        "observed_data": {n: np.asarray([float(o.statistic())])
                          for n, o in zip(names, observations, strict=True)},
    }
    if log_prob is not None:
        groups["sample_stats"] = {"lp": np.asarray(log_prob)}
    attrs = {
        "/": {"title": result.study.title, "inheritance": result.study.inheritance,
              "model": result.study.model, "interval": result.study.interval,
              "caution": CAUTION_LINE},
        "observed_data": {n: f"{o.kind}: {o.label}"
                          for n, o in zip(names, observations, strict=True)},
    }
    return groups, attrs


def to_datatree(result, log_prob: np.ndarray | None = None):
    """Build the arviz 1.x DataTree of an :class:`~infer.jobs.estimate.results.EstimateResult`.

    Imports arviz_base (about half a second); ``qhat estimate`` writes the same groups
    with :func:`write_netcdf` instead.
    """
    import arviz_base as az  # the converters alone; all of arviz costs seconds to import

    groups, attrs = netcdf_groups(result, log_prob)
    return az.from_dict(groups, attrs=attrs)


def _dims(group: str, name: str, array: np.ndarray) -> tuple[str, ...]:
    sample = () if group in UNSAMPLED_GROUPS else ("chain", "draw")
    extra = array.ndim - len(sample)
    return sample + tuple(f"{name}_dim_{i}" for i in range(extra))


def _group_attrs(group: str) -> dict:
    from infer import __version__

    sampled = group not in UNSAMPLED_GROUPS
    return {"created_at": datetime.datetime.now(datetime.UTC).isoformat(),
            "creation_library": "qhat", "creation_library_version": __version__,
            "creation_library_language": "Python",
            "sample_dims": ["chain", "draw"] if sampled else np.array([], dtype=float)}


def write_netcdf(result, path: Path, log_prob: np.ndarray | None = None) -> None:
    """Write the groups of :func:`netcdf_groups` to ``path`` as netCDF-4 (h5netcdf).

    Parameters
    ----------
    result : infer.jobs.estimate.results.EstimateResult
    path : pathlib.Path
    log_prob : ndarray, optional
        Log posterior of each kept draw (chain, draw), stored as ``sample_stats.lp``.
    """
    import io

    import h5netcdf

    groups, attrs = netcdf_groups(result, log_prob)
    # built in memory and written in one plain write: a full disk then raises an ordinary
    # OSError here, instead of leaving HDF5's own file handle broken (which crashes the
    # interpreter at exit)
    buffer = io.BytesIO()
    with h5netcdf.File(buffer, "w") as root:
        root.attrs.update(attrs["/"])
        for group_name, variables in groups.items():
            group = root.create_group(group_name)
            group.attrs.update(_group_attrs(group_name))
            group.attrs.update(attrs.get(group_name, {}))
            dims = {name: _dims(group_name, name, array) for name, array in variables.items()}
            sizes: dict[str, int] = {}
            for name, array in variables.items():
                sizes.update(zip(dims[name], array.shape, strict=True))
            group.dimensions = sizes
            for dim, size in sizes.items():  # integer coordinates, as arviz gives them
                group.create_variable(dim, (dim,), data=np.arange(size, dtype=np.int64))
            for name, array in variables.items():
                data = np.ascontiguousarray(array)
                group.create_variable(name, dims[name], data=data,
                                      fillvalue=np.nan if data.dtype.kind == "f" else None)
    Path(path).write_bytes(buffer.getvalue())
