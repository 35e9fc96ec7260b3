"""``qhat demo``: run every invented scenario shipped with qhat and write its report.

The scenarios are package data (``infer.data_demo``, the repository's ``data_demo/``
folder), found with :mod:`importlib.resources`, so the demo runs from any folder.
"""

from __future__ import annotations

import contextlib
import io
import sys
from pathlib import Path

from infer.commands import options as checks

#: the package that holds the invented scenarios (data_demo/ in the repository)
DEMO_PACKAGE = "infer.data_demo"
#: the scenario files: studies and claims (*.toml), loci (*.csv) and their notes (*.md)
SCENARIO_SUFFIXES = (".toml", ".csv", ".md")


def add_arguments(parser) -> None:
    """Register the options of ``qhat demo``."""
    parser.add_argument("--data", default=None, metavar="DIR",
                        help="folder of scenarios (default: the ones shipped with qhat)")
    parser.add_argument("--out", default="reports", metavar="DIR",
                        help="folder for the reports (default: reports)")
    parser.add_argument("--copy", default=None, metavar="DIR",
                        help="copy the shipped scenarios into DIR (to read or edit) and stop")
    checks.add_json(parser, "each scenario's command, exit status and report folder")
    checks.add_quiet(parser)


@contextlib.contextmanager
def shipped_scenarios():
    """The folder of the shipped scenarios as a real path, for the time of the block."""
    from importlib.resources import as_file, files

    with as_file(files(DEMO_PACKAGE)) as folder:
        yield Path(folder)


def _scenarios(data: Path) -> dict[str, list[Path]]:
    """Scenario files by job: study files, claim files, batch CSVs."""
    studies, claims, comparisons = [], [], []
    for path in sorted(data.glob("*.toml")):
        if path.stem.startswith("compare-"):   # weighed by qhat compare
            comparisons.append(path)
        else:
            (claims if path.stem.startswith("claim-") else studies).append(path)
    return {"estimate": studies, "check": claims, "batch": sorted(data.glob("*.csv")),
            "compare": comparisons}


def _shown(path: Path) -> str:
    """``path`` as the user would type it: relative to the working folder when inside it."""
    try:
        return str(path.relative_to(Path.cwd()))
    except (ValueError, OSError):
        return str(path)


def _copy(target: Path) -> int:
    """Copy the shipped scenario files into ``target``; never replace a file."""
    from infer.errors import InputError

    with shipped_scenarios() as data:
        files = sorted(p for p in data.iterdir() if p.suffix in SCENARIO_SUFFIXES)
        taken = [p.name for p in files if (target / p.name).exists()]
        if taken:
            raise InputError(f"{target / taken[0]} exists; nothing was copied",
                             source="--copy")
        try:
            target.mkdir(parents=True, exist_ok=True)
            for path in files:
                with open(target / path.name, "xb") as out:
                    out.write(path.read_bytes())
        except OSError as error:
            raise InputError(f"cannot write {error.filename or target}: "
                             f"{error.strerror or error}", source="--copy") from None
    print(f"copied {len(files)} demo scenario files into {target}/ "
          f"(run them with: qhat demo --data {target})")
    return 0


def run(args) -> int:
    """Run ``qhat demo``."""
    if args.copy is not None:
        return _copy(Path(args.copy))
    if args.data is None:
        with shipped_scenarios() as data:
            return _run_all(data, Path(args.out), args.quiet, args.json)
    from infer.errors import InputError

    data = Path(args.data)
    if not data.is_dir():
        raise InputError(f"{data} is not a folder", source="--data")
    return _run_all(data, Path(args.out), args.quiet, args.json)


#: exit statuses that count as done, by job (3 = an inconsistent claim: a finding)
DONE = {"estimate": (0,), "check": (0, 3), "batch": (0,), "forecast": (0,), "compare": (0,)}
#: forecasts of demo estimate reports: study file -> options after the report folder.
#: Varrow island's dominant skeletal disorder (invented): a treatment that restores the
#: fertility of affected people, s = 0 from now on
FORECASTS = {"island-dominant.toml": ["--generations", "20", "--set", "s=0"]}


def _commands(jobs: dict[str, list[Path]], out: Path):
    """(job, scenario file, report folder, argument list) of every scenario, in run order."""
    from infer.reporting.folder import safe_name

    extra = {"estimate": [], "check": [], "batch": ["--prior", "empirical"], "compare": []}
    for job in ("estimate", "check", "batch", "compare"):
        for path in jobs[job]:
            target = out / safe_name(path.stem)
            yield job, path, target, [job, str(path), "--out", str(target), "--force",
                                      *extra[job]]
        if job == "estimate":   # each forecast reads the report of its estimate
            for path in jobs[job]:
                if path.name in FORECASTS:
                    report = out / safe_name(path.stem)
                    target = report.parent / f"{report.name}-forecast"
                    yield "forecast", path, target, [
                        "forecast", str(report), *FORECASTS[path.name], "--out",
                        str(target), "--force"]


def _run_all(data: Path, out: Path, quiet: bool, as_json: bool = False) -> int:
    """Run every scenario of ``data``; reports go to ``out/<file name>``.

    Text: each command's header line and output on stdout. ``--json``: the headers go to
    stderr (progress, left out with ``--quiet``), the commands' own output is dropped,
    and stdout holds one document listing each scenario, its command, exit status and
    report folder (schema ``demo``).
    """
    from infer.errors import InputError

    jobs = _scenarios(data)
    if not any(jobs.values()):
        raise InputError(f"no scenarios (*.toml, *.csv) in {data}", source="--data")
    out.mkdir(parents=True, exist_ok=True)
    from infer.cli import main as qhat

    runs, failures = [], 0
    for job, path, target, argv in _commands(jobs, out):
        # argv[1] is the scenario file, or the report folder a forecast reads
        shown = f"qhat {job} {_shown(Path(argv[1]))} --out {target}"
        if not as_json:
            print(f"== {shown}", flush=True)
        elif not quiet:
            print(f"== {shown}", file=sys.stderr, flush=True)
        argv = argv + (["--quiet"] if quiet else [])
        if as_json:
            with contextlib.redirect_stdout(io.StringIO()):
                status = qhat(argv)
        else:
            status = qhat(argv)
        done = status in DONE[job]
        failures += not done
        runs.append({"job": job, "scenario": path.name, "command": ["qhat", *argv],
                     "status": status, "done": done, "report": str(target)})
    if as_json:
        from infer.core.text import CAUTION_LINE
        from infer.reporting.jsonout import dumps, versioned

        sys.stdout.write(dumps(versioned({
            "caution": CAUTION_LINE, "command": "qhat demo", "data": str(data),
            "out": str(out), "scenarios": runs, "failures": failures})))
    else:
        print(f"demo reports are in {out}/ (research estimates, not clinical results)")
    if failures:
        print(f"qhat: {failures} demo scenario(s) failed", file=sys.stderr)
        return 1
    return 0
