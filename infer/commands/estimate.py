"""``qhat estimate``: not built yet."""

from __future__ import annotations


def add_arguments(parser) -> None:
    """Register the options of ``qhat estimate``."""


def run(args) -> int:
    """Run ``qhat estimate``."""
    from infer.errors import InputError

    raise InputError("this command is not built yet", source="qhat estimate")
