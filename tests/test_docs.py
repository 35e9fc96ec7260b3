"""The repository stands alone: the code cites docs/, and docs/ keeps up with the code.

Issue 11, item 8. What the code and the tests cite about the model, the file formats,
the report keys and the exit statuses lives in ``docs/``, in the project's own words.
These checks hold the two together; the reference for each is the code itself (its
registries and what it writes), which the documents must follow:

- no file of the repository names the design notes kept outside it;
- every ``docs/<page>.md`` path cited in the code exists, and a section cited with it
  (``docs/model.md, 'Life cycle'``) is a heading of that page; links inside docs/ resolve;
- every key of the summary.json that ``qhat estimate`` writes for the demo island study
  is listed in docs/reports.md;
- every observation kind of the registry, with its fields, is in docs/files.md;
- every command, every option and every exit status of ``qhat`` is in
  docs/command-line.md.
"""

from __future__ import annotations

import argparse
import contextlib
import io
import json
import re
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
DOCS = ROOT / "docs"
#: the design notes that live outside the repository; spelled in two parts so that this
#: file does not name them itself
OUTSIDE_NOTES = "DESIGN" + ".md"
#: where the code, the tests and the documents live
SCANNED = ("infer", "tests", "benchmarks", "docs", "data_demo", "README.md", "DEVELOPERS.md",
           "Makefile", "pyproject.toml")
TEXT_SUFFIXES = {".py", ".md", ".toml", ".txt", ".cfg", ".csv", ".ini", ".yml", ".yaml", ""}
#: a citation: docs/<page>.md, optionally followed by , '<section>'
CITATION = re.compile(r"docs/([A-Za-z0-9_./-]+\.md)(?:,\s*'([^']+)')?")
#: a Markdown link to a relative target inside docs/
LINK = re.compile(r"\]\(([^)\s#]*)(#[^)\s]*)?\)")
#: the life-cycle parameters (infer.core.supports.PARAMETERS), the placeholder <name>
PARAMETERS = ("mu", "s", "h", "F", "nu", "Ne", "alpha", "penetrance", "completeness",
              "phenocopy")
#: summary.json keys whose children are parameter names
BY_PARAMETER = {("parameters",), ("diagnostics", "autocorr_time"), ("grid", "quantiles"),
                ("grid", "parameters"), ("drift_comparison", "deterministic"),
                ("drift_comparison", "drift"), ("drift_comparison", "changes")}


def _text_files():
    for name in SCANNED:
        path = ROOT / name
        candidates = [path] if path.is_file() else sorted(path.rglob("*")) if path.is_dir() else []
        for file in candidates:
            if file.is_file() and "__pycache__" not in file.parts \
                    and file.suffix in TEXT_SUFFIXES:
                yield file


def _read(path: Path) -> str:
    return path.read_text(encoding="utf-8", errors="replace")


def _headings(page: Path) -> set[str]:
    """Heading texts of a Markdown page, backticks removed, lower case."""
    found, fenced = set(), False
    for line in _read(page).splitlines():
        if line.startswith("```"):
            fenced = not fenced
        elif not fenced and re.match(r"#{1,6} ", line):
            found.add(line.lstrip("#").strip().replace("`", "").lower())
    return found


def _anchor(heading: str) -> str:
    """GitHub's anchor of a heading (common practice: lower case, punctuation dropped)."""
    kept = "".join(c for c in heading.lower() if c.isalnum() or c in " -_")
    return kept.replace(" ", "-")


# ------------------------------------------------------------------ the repository stands alone


def test_no_file_names_the_outside_design_notes():
    """Nothing in the repository points at the design notes kept outside it."""
    offenders = []
    for file in _text_files():
        for number, line in enumerate(_read(file).splitlines(), start=1):
            if OUTSIDE_NOTES.lower() in line.lower():
                offenders.append(f"{file.relative_to(ROOT)}:{number}: {line.strip()}")
    assert not offenders, (
        f"{len(offenders)} line(s) cite {OUTSIDE_NOTES}, which is not in the repository; "
        "point them at docs/ instead (e.g. docs/model.md, 'Autosomal equilibrium'):\n"
        + "\n".join(offenders))


