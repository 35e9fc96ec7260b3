"""``qhat simulate``: not built yet."""

from __future__ import annotations


def add_arguments(parser) -> None:
    """Register the options of ``qhat simulate``."""


def run(args) -> int:
    """Run ``qhat simulate``."""
    from infer.errors import InputError

    raise InputError("this command is not built yet", source="qhat simulate")
