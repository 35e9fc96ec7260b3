"""Errors that carry where the bad input was, so the command line can print one line."""

from __future__ import annotations

__all__ = ["InputError", "ConvergenceWarning"]


def _one_line(text) -> str:
    """Whitespace collapsed and control characters escaped: always one printable line."""
    flat = " ".join(str(text).split())
    return "".join(c if c.isprintable() else repr(c)[1:-1] for c in flat)


class InputError(ValueError):
    """Bad user input: a study, claim or batch file, or a command-line option.

    Parameters
    ----------
    message : str
        What is wrong, quoting the bad value (``"12 is more than total 10"``).
    source : str, optional
        The file name or ``"--option"`` the input came from.
    field : str, optional
        The field path inside the file (``"observations[2].affected"``), counted from 1.

    Examples
    --------
    >>> str(InputError("12 is more than total 10", source="study.toml",
    ...                field="observations[2].affected"))
    'study.toml: observations[2].affected: 12 is more than total 10'
    """

    def __init__(self, message: str, *, source: str | None = None, field: str | None = None):
        self.message = message
        self.source = source
        self.field = field
        super().__init__(str(self))

    def __str__(self) -> str:
        parts = [_one_line(p) for p in (self.source, self.field, self.message) if p]
        return ": ".join(parts)

    def located(self, source: str | None = None, field_prefix: str | None = None) -> InputError:
        """Return a copy with the source set and the field prefixed (for nested parsers)."""
        field = self.field
        if field_prefix:
            field = f"{field_prefix}.{field}" if field else field_prefix
        return InputError(self.message, source=source or self.source, field=field)


class ConvergenceWarning(UserWarning):
    """The sampler stopped at its step cap before the convergence criteria held.

    Carries the diagnostics so a caller can decide whether to extend, warn or fail.
    """

    def __init__(self, message: str, *, r_hat=None, ess_bulk=None, autocorr_time=None):
        self.r_hat = r_hat
        self.ess_bulk = ess_bulk
        self.autocorr_time = autocorr_time
        super().__init__(message)
