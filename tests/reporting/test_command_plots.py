"""The figures of ``qhat equilibrium --plot`` and ``qhat simulate --plot``.

Each PNG gets the mode any new file gets under the user's umask, 0o666 & ~umask (POSIX
open(2) with mode 0666, common practice for data files), and each figure is drawn without
pyplot with its axes labelled in plain text (no mathtext: user text is not parsed).
"""

from __future__ import annotations

import os
import stat

import numpy as np
import pytest
from conftest import call_qhat

EQUILIBRIUM = ["equilibrium", "--mu", "1e-5", "--s", "0.1", "--h", "0.3"]
SIMULATE = ["simulate", "--Ne", "40", "--mu", "2e-3", "--s", "0.05", "--h", "0.3",
            "--nu", "1e-3", "--replicates", "4", "--generations", "200", "--seed", "1"]
PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"   # W3C PNG specification (2003), 5.2


@pytest.fixture
def umask():
    """Set the process umask for one test and restore it after."""
    saved = os.umask(0o022)
    os.umask(saved)

    def set_mask(mask: int) -> None:
        os.umask(mask)

    yield set_mask
    os.umask(saved)


@pytest.mark.parametrize("mask", [0o022, 0o077])
@pytest.mark.parametrize("command", [EQUILIBRIUM, SIMULATE], ids=["equilibrium", "simulate"])
def test_plot_mode_follows_the_umask(tmp_path, capsys, umask, mask, command):
    umask(mask)
    path = tmp_path / "plot.png"
    status, _, stderr = call_qhat([*command, "--plot", path], capsys)
    assert status == 0, f"{command[0]} --plot failed: {stderr}"
    mode = stat.S_IMODE(path.stat().st_mode)
    assert mode == 0o666 & ~mask, (
        f"{command[0]} wrote {oct(mode)} under umask {oct(mask)}; want {oct(0o666 & ~mask)}")
    assert path.read_bytes()[:8] == PNG_SIGNATURE, f"{path} is not a PNG"
    assert [p.name for p in tmp_path.iterdir()] == ["plot.png"], "a temporary was left behind"


def _equilibrium_options(**changes):
    import argparse

    from infer.commands import equilibrium

    parser = argparse.ArgumentParser()
    equilibrium.add_arguments(parser)
    return {**equilibrium.parse_options(parser.parse_args(EQUILIBRIUM[1:])), **changes}


@pytest.mark.parametrize("inheritance", ["autosomal", "x-linked"])
def test_equilibrium_figure_axis_labels(inheritance):
    from matplotlib.figure import Figure

    from infer.reporting.plots.equilibrium import equilibrium_figure

    figure = equilibrium_figure(_equilibrium_options(inheritance=inheritance))
    assert isinstance(figure, Figure) and figure.canvas.manager is None, (
        "the figure must be made without pyplot (no figure manager)")
    top, strip = figure.axes
    ylabel = top.get_ylabel()
    assert "equilibrium frequency" in ylabel and "q\u0302" in ylabel, ylabel
    assert "$" not in ylabel and "\\hat" not in ylabel, f"mathtext left in {ylabel!r}"
    for formatter in (top.yaxis.get_major_formatter(), top.yaxis.get_minor_formatter()):
        label = formatter(1e-3)
        assert "$" not in label, f"log tick labels must be plain text, not {label!r}"
    assert strip.get_xlabel() == "dominance coefficient h", strip.get_xlabel()
    assert strip.get_ylabel() == "outside range", strip.get_ylabel()
    h = np.asarray(top.get_lines()[0].get_xdata(), dtype=float)
    assert h[0] == 0.0 and h[-1] == 1.0, f"the curve must span h in [0, 1]: {h[0]}..{h[-1]}"


def test_simulation_figure_axis_labels():
    import argparse

    from infer.core.drift import stationary as drift
    from infer.core.wright_fisher import wright_fisher
    from infer.reporting.plots.simulation import simulation_figure

    settings = argparse.Namespace(Ne=40.0, mu=2e-3, s=0.05, h=0.3, nu=1e-3, replicates=4)
    result = wright_fisher(40.0, 2e-3, 0.05, 0.3, 1e-3, rng=np.random.default_rng(2),
                           replicates=4, generations=200, burn_in=40)
    wright = drift.stationary_summary(40.0, 2e-3, 0.05, 0.3, 1e-3)
    figure = simulation_figure(result, settings, wright)
    assert figure.canvas.manager is None, "the figure must be made without pyplot"
    left, right = figure.axes
    assert left.get_xlabel() == "generation", left.get_xlabel()
    assert left.get_ylabel() == "frequency q of the deleterious allele", left.get_ylabel()
    assert left.get_title() == "4 of 4 trajectories", left.get_title()
    assert right.get_xlabel() == "frequency q", right.get_xlabel()
    assert right.get_ylabel() == "probability density", right.get_ylabel()
    assert len(right.lines) == 1, "Wright's density must be drawn over the histogram"


def test_command_modules_draw_nothing_themselves():
    """The commands only parse, call and render: no matplotlib in their source."""
    import inspect

    from infer.commands import equilibrium, simulate

    for module in (equilibrium, simulate):
        source = inspect.getsource(module)
        assert "matplotlib" not in source and "savefig" not in source, (
            f"{module.__name__} still draws or saves a figure itself")
