"""The named choices of the life cycle, spelled once: inheritance, model and mode.

Study and claim files, observation tables and command-line options all validate
against these tuples (docs/files.md and docs/command-line.md). Standard library only, so that the
command line can offer them as ``choices`` without importing numpy.
"""

from __future__ import annotations

__all__ = [
    "INHERITANCES",
    "MODELS",
    "MODES",
    "AUTOSOMAL_MODES",
    "X_LINKED_MODES",
    "NEW_MUTATION_MODES",
]

#: how the locus is inherited
INHERITANCES: tuple[str, ...] = ("autosomal", "x-linked")

#: the population model: deterministic balance or Wright's stationary density (finite Ne)
MODELS: tuple[str, ...] = ("deterministic", "drift")

#: which genotypes are affected: Aa and aa, aa only, or hemizygous sons
MODES: tuple[str, ...] = ("dominant", "recessive", "x-linked-male")

#: the modes of an autosomal locus (and of daughters at an X-linked one)
AUTOSOMAL_MODES: tuple[str, ...] = ("dominant", "recessive")

#: the modes of an X-linked study
X_LINKED_MODES: tuple[str, ...] = ("x-linked-male",)

#: the modes in which a new mutation shows in its carrier (sporadic cases, registries)
NEW_MUTATION_MODES: tuple[str, ...] = ("dominant", "x-linked-male")
