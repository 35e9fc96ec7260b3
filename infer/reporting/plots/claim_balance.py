"""The balance plot of ``qhat check``: the implied quantity against mu, with the data.

Draws a :class:`~infer.jobs.check.balance_curve.ClaimBalanceCurve` (computed by the check):
the exact balance curve, the claimed point, the measured range of mutation rates and
the observed fraction with its exact interval. Build it inside
:func:`infer.reporting.plots.save.plain_text` (``save_figures`` does).
"""

from __future__ import annotations

from infer.reporting.plots.common import plain_log_formatters
from infer.reporting.plots.save import new_figure

__all__ = ["claim_balance_figure"]


def claim_balance_figure(result):
    """The implied quantity against mu (others at their claimed values), with the data.

    Parameters
    ----------
    result : infer.jobs.check.run.CheckResult
        Its ``balance_curve`` is drawn; its ``claim`` gives the title and legend values.

    Returns
    -------
    matplotlib.figure.Figure
        Not registered with pyplot.
    """
    claim, curve = result.claim, result.balance_curve
    figure = new_figure(figsize=(6.4, 4.2), dpi=100)
    figure.subplots_adjust(left=0.13, right=0.97, bottom=0.13, top=0.88)
    ax = figure.subplots()
    low, high = curve.measured_range
    ax.axvspan(low, high, color="tab:green", alpha=0.12, lw=0,
               label=f"measured {curve.mu_scale} rates ({low:g} to {high:g})")
    ax.plot(curve.mu, curve.values, color="tab:blue", lw=1.8,
            label=f"exact balance, {', '.join(f'{p} = {claim.values[p]:g}' for p in ('s', 'h'))}")
    ax.plot([curve.claimed_mu], [curve.claimed_value], "o", color="tab:red", ms=7, mec="black",
            label=f"claimed mu = {curve.claimed_mu:.3g}")
    band = curve.band
    if band is not None:
        ax.axhspan(max(band.lower, 1e-300), band.upper, color="tab:orange", alpha=0.3, lw=0,
                   label=f"observed {band.count}/{band.total} "
                         f"({100 * band.level:g} % Clopper-Pearson)")
    ax.set_xscale("log")
    ax.set_yscale("log")
    for axis in (ax.xaxis, ax.yaxis):
        major, minor = plain_log_formatters()
        axis.set_major_formatter(major)
        axis.set_minor_formatter(minor)
    ax.set_xlabel("mu (per gene copy per generation)" if curve.mu_scale == "locus"
                  else "mu (per nucleotide per generation)", fontsize=9)
    ax.set_ylabel(curve.label, fontsize=9)
    ax.legend(fontsize=7, loc="upper left", framealpha=0.85)
    ax.tick_params(labelsize=8)
    figure.suptitle(f"{claim.title}\nbalance under the claim (others held at claimed values)",
                    fontsize=9)
    return figure

