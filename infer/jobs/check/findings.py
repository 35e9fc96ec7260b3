"""The finding record of ``qhat check`` and the wording shared by the finding makers."""

from __future__ import annotations

from dataclasses import dataclass, field

from infer.core.text import fmt
from infer.files.claim import Claim

__all__ = ["Finding", "SEVERITIES", "claimed_text", "fmt_small", "signed_percent"]

#: positive values below this are written "< 1e-12" (a median of 1e-65 reads as a bug)
TINY = 1e-12

SEVERITIES = ("error", "warning", "note")


@dataclass(frozen=True)
class Finding:
    """One finding of a check.

    Attributes
    ----------
    severity : str
        ``"error"`` (the numbers do not fit: exit status 3), ``"warning"`` or ``"note"``.
    code : str
        Stable identifier (see the module docstring).
    message : str
        One sentence with the numbers.
    details : dict
        The computation behind it (JSON-ready numbers and text).
    """

    severity: str
    code: str
    message: str
    details: dict = field(default_factory=dict)

    def as_dict(self) -> dict:
        """The finding for JSON."""
        return {"severity": self.severity, "code": self.code, "message": self.message,
                "details": self.details}



def claimed_text(claim: Claim, names) -> str:
    """The claimed values of ``names`` as text: ``mu = 1e-05, s = 0.1``."""
    return ", ".join(f"{n} = {fmt(claim.values[n])}" for n in names)


def fmt_small(value) -> str:
    """:func:`infer.core.text.fmt`, positive values below :data:`TINY` as "< 1e-12"."""
    if value is not None and not isinstance(value, bool) and 0 < float(value) < TINY:
        return f"< {TINY:g}"
    return fmt(value)


def signed_percent(share: float, digits: int = 2) -> str:
    """A signed percentage without a signed zero: "+1.50 %", "0.00 %"."""
    text = f"{100 * share:+.{digits}f}"
    return ("0." + "0" * digits if float(text) == 0 else text) + " %"
