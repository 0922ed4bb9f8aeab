"""Where a posterior quantity comes from: the data, the prior alone, an assumption, or an exact value.

The engines attach a :class:`Basis` to each planet's eccentricity and inclination in
:attr:`~archsys.inference.posterior.Posterior.notes`.  A :class:`Basis` is the phrase the
report shows (``ecc_basis``, ``inclination_basis``: it *is* that string) and carries a
:class:`Origin`, which scores and the output layer test instead of matching words.
"""
from __future__ import annotations

import enum

__all__ = ["Origin", "Basis", "origin_of"]


class Origin(str, enum.Enum):
    """Where a value comes from (the document's ``ecc_origin`` / ``inclination_origin``)."""

    DATA = "data"          # a measured summary constrains it (posterior of the data)
    PRIOR = "prior"        # no data: the population prior alone
    ASSUMED = "assumed"    # an assumed value (e.g. circular orbits when nothing is given)
    FIXED = "fixed"        # an exact value given in the input


class Basis(str):
    """A note on how a quantity was obtained (its text) and where it comes from (:attr:`origin`)."""

    def __new__(cls, text, origin):
        obj = super().__new__(cls, text)
        obj.origin = Origin(origin)
        return obj

    def __reduce__(self):
        return Basis, (str(self), self.origin.value)

    def __repr__(self):
        return f"Basis({str(self)!r}, {self.origin.value!r})"


def origin_of(note) -> Origin:
    """The :class:`Origin` of a note; a plain note (no :class:`Basis`) counts as data."""
    return getattr(note, "origin", Origin.DATA)
