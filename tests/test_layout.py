"""The package layout: imports go down the layers only, and the top level stays small.

The layers (DEVELOPERS.md, "Layout"), lowest first::

    errors, validate  <-  core  <-  model  <-  files  <-  inference
        <-  jobs {estimate, check, batch}  <-  reporting  <-  commands, cli, __main__

A module may import from its own layer or any layer below it; the three jobs
(infer/jobs/estimate, check, batch) do not import one another, and ``infer/__init__.py`` (the
package face, which imports lazily) may name anything. The walk reads every import
statement with :mod:`ast`, including those inside functions, so a lazy import cannot
hide an upward dependency.
"""

from __future__ import annotations

import ast
import pathlib

import pytest

PACKAGE = pathlib.Path(__file__).resolve().parents[1] / "infer"

LAYERS = {
    "errors": 0, "validate": 0,
    "core": 1,
    "model": 2,
    "files": 3,
    "inference": 4,
    "jobs": 5,
    "reporting": 6,
    "commands": 7, "cli": 7, "__main__": 7,
}
JOB_LAYER = "jobs"   # its sub-packages (estimate, check, batch) never import one another
TOP_LEVEL_MODULES = {"__init__.py", "__main__.py", "cli.py", "errors.py", "validate.py"}


def _modules():
    for path in sorted(PACKAGE.rglob("*.py")):
        parts = path.relative_to(PACKAGE).with_suffix("").parts
        yield path, parts


def _room(parts) -> str:
    """The layer name of a module given its parts below ``infer``."""
    return parts[0]


def _imported(path: pathlib.Path, parts) -> list[tuple[int, tuple[str, ...]]]:
    """(line, parts below ``infer``) of every ``infer`` module this file imports."""
    tree = ast.parse(path.read_text(encoding="utf-8"), filename=str(path))
    found = []
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            for alias in node.names:
                if alias.name == "infer" or alias.name.startswith("infer."):
                    found.append((node.lineno, tuple(alias.name.split(".")[1:])))
        elif isinstance(node, ast.ImportFrom):
            if node.level:
                base = list(parts[:-1])[: len(parts) - node.level]
                module = tuple(base) + tuple((node.module or "").split(".") if node.module else ())
            elif node.module and (node.module == "infer" or node.module.startswith("infer.")):
                module = tuple(node.module.split(".")[1:])
            else:
                continue
            if module:
                found.append((node.lineno, module))
            else:   # ``from infer import x``: x is a sub-module or a name of the face
                for alias in node.names:
                    found.append((node.lineno, (alias.name,)))
    return found


def test_the_walk_sees_imports_inside_functions(tmp_path):
    """The checker itself: a lazy import inside a function body is found."""
    sample = tmp_path / "sample.py"
    sample.write_text("def f():\n    from infer.reporting.folder import atomic_folder\n")
    assert _imported(sample, ("core", "sample")) == [(2, ("reporting", "folder"))]


@pytest.mark.parametrize(("path", "parts"), list(_modules()),
                         ids=lambda value: "/".join(value) if isinstance(value, tuple) else "")
def test_imports_go_down_the_layers(path, parts):
    if parts == ("__init__",):
        return   # the package face imports lazily from every layer
    room = _room(parts)
    assert room in LAYERS, f"{path}: infer/{room} is not a known layer; add it to LAYERS"
    level = LAYERS[room]
    for line, target in _imported(path, parts):
        if not target or target[0] in {"__version__"}:
            continue
        target_room = target[0]
        assert target_room in LAYERS, (
            f"{path}:{line} imports infer.{'.'.join(target)}, which is in no known layer")
        assert LAYERS[target_room] <= level, (
            f"{path}:{line} imports infer.{'.'.join(target)} (layer {target_room}) "
            f"from layer {room}: imports must go down the layers")
        if room == target_room == JOB_LAYER and len(parts) > 2 and len(target) > 1:
            assert target[1] == parts[1], (
                f"{path}:{line}: job {parts[1]} imports job {target[1]}; move the shared "
                f"piece down a layer")


def test_top_level_holds_only_the_face_and_the_base():
    modules = {p.name for p in PACKAGE.glob("*.py")}
    assert modules == TOP_LEVEL_MODULES, (
        f"infer/ top level should hold only {sorted(TOP_LEVEL_MODULES)}; "
        f"found {sorted(modules - TOP_LEVEL_MODULES)} besides")
    packages = {p.name for p in PACKAGE.iterdir() if p.is_dir() and p.name != "__pycache__"}
    assert packages <= set(LAYERS), f"unknown sub-packages: {sorted(packages - set(LAYERS))}"
