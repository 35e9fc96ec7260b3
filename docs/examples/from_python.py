"""A whole qhat study from Python: estimate, report, check and batch, no command line.

Run from anywhere::

    python docs/examples/from_python.py [REPORT_FOLDER]

The scenario is invented: a dominant eye disorder in the newborn registry of the
fictional Brannoch islands. No number here describes real people. Like every qhat
result, the output is a research estimate, not a clinical or genetic-counselling result.
"""

from __future__ import annotations

import sys
import tempfile
from pathlib import Path

import infer

DEMO = Path(__file__).resolve().parents[2] / "data_demo"

#: the study, laid out as a study TOML file would be (docs/files.md, 'Study files')
BRANNOCH = {
    "title": "Brannoch islands registry: a dominant eye disorder (invented)",
    "inheritance": "autosomal",
    "model": "deterministic",
    "interval": 0.95,
    "parameters": {
        "mu": {"prior": "log-uniform", "low": 1e-8, "high": 1e-3},
        "s": {"prior": "uniform", "low": 0.0, "high": 1.0},
        "h": 1.0,      # affected people are heterozygotes
    },
    "observations": [
        {"label": "registry births 2001-2020", "kind": "affected", "affected": 23,
         "total": 241_300, "mode": "dominant"},
        {"label": "affected births with two unaffected parents", "kind": "sporadic",
         "cases": 17, "births": 241_300, "mode": "dominant"},
        {"label": "children of affected adults vs their unaffected sibs", "kind": "fertility",
         "affected_people": 58, "affected_children": 31, "reference_people": 240,
         "reference_children": 498, "mode": "dominant"},
    ],
    "sampler": {"seed": 7},
}


def estimate_and_report(out: Path) -> None:
    """Estimate mu and s, write the report folder, compare with the exact equilibrium."""
    study = infer.parse_study(BRANNOCH, source="brannoch")
    result = infer.estimate(study)
    print(result)                       # medians, intervals, verdict and the caution
    folder = infer.write_report(result, out / "brannoch", force=True)
    print(f"report folder: {folder} ({', '.join(sorted(p.name for p in folder.iterdir()))})")

    # the equilibrium at the posterior medians, from the balance functions directly
    medians = {name: result.summary["parameters"][name]["median"] for name in ("mu", "s", "h")}
    exact = float(infer.q_hat(**medians))
    approximation = infer.autosomal_approximations(**medians)["mu/(hs)"]
    print(f"q_hat at the posterior medians: {exact:.3e}; mu/(hs) gives "
          f"{float(approximation.value):.3e} (relative error "
          f"{float(approximation.relative_error):.1e})")


def check_claims() -> None:
    """A reviewer's check of every invented claim in data_demo/."""
    for path in sorted(DEMO.glob("claim-*.toml")):
        checked = infer.check(infer.load_claim(path))
        verdict = "consistent" if checked.consistent else "INCONSISTENT"
        print(f"{path.name}: {verdict} (errors {checked.count('error')}, "
              f"warnings {checked.count('warning')}, notes {checked.count('note')})")
        for finding in checked.findings:
            if finding.severity == "error":
                print(f"  error [{finding.code}] {finding.message}")


def batch() -> None:
    """Per-locus heterozygous selection for the invented loci of data_demo/."""
    loci = infer.batch(DEMO / "batch_loci.csv")
    print(f"{len(loci)} loci; prior {loci.attrs['prior']}")
    strongest = loci.sort_values("s_het_median", ascending=False).head(5)
    print(strongest[["observed", "sampled", "mu", "s_het_median", "s_het_lower",
                     "s_het_upper", "flag_names"]].to_string(float_format="{:.3g}".format))
    flagged = loci["flag_names"].str.split(";").explode()
    print("loci per flag:", flagged[flagged != ""].value_counts().to_dict())


def main(argv: list[str]) -> int:
    """Run the three jobs; the report goes to ``argv[0]`` or a temporary folder."""
    with tempfile.TemporaryDirectory() as scratch:
        out = Path(argv[0]) if argv else Path(scratch)
        out.mkdir(parents=True, exist_ok=True)
        estimate_and_report(out)
        check_claims()
        batch()
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
