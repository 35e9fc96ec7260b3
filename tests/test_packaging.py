"""What a user gets from ``pip install qhat``: the declared dependencies, the package list,
the shipped demo scenarios, and (slow) a wheel built, installed into a fresh virtual
environment without extras and run from an empty folder.

References: the Python Packaging User Guide (PyPA, "Writing your pyproject.toml",
"Package data", "Core metadata specifications" 2.4: ``License-Expression``, ``License-File``)
and setuptools' documentation ("Package Discovery and Namespace Packages", "Data Files
Support"); the import-name to distribution mapping is
:func:`importlib.metadata.packages_distributions` (Python standard library).
"""

from __future__ import annotations

import ast
import importlib.metadata
import os
import re
import shutil
import subprocess
import sys
import tarfile
import time
import tomllib
import zipfile
from pathlib import Path

import pytest
from conftest import DEMO, ROOT

PYPROJECT = tomllib.loads((ROOT / "pyproject.toml").read_text(encoding="utf-8"))
PROJECT = PYPROJECT["project"]
SETUPTOOLS = PYPROJECT["tool"]["setuptools"]
#: the demo scenarios: every data file of data_demo/ (its __init__.py only marks a package)
SCENARIOS = sorted(p.name for p in DEMO.iterdir() if p.is_file() and p.suffix != ".py")
#: what a build or an install may take on a loaded 2-core machine (seconds)
BUILD_TIMEOUT = 900


def _name(requirement: str) -> str:
    """The normalised distribution name of a requirement string (PEP 503 / PEP 508)."""
    name = re.match(r"\s*([A-Za-z0-9][A-Za-z0-9._-]*)", requirement).group(1)
    return re.sub(r"[-_.]+", "-", name).lower()


def _imported_top_levels() -> dict[str, set[str]]:
    """Top-level modules outside the standard library that infer/ imports, with the files."""
    found: dict[str, set[str]] = {}
    for path in sorted((ROOT / "infer").rglob("*.py")):
        for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
            if isinstance(node, ast.Import):
                names = [alias.name for alias in node.names]
            elif isinstance(node, ast.ImportFrom) and node.level == 0 and node.module:
                names = [node.module]
            else:
                continue
            for name in names:
                top = name.split(".")[0]
                if top != "infer" and top not in sys.stdlib_module_names:
                    found.setdefault(top, set()).add(str(path.relative_to(ROOT)))
    return found


def _imported_distributions() -> dict[str, set[str]]:
    """Normalised distribution name -> files of infer/ that import it."""
    providers = importlib.metadata.packages_distributions()
    by_distribution: dict[str, set[str]] = {}
    for module, files in _imported_top_levels().items():
        assert module in providers, (
            f"{module} (imported by {sorted(files)}) belongs to no installed distribution")
        for distribution in providers[module]:
            by_distribution.setdefault(_name(distribution), set()).update(files)
    return by_distribution


def test_every_import_is_a_declared_dependency():
    """Each third-party module infer/ imports is a dependency or in an extra (common practice)."""
    declared = {_name(r) for r in PROJECT["dependencies"]}
    extras = {_name(r) for rs in PROJECT["optional-dependencies"].values() for r in rs}
    missing = {d: sorted(f) for d, f in _imported_distributions().items()
               if d not in declared | extras}
    assert not missing, f"imported but not declared in pyproject.toml: {missing}"


def test_every_dependency_is_imported():
    """No required dependency that infer/ never imports (pandas, arviz meta-package ...)."""
    imported = set(_imported_distributions())
    unused = sorted({_name(r) for r in PROJECT["dependencies"]} - imported)
    assert not unused, f"required in pyproject.toml but never imported by infer/: {unused}"


def test_optional_imports_are_only_in_extras():
    """A module imported from an extra (dask for clusters) is not also a hard dependency."""
    declared = {_name(r) for r in PROJECT["dependencies"]}
    dist_extra = {_name(r) for r in PROJECT["optional-dependencies"]["dist"]}
    assert not declared & dist_extra, (
        f"{sorted(declared & dist_extra)} are both required and in the dist extra")


def test_package_list_names_every_package_folder():
    """The explicit [tool.setuptools] packages list equals the package folders on disk.

    The list is explicit because infer.data_demo maps a folder outside infer/
    (setuptools, "Package Discovery": a find directive cannot map it).
    """
    on_disk = {".".join(p.parent.relative_to(ROOT).parts)
               for p in (ROOT / "infer").rglob("__init__.py")}
    on_disk.add("infer.data_demo")
    listed = set(SETUPTOOLS["packages"])
    assert listed == on_disk, (
        f"packages missing from pyproject.toml: {sorted(on_disk - listed)}; "
        f"listed but absent: {sorted(listed - on_disk)}")
    assert SETUPTOOLS["package-dir"] == {"infer.data_demo": "data_demo"}, (
        "infer.data_demo must be installed from the data_demo/ folder")


