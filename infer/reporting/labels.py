"""What the reports call things: parameter meanings per study, and numbers as text.

One place for the words (the meaning of s depends on h and on the inheritance; x-linked
mu is a sex average) and for the number formats that must never read as bugs: tiny
values ("< 1e-12", not "1.13e-302"), contractions without a negative zero, counts as
whole numbers, percentages clipped at the small end.
"""

from __future__ import annotations

import math

from infer.core.text import fmt

__all__ = [
    "TINY",
    "fmt_value",
    "fmt_contraction",
    "fmt_count",
    "fmt_percent",
    "fmt_level",
    "parameter_meanings",
    "overdominant",
    "model_assumptions",
]

#: values below this (and above 0) are written "< 1e-12"
TINY = 1e-12
_UNITS = {
    "h": "dominance of the deleterious allele (Aa loses h·s; h < 0: Aa gains)",
    "F": "inbreeding coefficient",
    "nu": "back mutation per gene copy per generation",
    "Ne": "effective population size",
    "alpha": "male/female mutation-rate ratio (mu_male = alpha·mu_female)",
    "penetrance": "probability that a carrier of the affected genotype is affected",
    "completeness": "probability that an affected birth is registered",
    "phenocopy": "affected births per birth that carry no germ-line mutation",
    "s_male": "selection coefficient against aa in males (Aa 1-h·s_male)",
    "s_female": "selection coefficient against aa in females (Aa 1-h·s_female)",
    "q_founder": "allele frequency among the founders (the study's [history])",
}


def fmt_value(value, digits: int = 3) -> str:
    """:func:`infer.core.text.fmt`, with positive values below :data:`TINY` as "< 1e-12".

    Examples
    --------
    >>> fmt_value(1.13e-302)
    '< 1e-12'
    >>> fmt_value(-0.0)
    '0'
    """
    if value is None or isinstance(value, bool):
        return fmt(value, digits)
    v = float(value)
    if math.isfinite(v) and 0 < abs(v) < TINY:
        return f"< {TINY:g}" if v > 0 else f"> -{TINY:g}"
    return fmt(v, digits)


def fmt_contraction(value) -> str:
    """Two decimals, "—" when missing, never "-0.00"."""
    if value is None or not math.isfinite(float(value)):
        return "—"
    text = f"{float(value):.2f}"
    return "0.00" if text == "-0.00" else text


def fmt_count(value) -> str:
    """A whole number as one ("7", "94,075"); a huge or fractional value compactly.

    Examples
    --------
    >>> fmt_count(99999999999999991611392.0)
    '1.00e+23'
    >>> fmt_count(7.0)
    '7'
    """
    if value is None or isinstance(value, bool):
        return fmt(value)
    v = float(value)
    if math.isfinite(v) and v == round(v) and abs(v) < 1e15:
        return f"{int(v):,}"
    return fmt(v)


def fmt_percent(share, digits: int = 2) -> str:
    """A share as a percentage, "< 0.01 %" (at ``digits`` = 2) below the last digit shown."""
    if share is None or not math.isfinite(float(share)):
        return "—"
    p = 100 * float(share)
    smallest = 10.0 ** -digits
    if 0 < p < smallest:
        return f"< {smallest:g} %"
    text = f"{p:.{digits}f}"
    return (text[1:] if text.startswith("-") and float(text) == 0 else text) + " %"


def fmt_level(interval: float, space: str = " ") -> str:
    """An interval's probability as a percentage: "95 %", "99.9 %", never "1e-298 %"."""
    p = 100 * float(interval)
    if p < 0.01:
        return f"< 0.01{space}%"
    if p > 99.99 and p < 100:
        return f"> 99.99{space}%"
    return f"{p:.4g}{space}%"


def _fixed(parameters: dict, name: str):
    entry = parameters.get(name) or {}
    return entry.get("median") if entry.get("fixed") else None


def overdominant(parameters: dict) -> bool:
    """Whether h is fixed below 0 or its prior reaches below 0 (the heterozygote may be fittest)."""
    entry = parameters.get("h") or {}
    low = entry.get("median") if entry.get("fixed") else entry.get("prior_lower")
    return low is not None and float(low) < 0


def parameter_meanings(inheritance: str, parameters: dict) -> dict[str, str]:
    """The meaning of each parameter for this study.

    Parameters
    ----------
    inheritance : str
        ``"autosomal"`` or ``"x-linked"``.
    parameters : dict
        ``summary["parameters"]`` (``fixed`` and ``median`` of h are read).

    Returns
    -------
    dict of str to str
    """
    h = _fixed(parameters, "h")
    if inheritance == "x-linked":
        mu = ("sex average per X chromosome per generation, (2 mu_female + mu_male)/3; "
              "mu_female and mu_male are under derived quantities")
        s = ("selection coefficient against affected hemizygous sons (aY, fitness 1-s); "
             "carrier daughters lose h·s")
        if h == 1:
            s = ("selection coefficient against affected genotypes: hemizygous sons and "
                 "both carrier and homozygous daughters (h = 1)")
    else:
        mu = "per gene copy per generation"
        if h == 1:
            s = ("selection coefficient against affected genotypes: heterozygotes and "
                 "homozygotes alike (h = 1, fitness 1-s)")
        elif h == 0:
            s = "selection coefficient against affected homozygotes aa (h = 0, recessive)"
        elif overdominant(parameters):
            s = ("selection coefficient against aa (fitness 1-s; Aa 1-h·s, above 1 where "
                 "h < 0: heterozygote advantage)")
        else:
            s = "selection coefficient against aa (fitness 1-s; Aa 1-h·s)"
        if "s_male" in parameters:
            s = "mean of s_male and s_female (the sexes' selection, averaged)"
    own = {name: f"probability that an affected birth is registered, in the observations "
                 f'that name "{name}"' for name in parameters
           if name.startswith("completeness_")}  # names checked by the study parser
    return {"mu": mu, "s": s, **_UNITS, **own}


def model_assumptions(model: str) -> list[str]:
    """The sentences that say what the model assumes about time and population size."""
    if model == "drift":
        return [
            "Stationarity is assumed: the population has kept a constant effective size Ne "
            "long enough (many times 2Ne generations and 1/mu) that the allele frequency "
            "follows Wright's stationary distribution of mutation, selection and drift "
            "(Wright 1931, Genetics 16:97; 1937, PNAS 23:307, diffusion approximation). The "
            "observed frequency is read as one draw from that distribution, not as a "
            "settled balance value.",
        ]
    return ["Equilibrium is assumed: the allele frequency has settled at its "
            "deterministic balance value (an infinite population, no drift)."]
