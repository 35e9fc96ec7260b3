"""posterior.nc: the arviz DataTree of an estimate (posterior, prior, log_likelihood, ...).

Two routes to the same groups:

- :func:`to_datatree` builds the arviz 1.x ``xarray.DataTree`` with ``arviz_base.from_dict``
  (for Python users, who get the arviz object in memory);
- :func:`write_netcdf` writes the same groups, variables, dimensions, coordinates and
  attributes to a netCDF-4 file with h5netcdf directly. Importing arviz_base and xarray,
  which then import dask for xarray's write locks, and building the labelled tree cost
  about as much as the whole sampling run of a two-parameter study; h5netcdf alone costs a
  few hundredths of a second. ``xarray.open_datatree`` and ``arviz_base.from_netcdf`` read
  the file back equal to :func:`to_datatree` (tests/reporting/test_netcdf.py checks group
  by group).

Layout (docs/reports.md, "posterior.nc"): every sampled group has the posterior's
dimensions ``chain`` (one independently started ensemble) and ``draw`` (the kept draws of
the ensemble's walkers laid end to end, walker-major), the layout on which summary.json's
R-hat and ESS are computed. The observations share one dimension ``observation`` whose
coordinate is their labels; ``log_likelihood``, ``posterior_predictive`` and
``observed_data`` each hold one variable, ``statistic``, along it.
"""

from __future__ import annotations

import datetime
import io
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from infer.core.text import CAUTION_LINE
from infer.model.priors.parsing import Fixed

__all__ = ["NetcdfLayout", "netcdf_groups", "to_datatree", "write_netcdf"]

#: the sample dimensions of every sampled group
SAMPLE_DIMS = ("chain", "draw")
#: the dimension of the observations, whose coordinate is their labels
OBSERVATION = "observation"
#: the one variable of log_likelihood, posterior_predictive and observed_data
STATISTIC = "statistic"
#: groups without the (chain, draw) sample dimensions
UNSAMPLED_GROUPS = ("observed_data", "constant_data")

RATE = "per gene copy per generation"
#: long name and units of each life-cycle parameter (docs/model.md, first paragraph)
PARAMETER_ATTRS = {
    "mu": ("forward mutation rate A to a", RATE),
    "s": ("selection coefficient against aa", "1"),
    "h": ("dominance coefficient (Aa has fitness 1 - h s)", "1"),
    "F": ("inbreeding coefficient", "1"),
    "nu": ("back mutation rate a to A", RATE),
    "Ne": ("effective population size", "individuals"),
    "alpha": ("male-to-female ratio of mutation rates", "1"),
    "penetrance": ("probability that a carrier of the affected genotype is affected", "1"),
    "completeness": ("probability that an affected birth is registered", "1"),
    "phenocopy": ("affected births per birth without a germ-line mutation", "1"),
    "s_male": ("selection coefficient against aa in males", "1"),
    "s_female": ("selection coefficient against aa in females", "1"),
    "q_founder": ("allele frequency among the founders", "1"),
}
#: long name and units of each derived quantity (docs/reports.md, summary.json ``derived``)
DERIVED_ATTRS = {
    "q_hat": ("equilibrium allele frequency among newborns", "1"),
    "q_male": ("allele frequency among newborn sons", "1"),
    "q_female": ("allele frequency among daughters' X chromosomes", "1"),
    "load": ("mutation load, 1 - mean fitness", "1"),
    "load_male": ("mutation load in sons", "1"),
    "load_female": ("mutation load in daughters", "1"),
    "affected_dominant": ("affected fraction of newborns if dominant (Aa + aa)", "1"),
    "affected_recessive": ("affected fraction of newborns if recessive (aa)", "1"),
    "affected_male": ("affected fraction of newborn sons", "1"),
    "mu_female": ("mutation rate in the female germ line, 3 mu / (2 + alpha)", RATE),
    "mu_male": ("mutation rate in the male germ line, alpha mu_female", RATE),
    "s_mean": ("selection averaged over the sexes, (s_male + s_female) / 2", "1"),
}
COORDINATE_ATTRS = {
    "chain": {"long_name": "independently started ensemble", "units": "1"},
    "draw": {"long_name": "kept draw of the ensemble: walker w, step t at w * steps + t",
             "units": "1"},
    OBSERVATION: {"long_name": "observation label, as in the study file"},
}


@dataclass
class NetcdfLayout:
    """The groups of posterior.nc as plain arrays, shared by both writers.

    Attributes
    ----------
    groups : dict
        group -> variable -> array; sampled arrays shaped (chain, draw, ...).
    dims : dict
        group -> variable -> dimension names of the whole array.
    coords : dict
        dimension -> coordinate values.
    variable_attrs : dict
        group -> variable -> attributes (``long_name``, ``units``).
    attrs : dict
        ``"/"`` and group names -> attributes.
    """

    groups: dict
    dims: dict
    coords: dict
    variable_attrs: dict
    attrs: dict = field(default_factory=dict)


