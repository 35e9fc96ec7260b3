"""``qhat check CLAIM.toml``: a consistency check of a paper's published numbers.

Do they fit together under mutation-selection balance?

Prints each finding with its severity; ``--json`` prints ``{consistent, findings,
implied}`` (with ``schema_version`` and ``qhat_version``); ``-q`` is accepted (there is no
progress to silence); ``--out DIR`` writes ``report.md``, ``check.json`` and ``balance.png``
atomically. Exit status 0 when consistent, 3 when any finding is an error, 2 on bad input.
The check is :func:`infer.jobs.check.run.check_claim`; the renderers are in
:mod:`infer.reporting.check_report`.
"""

from __future__ import annotations

import sys

from infer.commands import options as checks

__all__ = ["add_arguments", "run"]

EXIT_OK, EXIT_INCONSISTENT = 0, 3


def add_arguments(parser) -> None:
    """Register the options of ``qhat check``."""
    parser.add_argument("claim", metavar="CLAIM.toml", help="the claim file (TOML)")
    checks.add_json(parser, "{consistent, findings, implied}")
    checks.add_quiet(parser)
    parser.add_argument("--out", metavar="DIR", help="write report.md, check.json and "
                        "balance.png into this folder")
    parser.add_argument("--force", action="store_true", help="replace an existing folder")
    parser.add_argument("--threshold", default="0.01", metavar="P",
                        help="predictive p-values and evidence values below P are errors "
                        "(default 0.01)")


def _threshold(text: str) -> float:
    """``--threshold``, checked by :func:`infer.commands.options.check_threshold`."""
    from infer.commands.options import check_threshold

    return check_threshold(text)


def run(args) -> int:
    """Run ``qhat check``."""
    from infer.files.claim import load_claim
    from infer.reporting.folder import check_destination, out_path, terminate_as_interrupt

    threshold = _threshold(args.threshold)
    claim = load_claim(args.claim)
    out = out_path(args.out)
    if out is not None:
        check_destination(out, args.force)
    with terminate_as_interrupt():
        from infer.jobs.check.run import check_claim
        from infer.reporting import check_report

        result = check_claim(claim, threshold=threshold)
        if out is not None:
            check_report.write_check_report(result, out, force=args.force)
    if args.json:
        from infer.reporting.jsonout import dumps

        sys.stdout.write(dumps(check_report.check_document(result)))
    else:
        print(check_report.text_report(result, out))
    return EXIT_OK if result.consistent else EXIT_INCONSISTENT