def test_every_cited_docs_page_and_section_exists():
    """Each docs/<page>.md cited in the code exists; each cited section is one of its headings."""
    problems, seen = [], 0
    for file in _text_files():
        if DOCS in file.parents:
            continue
        for match in CITATION.finditer(_read(file)):
            seen += 1
            page, section = DOCS / match.group(1), match.group(2)
            where = f"{file.relative_to(ROOT)}: {match.group(0)!r}"
            if not page.is_file():
                problems.append(f"{where}: no such page")
            elif section and section.replace("`", "").lower() not in _headings(page):
                problems.append(f"{where}: no heading {section!r} in {page.name}")
    assert seen > 0, "no docs/ citation found at all: the scan of the code is broken"
    assert not problems, "citations of docs/ that do not resolve:\n" + "\n".join(problems)


def test_links_inside_docs_resolve():
    """Relative links between the docs pages point at existing pages and headings."""
    problems = []
    pages = sorted(DOCS.glob("*.md"))
    assert pages, "docs/ holds no Markdown page"
    for page in pages:
        for target, anchor in LINK.findall(_read(page)):
            if "://" in target:
                continue
            linked = (page.parent / target) if target else page
            if not linked.is_file():
                problems.append(f"{page.name}: link to missing {target}")
            elif anchor and linked.suffix == ".md" and anchor[1:] not in {
                    _anchor(h) for h in _headings(linked)}:
                problems.append(f"{page.name}: no heading for {target}{anchor}")
    index = _read(DOCS / "README.md")
    for page in pages:
        if page.name != "README.md" and f"]({page.name})" not in index:
            problems.append(f"docs/README.md does not link {page.name}")
    assert not problems, "broken links in docs/:\n" + "\n".join(problems)


def test_code_paths_named_in_docs_exist():
    """Modules and folders the docs point a maintainer to (``infer/core/balance.py``) exist."""
    missing = []
    for page in sorted(DOCS.glob("*.md")):
        for path in re.findall(r"`((?:infer|tests|benchmarks)/[A-Za-z0-9_./-]*)`", _read(page)):
            if not (ROOT / path).exists():
                missing.append(f"{page.name}: {path}")
    assert not missing, "docs/ names paths that do not exist (moved?):\n" + "\n".join(missing)


# ------------------------------------------------------------------ report keys


@pytest.fixture(scope="module")
def island_summary(tmp_path_factory) -> dict:
    """summary.json of the demo island study, written by ``qhat estimate`` (about 2 s)."""
    from infer.cli import main

    out = tmp_path_factory.mktemp("docs") / "island"
    shown = io.StringIO()
    with contextlib.redirect_stdout(shown):
        status = main(["estimate", str(ROOT / "data_demo" / "island-dominant.toml"),
                       "--out", str(out), "--quiet"])
    assert status == 0, (
        f"qhat estimate of the demo island study exited {status}: {shown.getvalue()}")
    return json.loads((out / "summary.json").read_text(encoding="utf-8"))


def _key_paths(value, prefix: tuple[str, ...], found: dict[str, set[str]]):
    """Dotted paths of every leaf, with <name>, <quantity> and [] for the variable parts."""
    if isinstance(value, dict):
        for key, child in value.items():
            concrete = tuple(p for p in prefix if p != "[]")
            if concrete in BY_PARAMETER:
                assert key in PARAMETERS, f"{'.'.join(prefix)}: {key!r} is not a parameter name"
                segment = "<name>"
            elif concrete == ("derived",):
                found.setdefault("<quantity>", set()).add(key)
                segment = "<quantity>"
            else:
                segment = key
            _key_paths(child, (*prefix, segment), found)
    elif isinstance(value, list) and value and all(isinstance(v, dict) for v in value):
        for child in value:
            _key_paths(child, (*prefix, "[]"), found)
    else:
        path = ".".join(prefix).replace(".[]", "[]")
        found.setdefault("paths", set()).add(path)