def test_package_data_covers_every_scenario():
    """Every data file in data_demo/ matches a package-data pattern of infer.data_demo."""
    patterns = PYPROJECT["tool"]["setuptools"]["package-data"]["infer.data_demo"]
    left_out = [n for n in SCENARIOS if not any(Path(n).match(p) for p in patterns)]
    assert SCENARIOS, "data_demo/ holds no scenario"
    assert not left_out, f"data_demo files no package-data pattern ships: {left_out}"


def test_installed_package_finds_the_scenarios():
    """importlib.resources finds the demo scenarios through the installed package."""
    from infer.commands.demo import shipped_scenarios

    with shipped_scenarios() as folder:
        shipped = {p.name: p.read_bytes() for p in folder.iterdir() if p.name in SCENARIOS}
    assert sorted(shipped) == SCENARIOS, (
        f"the installed infer.data_demo holds {sorted(shipped)}, data_demo/ {SCENARIOS}")
    for name in SCENARIOS:
        assert shipped[name] == (DEMO / name).read_bytes(), f"installed {name} differs"


def test_license_and_metadata():
    """LICENSE is MIT with the project's copyright line, and the metadata points at it."""
    text = (ROOT / "LICENSE").read_text(encoding="utf-8")
    assert text.startswith("MIT License"), "LICENSE is not the MIT licence text"
    assert "Copyright (c) 2026 the qhat developers" in text, "LICENSE copyright line"
    assert PROJECT["license"] == "MIT" and PROJECT["license-files"] == ["LICENSE"], (
        "pyproject.toml must declare the SPDX expression MIT and ship LICENSE")
    classifiers = set(PROJECT["classifiers"])
    for wanted in ("Programming Language :: Python :: 3.12",
                   "Programming Language :: Python :: 3.13",
                   "Intended Audience :: Science/Research",
                   "Topic :: Scientific/Engineering :: Bio-Informatics",
                   "Operating System :: OS Independent"):
        assert wanted in classifiers, f"classifier {wanted!r} missing"
    assert not any(c.startswith("License ::") for c in classifiers), (
        "a License classifier beside an SPDX license expression is refused (PEP 639)")
    assert PROJECT["keywords"] and PROJECT["urls"], "keywords and project URLs missing"


# --- the honest test: build, install into a fresh environment, run --------------------------


def _run(command, *, cwd, timeout=BUILD_TIMEOUT, env=None) -> subprocess.CompletedProcess:
    done = subprocess.run([str(c) for c in command], cwd=cwd, capture_output=True, text=True,
                          timeout=timeout, env=env)
    assert done.returncode == 0, (
        f"`{' '.join(map(str, command))}` exited {done.returncode}\n--- stderr ---\n"
        f"{done.stderr[-4000:]}\n--- stdout ---\n{done.stdout[-4000:]}")
    return done


def _clean_env() -> dict[str, str]:
    """The environment without anything that would point Python at this checkout."""
    return {k: v for k, v in os.environ.items()
            if k not in ("PYTHONPATH", "PYTHONHOME", "VIRTUAL_ENV", "PYTHONSTARTUP")}


def _venv(folder: Path, env) -> Path:
    """A plain virtual environment (no system site-packages); return its python."""
    _run([sys.executable, "-m", "venv", folder], cwd=folder.parent, env=env)
    return folder / "bin" / "python"


@pytest.fixture(scope="module")
def built(tmp_path_factory):
    """sdist and wheel of a copy of the checkout, built as ``python -m build`` does.

    The build runs in its own virtual environment holding setuptools and build from the
    package registry (``--no-isolation``: one environment instead of two), on a copy so
    that nothing is written into the checkout.
    """
    base = tmp_path_factory.mktemp("packaging")
    env = _clean_env()
    source = base / "source"
    shutil.copytree(ROOT, source, ignore=shutil.ignore_patterns(
        ".venv", ".git", "reports", "*.egg-info", "build", "dist", "__pycache__",
        ".pytest_cache", ".hypothesis", ".ruff_cache"))
    started = time.perf_counter()
    python = _venv(base / "build-env", env)
    requires = PYPROJECT["build-system"]["requires"]
    _run([python, "-m", "pip", "install", "--quiet", *requires, "build"], cwd=base, env=env)
    _run([python, "-m", "build", "--no-isolation", "--outdir", base / "dist", source],
         cwd=base, env=env)
    seconds = time.perf_counter() - started
    wheels = sorted((base / "dist").glob("qhat-*.whl"))
    sdists = sorted((base / "dist").glob("qhat-*.tar.gz"))
    assert len(wheels) == 1 and len(sdists) == 1, f"build wrote {sorted((base / 'dist').iterdir())}"
    print(f"build environment + sdist + wheel: {seconds:.1f} s")
    return {"base": base, "wheel": wheels[0], "sdist": sdists[0], "env": env}


