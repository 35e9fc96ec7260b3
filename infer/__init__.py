"""qhat: mutation-selection balance inference.

Import the library modules directly (``from infer import balance``); this package
module stays light so that the command line starts fast.
"""

__version__ = "0.1.0"

__all__ = ["__version__"]