def test_every_summary_key_is_documented(island_summary):
    """Every key path of the demo summary.json appears, as code, in docs/reports.md."""
    found: dict[str, set[str]] = {}
    _key_paths(island_summary, (), found)
    text = _read(DOCS / "reports.md")
    missing = sorted(p for p in found["paths"] if f"`{p}`" not in text)
    assert not missing, ("summary.json keys missing from docs/reports.md (write each as "
                         "`path`, with <name>, <quantity> and [] as there):\n" + "\n".join(missing))
    quantities = sorted(q for q in found.get("<quantity>", ()) if f"`{q}`" not in text)
    assert not quantities, f"derived quantities not explained in docs/reports.md: {quantities}"


# ------------------------------------------------------------------ observation kinds


def test_every_observation_kind_and_field_is_documented():
    """The registry infer.model.observations.kinds.KINDS against docs/files.md."""
    from infer.model.observations.kinds import KINDS

    text = _read(DOCS / "files.md")
    headings = _headings(DOCS / "files.md")
    problems = []
    for kind, cls in KINDS.items():
        if kind.lower() not in headings:
            problems.append(f"kind {kind!r} has no heading in docs/files.md")
        fields = (*getattr(cls, "required", ()), *getattr(cls, "optional", ()))
        problems += [f"{kind}: field {name!r} is not in docs/files.md" for name in fields
                     if f"`{name}`" not in text]
    assert KINDS, "the observation registry is empty"
    assert not problems, "\n".join(problems)
    model = _read(DOCS / "model.md")
    unmodelled = [kind for kind in KINDS if f"`{kind}`" not in model]
    assert not unmodelled, f"kinds without a probability model in docs/model.md: {unmodelled}"


# ------------------------------------------------------------------ the command line


def _subcommands() -> dict[str, argparse.ArgumentParser]:
    from infer.cli import build_parser

    parser = build_parser()
    for action in parser._actions:  # argparse keeps the subcommands on this action
        if isinstance(action, argparse._SubParsersAction):
            return dict(action.choices)
    raise AssertionError("qhat's parser has no subcommands")


def test_every_command_and_option_is_documented():
    """infer.cli.COMMANDS and every option of each parser against docs/command-line.md."""
    from infer.cli import COMMANDS

    page = DOCS / "command-line.md"
    text, headings = _read(page), _headings(page)
    commands = _subcommands()
    assert set(commands) == set(COMMANDS), "the parser and infer.cli.COMMANDS disagree"
    problems = [f"command {name!r} has no heading 'qhat {name}'" for name in COMMANDS
                if f"qhat {name}" not in headings]
    for name, parser in commands.items():
        for action in parser._actions:
            options = [o for o in action.option_strings if o not in ("-h", "--help")]
            if options and not any(f"`{o}" in text for o in options):
                problems.append(f"qhat {name}: option {options[0]} is not in {page.name}")
    assert not problems, "\n".join(problems)


def test_every_exit_status_is_documented():
    """The exit statuses of infer.cli and of qhat check against the table in command-line.md."""
    from infer import cli
    from infer.commands import check, estimate

    statuses = {cli.EXIT_OK, cli.EXIT_INPUT, cli.EXIT_INCONSISTENT, check.EXIT_INCONSISTENT,
                estimate.EXIT_NOT_CONVERGED, 130}
    text = _read(DOCS / "command-line.md")
    missing = sorted(s for s in statuses if f"\n| {s} |" not in text)
    assert not missing, f"exit statuses without a row in docs/command-line.md: {missing}"
