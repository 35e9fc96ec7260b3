"""emcee imported without scipy.stats, and scipy.stats still importable afterwards."""

from __future__ import annotations

import subprocess
import sys

CODE = """
import sys
from infer.inference.emcee_loader import load_emcee
emcee = load_emcee()
assert "scipy.stats" not in sys.modules, "scipy.stats was imported"
assert hasattr(emcee, "EnsembleSampler") and emcee.moves.kde.gaussian_kde is None
import scipy.stats
print(scipy.stats.norm.cdf(0.0))
"""


def test_emcee_without_scipy_stats_then_scipy_stats_as_usual():
    done = subprocess.run([sys.executable, "-c", CODE], capture_output=True, text=True,
                          timeout=120)
    assert done.returncode == 0, done.stderr
    assert float(done.stdout) == 0.5  # standard normal CDF at 0 (closed form)


def test_loaded_emcee_is_the_module_a_plain_import_gives():
    from infer.inference.emcee_loader import load_emcee

    emcee = load_emcee()
    import emcee as plain

    assert emcee is plain
