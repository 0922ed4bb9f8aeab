"""The priors an analysis runs under, resolved once from its options.

:func:`resolve_priors` is the one place that turns ``--prior`` / ``--incl-prior`` (or their
absence) into :class:`~archsys.inference.priors.Prior` objects: the joint engine samples under
them and the report's provenance names them.  The options were validated when they were made
(:func:`archsys.options.check_prior`); the quantity is checked here again because the library
may be handed options built elsewhere.
"""
from __future__ import annotations

from dataclasses import dataclass

from ..errors import InputError
from .prior_files import default_prior, load_prior

__all__ = ["PriorChoice", "resolve_priors", "DEFAULT_NO_DATA_PRIOR"]

#: Eccentricity prior of planets without eccentricity data (multi-planet systems, single planets)
#: when the user names none: see the README ("Priors") for the reasons.
DEFAULT_NO_DATA_PRIOR = ("ecc-vaneylen2019-multis", "ecc-kipping2013-rv")


@dataclass(frozen=True)
class PriorChoice:
    """``eccentricity``: the user's prior on e (None: flat on [0, 1)); ``sigma``: the prior on the
    mutual-inclination dispersion; ``no_data``: the eccentricity priors drawn for planets without
    eccentricity data when the user names none (multi-planet systems, single planets)."""

    eccentricity: object
    sigma: object
    no_data: tuple
    ecc_named: bool = False
    sigma_named: bool = False

    def applied(self, quantity):
        """The prior applied to ``quantity`` ("eccentricity": the flat ``ecc-uniform`` when none is named)."""
        if quantity == "eccentricity":
            return self.eccentricity if self.eccentricity is not None else default_prior("eccentricity")
        return self.sigma


def _checked(name, option, quantity):
    prior = load_prior(name)
    if prior.quantity != quantity:
        raise InputError(f"{option} {name}: is a prior on {prior.quantity}, not {quantity}")
    return prior


def resolve_priors(opts) -> PriorChoice:
    """The priors of an analysis under ``opts`` (:class:`archsys.options.AnalysisOptions`)."""
    ecc = _checked(opts.ecc_prior, "--prior", "eccentricity") if opts.ecc_prior else None
    sigma = (_checked(opts.incl_prior, "--incl-prior", "mutual_inclination_sigma") if opts.incl_prior
             else default_prior("mutual_inclination_sigma"))
    no_data = tuple(load_prior(n) for n in DEFAULT_NO_DATA_PRIOR)
    return PriorChoice(ecc, sigma, no_data, ecc_named=bool(opts.ecc_prior), sigma_named=bool(opts.incl_prior))
