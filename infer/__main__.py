"""``python -m infer`` behaves exactly like the ``qhat`` command."""

import sys

from infer.cli import main

status = main()
if status == 130:
    # An interrupted run exits 130 (docs/command-line.md). Under ``python -m``, CPython 3.12
    # would instead end the process with SIGINT when the KeyboardInterrupt had been raised
    # inside a string ``exec`` (a dataclass built by a lazy import, say): the evaluation sets
    # a flag that Py_RunMain checks after the module returns, even though qhat caught the
    # exception (Modules/main.c, pymain_run_module; Python/pythonrun.c, run_eval_code_obj).
    # Every string evaluation clears that flag when it starts.
    exec("None")
sys.exit(status)
