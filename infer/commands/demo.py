"""``qhat demo``: run every invented scenario in data_demo/ and write its report."""

from __future__ import annotations

import sys
from pathlib import Path


def add_arguments(parser) -> None:
    """Register the options of ``qhat demo``."""
    parser.add_argument("--data", default="data_demo", metavar="DIR",
                        help="folder of demo scenarios (default: data_demo)")
    parser.add_argument("--out", default="reports", metavar="DIR",
                        help="folder for the reports (default: reports)")
    parser.add_argument("--quiet", action="store_true", help="no progress on stderr")


def _scenarios(data: Path) -> dict[str, list[Path]]:
    """Scenario files by job: study files, claim files, batch CSVs."""
    studies, claims = [], []
    for path in sorted(data.glob("*.toml")):
        (claims if path.stem.startswith("claim-") else studies).append(path)
    return {"estimate": studies, "check": claims, "batch": sorted(data.glob("*.csv"))}


def run(args) -> int:
    """Run ``qhat demo``."""
    from infer.errors import InputError
    from infer.reporting.folder import safe_name

    data, out = Path(args.data), Path(args.out)
    if not data.is_dir():
        raise InputError(f"{data} is not a folder (run qhat demo from the project folder)",
                         source="--data")
    out.mkdir(parents=True, exist_ok=True)
    jobs = _scenarios(data)
    if not any(jobs.values()):
        raise InputError(f"no scenarios (*.toml, *.csv) in {data}", source="--data")
    from infer.cli import main as qhat

    failures = 0
    for path in jobs["estimate"]:
        target = out / safe_name(path.stem)
        print(f"== qhat estimate {path} --out {target}", flush=True)
        argv = ["estimate", str(path), "--out", str(target), "--force"]
        failures += qhat(argv + (["--quiet"] if args.quiet else [])) != 0
    for path in jobs["check"]:
        target = out / safe_name(path.stem)
        print(f"== qhat check {path} --out {target}", flush=True)
        status = qhat(["check", str(path), "--out", str(target), "--force"])
        failures += status not in (0, 3)  # 3 = inconsistent claim, a finding, not a failure
    for path in jobs["batch"]:
        target = out / safe_name(path.stem)
        print(f"== qhat batch {path} --out {target}", flush=True)
        argv = ["batch", str(path), "--out", str(target), "--force", "--prior", "empirical"]
        failures += qhat(argv + (["--quiet"] if args.quiet else [])) != 0
    print(f"demo reports are in {out}/ (research estimates, not clinical results)")
    if failures:
        print(f"qhat: {failures} demo scenario(s) failed", file=sys.stderr)
        return 1
    return 0