def _long_name(name: str, table: dict) -> dict:
    long_name, units = table.get(name, (name, "1"))
    return {"long_name": long_name, "units": units}


def _integer_if_counts(arrays: list[np.ndarray]) -> np.ndarray:
    """Stack along a last axis; int64 when every value is a finite whole number."""
    stacked = np.stack([np.asarray(a, dtype=float) for a in arrays], axis=-1)
    if np.all(np.isfinite(stacked)) and np.all(stacked == np.round(stacked)):
        return stacked.astype(np.int64)
    return stacked


def netcdf_groups(result, log_prob: np.ndarray | None = None) -> NetcdfLayout:
    """The arrays, dimensions and attributes of every group of posterior.nc.

    Parameters
    ----------
    result : infer.jobs.estimate.results.EstimateResult
    log_prob : ndarray, optional
        Log posterior of each kept draw (chain, draw), stored as ``sample_stats.lp``.

    Returns
    -------
    NetcdfLayout
    """
    study = result.study
    observations = study.observations
    sample_shape = next(iter(result.posterior.values())).shape
    sampled = SAMPLE_DIMS + (OBSERVATION,)

    posterior = {k: np.asarray(v, dtype=float) for k, v in result.posterior.items()}
    post_attrs = {k: _long_name(k, PARAMETER_ATTRS) for k in posterior}
    for name, values in result.derived.items():
        values = np.asarray(values, dtype=float)
        if values.shape == sample_shape:  # Wright's mean and median are on a subsample
            posterior[name] = values
            post_attrs[name] = _long_name(name, DERIVED_ATTRS)
    groups = {"posterior": posterior,
              "prior": {k: np.asarray(result.prior[k], dtype=float) for k in result.posterior}}
    dims = {"posterior": dict.fromkeys(posterior, SAMPLE_DIMS),
            "prior": dict.fromkeys(groups["prior"], SAMPLE_DIMS)}
    attrs_of = {"posterior": post_attrs,
                "prior": {k: {**_long_name(k, PARAMETER_ATTRS),
                              "long_name": "prior draw of the "
                                           + _long_name(k, PARAMETER_ATTRS)["long_name"]}
                          for k in groups["prior"]}}

    labels = np.array([o.label for o in observations], dtype=str)
    if len(observations):
        observed = _integer_if_counts([np.asarray(float(o.statistic())) for o in observations])
        replicated = _integer_if_counts(list(result.replicated))
        if observed.dtype != replicated.dtype:
            observed, replicated = observed.astype(float), replicated.astype(float)
        units = "count" if observed.dtype.kind == "i" else "see constant_data.statistic_name"
        statistic = {"long_name": "observed statistic of each observation "
                                  "(constant_data.statistic_name)", "units": units}
        groups["log_likelihood"] = {STATISTIC: np.asarray(result.log_likelihood, dtype=float)}
        groups["posterior_predictive"] = {STATISTIC: replicated}
        groups["observed_data"] = {STATISTIC: observed}
        dims["log_likelihood"] = {STATISTIC: sampled}
        dims["posterior_predictive"] = {STATISTIC: sampled}
        dims["observed_data"] = {STATISTIC: (OBSERVATION,)}
        attrs_of["log_likelihood"] = {STATISTIC: {
            "long_name": "log-likelihood of each observation at each posterior draw "
                         "(natural logarithm, normalising constants included)", "units": "1"}}
        attrs_of["posterior_predictive"] = {STATISTIC: {
            **statistic, "long_name": "replicated statistic of each observation, one "
                                      "replicate per posterior draw"}}
        attrs_of["observed_data"] = {STATISTIC: statistic}

    fixed = {name: p for name, p in study.parameters.items() if isinstance(p, Fixed)}
    constant = {name: np.asarray(float(p.value)) for name, p in fixed.items()}
    constant_dims = dict.fromkeys(constant, ())
    constant_attrs = {name: {**_long_name(name, PARAMETER_ATTRS),
                             "defaulted": int(name in study.defaulted)} for name in fixed}
    if len(observations):
        constant["kind"] = np.array([o.kind for o in observations], dtype=str)
        constant["statistic_name"] = np.array([o.statistic_name for o in observations],
                                              dtype=str)
        constant_dims.update(kind=(OBSERVATION,), statistic_name=(OBSERVATION,))
        constant_attrs["kind"] = {"long_name": "observation kind (docs/files.md)"}
        constant_attrs["statistic_name"] = {"long_name": "what each observation's statistic "
                                                         "counts"}
    groups["constant_data"] = constant
    dims["constant_data"] = constant_dims
    attrs_of["constant_data"] = constant_attrs

    if log_prob is not None:
        groups["sample_stats"] = {"lp": np.asarray(log_prob, dtype=float)}
        dims["sample_stats"] = {"lp": SAMPLE_DIMS}
        attrs_of["sample_stats"] = {"lp": {
            "long_name": "log posterior density in the sampling coordinates", "units": "1"}}

    descriptors = {"title": study.title, "inheritance": study.inheritance,
                   "model": study.model, "interval": study.interval}
    attrs = {"/": {**descriptors, "caution": CAUTION_LINE},
             "constant_data": descriptors}
    coords = {"chain": np.arange(sample_shape[0], dtype=np.int64),
              "draw": np.arange(sample_shape[1], dtype=np.int64)}
    if len(observations):
        coords[OBSERVATION] = labels
    return NetcdfLayout(groups=groups, dims=dims, coords=coords, variable_attrs=attrs_of,
                        attrs=attrs)


