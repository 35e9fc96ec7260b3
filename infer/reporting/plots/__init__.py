"""Figures drawn from typed results (matplotlib imported only here)."""
