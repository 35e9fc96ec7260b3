"""``python -m infer`` behaves exactly like the ``qhat`` command."""

import sys

from infer.cli import main

sys.exit(main())
