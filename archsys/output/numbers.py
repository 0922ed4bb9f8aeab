"""Rounding values by their uncertainty, for tables and reports.

Rule (common practice in journals): two significant figures on the larger of
the two errors; the value and the other error are rounded to the same decimal
place.  Example: 0.12345 +0.00123 -0.00098 -> 0.1235 +0.0012 -0.0010.
"""
from __future__ import annotations

import math

__all__ = ["decimals_for", "round_uncertain", "fmt_summary", "fmt_plain"]


def decimals_for(err, sig=2):
    """Number of decimals that gives ``sig`` significant figures on ``err`` (may be negative)."""
    if not err or not math.isfinite(err) or err <= 0:
        return None
    return sig - 1 - int(math.floor(math.log10(err)))


def _fmt(x, dec):
    if dec is None:
        return f"{x:.4g}"
    if dec <= 0:
        if not math.isfinite(x):
            return f"{x}"
        # integer arithmetic: f"{5.97e24:.0f}" would print binary noise (5970000000000000281018368)
        q = 10 ** (-dec)
        return str(int(round(x / q)) * q)
    return f"{x:.{dec}f}"


def round_uncertain(value, minus, plus, sig=2):
    """Strings (value, minus, plus) rounded by the uncertainty.

    The decimal place is set by ``sig`` significant figures of the larger error.
    """
    err = max(abs(minus), abs(plus))
    dec = decimals_for(err, sig)
    if dec is not None:
        # rounding the larger error may carry a digit (0.0996 -> 0.10); recompute once
        r = round(err, dec)
        if r > 0 and decimals_for(r, sig) != dec:
            dec = decimals_for(r, sig)
    return _fmt(value, dec), _fmt(abs(minus), dec), _fmt(abs(plus), dec)


def fmt_plain(x, digits=4):
    if x is None or not math.isfinite(x):
        return "—"
    return f"{x:.{digits}g}"


def fmt_summary(s, unicode=True):
    """'v +p/-m' (or 'v ± e' when symmetric) for a summary {median, lo, hi}; '—' for None."""
    if s is None:
        return "—"
    v, lo, hi = s["median"], s["lo"], s["hi"]
    plus, minus = hi - v, v - lo
    if plus <= 0 and minus <= 0:
        return fmt_plain(v, 6)
    vs, ms, ps = round_uncertain(v, minus, plus)
    pm, mn = ("±", "−") if unicode else ("+/-", "-")
    if ms == ps:
        return f"{vs} {pm} {ps}"
    return f"{vs} +{ps}/{mn}{ms}"
