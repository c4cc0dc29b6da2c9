"""Exceptions and warnings raised by :mod:`rheology`."""


class RheologyError(ValueError):
    """Input that is impossible, inconsistent or in the wrong units.

    Messages name the field (or argument), the value given and what was expected.
    """


class ScenarioError(RheologyError):
    """A scenario file or mapping that cannot be used; the message carries the field path."""


class TableError(RheologyError):
    """A reference-table row that fails validation; the message names file, row and column."""


class RheologyWarning(UserWarning):
    """Input outside a law's calibrated range, or a magnitude that looks like a units slip."""
