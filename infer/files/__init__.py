"""Readers of the files users write: study and claim TOML, loci CSV."""
