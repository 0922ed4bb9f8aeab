"""What the architecture predicts, placed into the score mapping (JSON keys are additions only).

* ``pairs[j]["super_period"]``: near first/second-order resonance, LXW12 (see :mod:`.super_periods`;
  the super-period summary is under ``"days"``);
* ``pairs[j]["room_for_planet"]``: the test planet in the gap (see :mod:`.packing`);
* ``system["packing"]``: probability that the system is packed, assumptions;
* ``system["companion_transits"]``: per planet not known to transit (see :mod:`.companion_transits`);
* ``system["transit_probability_curve"]``: a hypothetical planet against period.

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


def add_predictions(post, options, pairs, system):
    """Add the prediction blocks to ``pairs`` (list of per-pair dicts) and ``system`` (dict) in place."""
    test_mass = getattr(options, "test_planet_mass", None)
    z_free = getattr(options, "ttv_free_eccentricity", 0.0) or 0.0
    by_pair = {(p["inner"], p["outer"]): p for p in pairs}
    for sp in super_period_block(post, free_eccentricity=z_free):
        entry = by_pair.get((sp["inner"], sp["outer"]))
        if entry is not None:
            entry["super_period"] = {("days" if k == "super_period_day" else k): v
                                     for k, v in sp.items() if k not in ("inner", "outer")}
    fast = str(getattr(getattr(options, "mode", None), "value", getattr(options, "mode", ""))) == "fast"
    pk = packing_block(post, test_mass_mearth=test_mass, max_draws=MAX_DRAWS_FAST if fast else MAX_DRAWS)
    if pk is not None:
        for gap in pk.pop("gaps"):
            entry = by_pair.get((gap["inner"], gap["outer"]))
            if entry is not None:
                entry["room_for_planet"] = {k: v for k, v in gap.items() if k not in ("inner", "outer")}
        system["packing"] = pk
    ct = companion_transit_block(post)
    if ct:
        system["companion_transits"] = ct
    curve = transit_probability_curve(post)
    if curve is not None:
        system["transit_probability_curve"] = curve
    return pairs, system
