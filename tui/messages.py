"""Messages the explorer's background work posts back to the app.

Each carries the ``generation`` of the request it answers; the app applies a
message only when that is still the newest request, so late answers to old
questions are dropped.
"""

from __future__ import annotations

from dataclasses import dataclass

from textual.message import Message

import chem
from tui.widgets.plot_area import PlotImage


@dataclass
class Plotted(Message):
    """The plot of request ``generation`` was built, ready to show as it is."""

    generation: int
    image: PlotImage
    title: str


@dataclass
class Solved(Message):
    """The mixture of request ``generation`` was solved (``result.converged`` may be False)."""

    generation: int
    result: chem.Equilibrium
    capacity: float | None = None
    """β at the solved pH, mol/(L·pH); None when the solve did not converge."""
    plot: Plotted | None = None
    """The plot for this result when it was drawn in time (else a :class:`Plotted` follows, if any)."""


@dataclass
class AutosaveWritten(Message):
    """An autosave write from the worker ended: ``problem`` is None when it worked."""

    problem: str | None = None
