"""Command implementations, one module per ``qhat`` command."""