def to_datatree(result, log_prob: np.ndarray | None = None):
    """Build the arviz 1.x DataTree of an :class:`~infer.jobs.estimate.results.EstimateResult`.

    Imports arviz_base (about half a second); ``qhat estimate`` writes the same groups
    with :func:`write_netcdf` instead.
    """
    import arviz_base as az  # the converters alone; all of arviz costs seconds to import

    layout = netcdf_groups(result, log_prob)
    # from_dict takes the dimensions after the sample ones, by variable name
    event_dims = {}
    for variables in layout.dims.values():
        for name, names in variables.items():
            event_dims[name] = [d for d in names if d not in SAMPLE_DIMS]
    tree = az.from_dict(layout.groups, dims=event_dims, coords=layout.coords,
                        attrs=layout.attrs)
    for group, variables in layout.variable_attrs.items():
        dataset = tree[group].to_dataset()
        for name, attrs in variables.items():
            dataset[name].attrs.update(attrs)
        for dim in dataset.dims:
            dataset[dim].attrs.update(COORDINATE_ATTRS.get(dim, {}))
        tree[group].dataset = dataset
    return tree


def _group_attrs(group: str) -> dict:
    from infer import __version__

    sampled = group not in UNSAMPLED_GROUPS
    return {"created_at": datetime.datetime.now(datetime.UTC).isoformat(),
            "creation_library": "qhat", "creation_library_version": __version__,
            "creation_library_language": "Python",
            "sample_dims": list(SAMPLE_DIMS) if sampled else np.array([], dtype=float)}


def _create(group, name: str, dims: tuple, data: np.ndarray, attrs: dict) -> None:
    data = np.ascontiguousarray(data)
    if data.dtype.kind == "U":  # variable-length strings, as xarray writes them
        import h5py  # h5netcdf's own dependency

        variable = group.create_variable(name, dims, data=data.astype(object),
                                         dtype=h5py.string_dtype("utf-8"))
    else:
        variable = group.create_variable(name, dims, data=data,
                                         fillvalue=np.nan if data.dtype.kind == "f" else None)
    variable.attrs.update(attrs)


def write_netcdf(result, path: Path, log_prob: np.ndarray | None = None) -> None:
    """Write the groups of :func:`netcdf_groups` to ``path`` as netCDF-4 (h5netcdf).

    Parameters
    ----------
    result : infer.jobs.estimate.results.EstimateResult
    path : pathlib.Path
    log_prob : ndarray, optional
        Log posterior of each kept draw (chain, draw), stored as ``sample_stats.lp``.
    """
    import h5netcdf

    layout = netcdf_groups(result, log_prob)
    # built in memory and written in one plain write: a full disk then raises an ordinary
    # OSError here, instead of leaving HDF5's own file handle broken (which crashes the
    # interpreter at exit)
    buffer = io.BytesIO()
    with h5netcdf.File(buffer, "w") as root:
        root.attrs.update(layout.attrs["/"])
        for group_name, variables in layout.groups.items():
            group = root.create_group(group_name)
            group.attrs.update(_group_attrs(group_name))
            group.attrs.update(layout.attrs.get(group_name, {}))
            dims = layout.dims[group_name]
            used = sorted({d for names in dims.values() for d in names},
                          key=lambda d: (SAMPLE_DIMS + (OBSERVATION,)).index(d))
            group.dimensions = {d: len(layout.coords[d]) for d in used}
            for dim in used:
                _create(group, dim, (dim,), layout.coords[dim], COORDINATE_ATTRS[dim])
            for name, array in variables.items():
                _create(group, name, dims[name], array,
                        layout.variable_attrs[group_name][name])
    Path(path).write_bytes(buffer.getvalue())
