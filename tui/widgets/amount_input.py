"""A one-line entry for an amount with its unit, checked as it is typed."""

from __future__ import annotations

from textual.validation import ValidationResult, Validator

import chem
from tui.widgets.entry import Entry


class AmountValidator(Validator):
    """Accepts what :func:`chem.parse_concentration` accepts for a reagent of the given molar mass."""

    def __init__(self, molar_mass: float | None) -> None:
        super().__init__()
        self.molar_mass = molar_mass

    def validate(self, value: str) -> ValidationResult:
        try:
            chem.parse_concentration(value, molar_mass=self.molar_mass)
        except chem.ChemError as exc:
            return self.failure(str(exc), value)
        return self.success()


class AmountInput(Entry):
    """An amount such as ``25 mM`` or ``1.2 g/L``; a bad entry is marked and explained."""

    def __init__(self, value: str = "", *, molar_mass: float | None = None, compact: bool = True,
                 id: str | None = None, classes: str | None = None) -> None:
        """Create the entry.

        Args:
            value: Initial text.
            molar_mass: Molar mass of the reagent (g/mol), so g/L and mg/L are accepted; None refuses them.
            compact: Draw without a border (for use inside a one-line row).
            id: Widget id.
            classes: CSS classes.
        """
        self._validator = AmountValidator(molar_mass)
        super().__init__(value, placeholder="amount, e.g. 25 mM", validators=[self._validator],
                         validate_on=["changed", "submitted"], compact=compact, select_on_focus=True,
                         id=id, classes=classes)

    def use_molar_mass(self, molar_mass: float | None) -> None:
        """Check amounts for a reagent of this molar mass (g/mol; None refuses g/L and mg/L)."""
        self._validator.molar_mass = molar_mass
        self.validate(self.value)

    @property
    def concentration(self) -> float | None:
        """The amount in mol/L, or None while the text is not a valid amount."""
        try:
            return chem.parse_concentration(self.value, molar_mass=self._validator.molar_mass)
        except chem.ChemError:
            return None

    @property
    def problem(self) -> str | None:
        """Why the current text is refused, or None when it is a valid amount."""
        result = self.validate(self.value)
        if result is None or result.is_valid:
            return None
        return result.failure_descriptions[0]
