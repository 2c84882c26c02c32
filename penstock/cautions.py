"""Cautions and unit-aware text, shared by the loader, the route builder and the model.

A :class:`Warning_` is one caution for the Cautions sheet; :class:`Say` formats a
quantity in the case's unit system for the reader.
"""

from __future__ import annotations

from dataclasses import dataclass

from .constants import FOOT, INCH

#: The standing caution printed on every report.
STANDING_CAUTION = (
    "These are planning-level results. They do not replace a design: the applicable codes "
    "and standards govern the penstock's design, and a licensed professional engineer must "
    "review every result before it is used for design, procurement or construction."
)


class Say:
    """Formats quantities in cautions and labels in the case's unit system.

    The model computes in SI; text meant for the reader (cautions, notes) follows the
    case's units (``site.units``), as the tables do in the writers.
    """

    def __init__(self, system: str = "si"):
        self.us = system == "us"

    def m(self, x: float, digits: int = 2) -> str:
        """A length or head."""
        return f"{x / FOOT:.{digits}f} ft" if self.us else f"{x:.{digits}f} m"

    def ch(self, x: float) -> str:
        """A chainage."""
        return f"{x / FOOT:.0f} ft" if self.us else f"{x:.1f} m"

    def q(self, x: float) -> str:
        """A flow."""
        return f"{x / FOOT**3:.4g} cfs" if self.us else f"{x:.4g} m³/s"

    def v(self, x: float) -> str:
        """A velocity."""
        return f"{x / FOOT:.2f} ft/s" if self.us else f"{x:.2f} m/s"

    def mm(self, x: float) -> str:
        """A thickness."""
        return f"{x / INCH:.3f} in" if self.us else f"{1e3 * x:.1f} mm"


@dataclass
class Warning_:
    """One caution raised by a check."""

    topic: str
    message: str
    chainage: float | None = None
    flow: float | None = None
    severity: str = "warning"   # "warning" or "note"
