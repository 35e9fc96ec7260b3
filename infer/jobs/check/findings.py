"""The finding record of ``qhat check`` and the wording shared by the finding makers."""

from __future__ import annotations

from dataclasses import dataclass, field

from infer.core.text import fmt
from infer.files.claim import Claim

__all__ = ["Finding", "SEVERITIES", "claimed_text"]

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
