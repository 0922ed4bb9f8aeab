"""What the architecture predicts, placed into the score mapping (JSON keys are additions only).

* pairs: ``super_period_*`` and ``ttv_amplitude_*`` (LXW12, see :mod:`.super_periods`) and
  ``room_*`` (the test planet in the gap, see :mod:`.packing`);
* system: ``timing`` (assumptions), ``packing`` (probability that the system is packed),
  ``transit_probability_curve`` (a hypothetical planet against period);
* planets: ``transit_probability*`` and ``transit_impact_parameter`` for planets not known to
  transit (see :mod:`.companion_transits`).

Options read from the analysis options (any object; absent attributes take the defaults):
``test_planet_mass`` [Earth masses, None = geometric mean of the neighbours] and
``ttv_free_eccentricity`` (assumed |Z_free|, default 0); in ``mode`` "fast" the packing
grid uses fewer draws.
"""
from __future__ import annotations

from .companion_transits import companion_transit_block, transit_probability_curve
from .packing import MAX_DRAWS, MAX_DRAWS_FAST, packing_block
from .super_periods import super_period_block

__all__ = ["add_predictions"]


def add_predictions(post, options, pairs, system, planets=None):
    """Add the prediction keys to ``pairs`` (per-pair dicts), ``system`` and ``planets`` (per-planet dicts)."""
    test_mass = getattr(options, "test_planet_mass", None)
    z_free = getattr(options, "ttv_free_eccentricity", 0.0) or 0.0
    sp_pairs, sp_system = super_period_block(post, free_eccentricity=z_free)
    for entry, new in zip(pairs, sp_pairs):
        entry.update(new)
    system.update(sp_system)
    fast = str(getattr(getattr(options, "mode", None), "value", getattr(options, "mode", ""))) == "fast"
    pk = packing_block(post, test_mass_mearth=test_mass, max_draws=MAX_DRAWS_FAST if fast else MAX_DRAWS)
    if pk is not None:
        for entry, new in zip(pairs, pk[0]):
            entry.update(new)
        system.update(pk[1])
    if planets is not None:
        for entry, new in zip(planets, companion_transit_block(post)):
            entry.update(new)
    curve = transit_probability_curve(post)
    if curve is not None:
        system["transit_probability_curve"] = curve
    return pairs, system
