"""``qhat compare STUDY.toml``: the study's data weighed under competing models.

Models: ``balance`` (the study as written) and ``heterozygote-advantage`` (h < 0, a
balanced polymorphism with mutation) and ``founder`` (a founder event set the allele's
frequency ``generations_ago`` generations ago, no equilibrium since). Prints the
evidence of each, Bayes factors, posterior model probabilities under the prior odds and
their sensitivity to the extra parameters' priors; ``--out DIR`` writes report.md,
report.html and compare.json atomically; ``--json`` prints the document. The job is
:func:`infer.jobs.compare.run.compare_models`; the renderers are in
:mod:`infer.reporting.compare_report`. Exit status 0, or 2 on bad input.
"""

from __future__ import annotations

import sys

from infer.commands import options as checks

__all__ = ["add_arguments", "run"]


def add_arguments(parser) -> None:
    """Register the options of ``qhat compare``."""
    parser.add_argument("study", metavar="STUDY.toml", help="the study file (TOML); an "
                        "optional [compare] table sets models, prior odds and extra priors")
    parser.add_argument("--models", metavar="LIST", help="comma-separated models to weigh: "
                        "balance, heterozygote-advantage, founder (default every one that "
                        "applies; founder needs [compare] founder = { generations_ago = N })")
    parser.add_argument("--method", metavar="M", help="auto (quadrature up to three free "
                        "parameters, bridge sampling above; default), quadrature or bridge")
    parser.add_argument("--seed", metavar="N", help="seed of bridge sampling (default: the "
                        "study's [sampler] seed, else 1)")
    parser.add_argument("--out", metavar="DIR", help="write report.md, report.html and "
                        "compare.json into this folder")
    parser.add_argument("--force", action="store_true", help="replace an existing folder")
    checks.add_json(parser, "the comparison")
    checks.add_quiet(parser)


def _settings(args, document: dict, source: str):
    from dataclasses import replace

    from infer.errors import InputError
    from infer.files.compare_table import METHODS, parse_compare_table, parse_models

    try:
        settings = parse_compare_table(document.get("compare"))
    except InputError as error:
        raise InputError(error.message, source=source, field=error.field) from None
    if args.models is not None:
        try:
            models = parse_models(args.models, "--models")
        except InputError as error:
            raise checks.option_error("--models", error.message) from None
        settings = replace(settings, models=models)
    if args.method is not None:
        settings = replace(settings, method=checks.option_choice(args.method, "--method",
                                                                 METHODS))
    return settings


def run(args) -> int:
    """Run ``qhat compare``."""
    import tomllib

    from infer.errors import InputError
    from infer.files.reading import invalid_toml, read_text
    from infer.files.study import parse_study
    from infer.reporting.folder import check_destination, out_path, terminate_as_interrupt

    seed = checks.seed(args.seed)
    source = str(args.study)
    try:
        document = tomllib.loads(read_text(args.study))
    except tomllib.TOMLDecodeError as error:
        raise invalid_toml(error, source=source) from None
    study = parse_study(document, source=source)
    settings = _settings(args, document, source)
    out = out_path(args.out)
    if out is not None:
        check_destination(out, args.force)
    with terminate_as_interrupt():
        from infer.jobs.compare.run import compare_models
        from infer.reporting import compare_report

        try:
            result = compare_models(study, settings, seed=seed)
        except InputError as error:
            if error.source is None:
                raise InputError(error.message, source=source, field=error.field) from None
            raise
        if out is not None:
            compare_report.write_compare_report(result, out, force=args.force)
    if args.json:
        from infer.reporting.jsonout import dumps

        sys.stdout.write(dumps(compare_report.compare_document(result)))
    else:
        print(compare_report.text_report(result, out))
    return 0
