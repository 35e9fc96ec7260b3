"""emcee imported without scipy.stats, and scipy.stats still importable afterwards."""

from __future__ import annotations

from conftest import run_python

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
    """In a fresh interpreter (so nothing was imported before): emcee loads, scipy.stats
    stays out of sys.modules, and importing scipy.stats afterwards still works."""
    done = run_python(CODE, timeout=120)
    assert done.returncode == 0, f"the import-order check failed in the child; {done}"
    # standard normal CDF at 0 is 1/2 (closed form): scipy.stats works after the loader
    assert float(done.stdout) == 0.5, f"scipy.stats.norm.cdf(0) printed {done.stdout!r}"


def test_loaded_emcee_is_the_module_a_plain_import_gives():
    from infer.inference.emcee_loader import load_emcee

    emcee = load_emcee()
    import emcee as plain

    assert emcee is plain, "load_emcee must return the same module object as 'import emcee'"
