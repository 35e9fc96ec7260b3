"""Import emcee without the scipy.stats import it does for a move qhat never uses.

``emcee.moves`` imports ``emcee.moves.kde``, which tries ``from scipy.stats import
gaussian_kde`` for its KDE move and sets it to None when the import fails. Importing
scipy.stats costs about 0.4 s on a 2-core machine, a sixth of a whole ``qhat estimate``
run, and nothing else on that path needs it. So, when scipy.stats is not loaded yet, it
is marked unavailable (a ``None`` entry in ``sys.modules`` makes its import raise
ImportError, as the import system documents) for the duration of ``import emcee`` only,
and the mark is removed afterwards: a later ``import scipy.stats`` works as usual. Only
emcee's ``KDEMove`` is left without its kernel density estimator.
"""

from __future__ import annotations

import sys

__all__ = ["load_emcee"]


def load_emcee():
    """Return the emcee module, importing it without scipy.stats if that is not loaded."""
    if "emcee" in sys.modules or "scipy.stats" in sys.modules:
        import emcee

        return emcee
    sys.modules["scipy.stats"] = None
    try:
        import emcee
    finally:
        if sys.modules.get("scipy.stats", 0) is None:
            del sys.modules["scipy.stats"]
    return emcee
