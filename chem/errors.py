"""Typed errors raised by the core.

Invalid input raises a :class:`ChemError` subclass with a one-line message.
A solve that fails to converge does *not* raise: the returned
:class:`~chem.model.Equilibrium` says so in ``converged``.
"""

from __future__ import annotations


class ChemError(ValueError):
    """Base class of every error the core raises on bad input."""


class ModelError(ChemError):
    """A model object (system, reagent, mixture) was built from bad values."""


class LibraryError(ChemError):
    """The built-in library (``chem/data``) is inconsistent or a name is unknown."""


class UnitError(ChemError):
    """An amount could not be read (unknown unit, negative, not finite)."""


class PresetError(ChemError):
    """A preset file could not be read, validated or written.

    The message always names the file, and where it applies the entry and
    the field, e.g. ``rinse.toml: ingredient[2].conc: unknown unit 'kg'``.
    """
