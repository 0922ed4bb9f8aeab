"""Survey-level view of the architecture's predictions (population.json block ``predictions``).

Reads the flattened per-system and per-pair rows (the same columns as systems.csv
and pairs.csv), so it needs no posterior: per-system probability of being packed
(Barnes & Raymond 2004; Fang & Margot 2013) and per-pair super-periods of
near-resonant pairs (Lithwick, Xie & Wu 2012).
"""
from __future__ import annotations

import math

__all__ = ["prediction_population"]


def _num(x):
    return isinstance(x, (int, float)) and not isinstance(x, bool) and math.isfinite(x)


def prediction_population(system_rows, pair_rows):
    """JSON-ready block from systems.csv / pairs.csv rows (dicts)."""
    packed = [{"system": r["system"], "packed_probability": r["packing_packed_probability"]}
              for r in system_rows if _num(r.get("packing_packed_probability"))]
    probs = [p["packed_probability"] for p in packed]
    sup = [{"system": r["system"], "inner": r.get("inner"), "outer": r.get("outer"),
            "resonance": r.get("super_period_resonance"), "order": r.get("super_period_order"),
            "super_period_days": {k: r.get(f"super_period_days_{k}") for k in ("median", "lo", "hi")}}
           for r in pair_rows if _num(r.get("super_period_days_median"))]
    return {
        "packing": {
            "systems": len(packed),
            "expected_number_packed": sum(probs) if probs else None,
            "systems_packed_probability_above_half": sum(1 for p in probs if p > 0.5),
            "per_system": packed,
            "note": ("a system is packed in a draw when no gap can hold a test planet by the tool's Hill, "
                     "Gladman and AMD criteria; statistical estimate, not a guarantee"),
            "citation": "Barnes & Raymond 2004; Fang & Margot 2013",
        },
        "super_periods": {
            "pairs": len(sup),
            "first_order": sum(1 for s in sup if s["order"] == 1),
            "second_order": sum(1 for s in sup if s["order"] == 2),
            "per_pair": sup,
            "citation": "Lithwick, Xie & Wu 2012",
        },
    }