@pytest.mark.slow
def test_sdist_holds_the_demo_the_licence_and_the_tests(built):
    """The sdist carries data_demo/, LICENSE and the test suite with what it reads."""
    with tarfile.open(built["sdist"]) as sdist:
        names = {n.split("/", 1)[1] for n in sdist.getnames() if "/" in n}
    wanted = {"LICENSE", "README.md", "pyproject.toml", "tests/conftest.py",
              "docs/command-line.md", *(f"data_demo/{n}" for n in SCENARIOS)}
    wanted |= {str(p.relative_to(ROOT)) for p in (ROOT / "tests").rglob("test_*.py")}
    assert not wanted - names, f"missing from the sdist: {sorted(wanted - names)}"


@pytest.mark.slow
def test_wheel_holds_the_demo_the_licence_and_the_dependencies(built):
    """The wheel installs the scenarios as infer/data_demo and declares pyproject's deps."""
    with zipfile.ZipFile(built["wheel"]) as wheel:
        names = set(wheel.namelist())
        info = next(n for n in names if n.endswith(".dist-info/METADATA"))
        metadata = wheel.read(info).decode("utf-8")
    missing = [n for n in SCENARIOS if f"infer/data_demo/{n}" not in names]
    assert not missing, f"scenarios missing from the wheel: {missing}"
    assert any(n.endswith(".dist-info/licenses/LICENSE") for n in names), "no LICENSE in wheel"
    assert "License-Expression: MIT" in metadata, "wheel metadata has no License-Expression"
    required = {_name(line.split(":", 1)[1]) for line in metadata.splitlines()
                if line.startswith("Requires-Dist:") and "extra ==" not in line}
    assert required == {_name(r) for r in PROJECT["dependencies"]}, (
        f"wheel requires {sorted(required)}, pyproject.toml {PROJECT['dependencies']}")


@pytest.mark.slow
def test_wheel_in_a_fresh_venv_runs_the_demo_from_an_empty_folder(built, tmp_path):
    """pip install qhat-*.whl (no extras) into a plain venv, then ``qhat demo`` elsewhere.

    Dependencies come from the package registry, exactly as a user gets them; nothing of
    the checkout or of the project's .venv is visible (no --system-site-packages).
    """
    env = built["env"]
    started = time.perf_counter()
    python = _venv(built["base"] / "user-env", env)
    _run([python, "-m", "pip", "install", "--quiet", built["wheel"]], cwd=tmp_path, env=env)
    _run([python, "-m", "pip", "check"], cwd=tmp_path, env=env)
    installed = time.perf_counter()
    empty = tmp_path / "empty"
    empty.mkdir()
    demo = _run([python.parent / "qhat", "demo", "--quiet"], cwd=empty, env=env)
    finished = time.perf_counter()
    print(f"fresh venv + install: {installed - started:.1f} s; "
          f"qhat demo: {finished - installed:.1f} s")
    assert str(ROOT) not in demo.stdout, "the installed demo read the checkout's data_demo/"
    assert "site-packages/infer/data_demo/" in demo.stdout, (
        f"the demo did not run the installed scenarios:\n{demo.stdout[:2000]}")
    from infer.reporting.folder import safe_name

    for name in SCENARIOS:
        path = Path(name)
        if path.suffix == ".toml":
            wanted = (("report.md", "check.json") if path.stem.startswith("claim-")
                      else ("report.md", "compare.json") if path.stem.startswith("compare-")
                      else ("report.md", "summary.json", "posterior.nc"))
        elif path.suffix == ".csv":
            wanted = ("report.md", "summary.json", "loci.csv")
        else:
            continue                                  # notes beside a scenario (*.md)
        folder = empty / "reports" / safe_name(path.stem)
        for report_file in wanted:
            assert (folder / report_file).is_file(), (
                f"qhat demo from the wheel wrote no {folder.relative_to(empty)}/{report_file}")
