"""Rounding values by their uncertainty, for tables and reports.

Rule (common practice in journals): two significant figures on the larger of
the two errors; the value and the other error are rounded to the same decimal
place.  Example: 0.12345 +0.00123 -0.00098 -> 0.1235 +0.0012 -0.0010.
"""
from __future__ import annotations

import math

__all__ = ["decimals_for", "round_uncertain", "fmt_summary", "fmt_plain", "fmt_percent", "format_value",
           "plain_cell", "is_summary", "short_name"]


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
    return plain_cell(format_value(s, "summary"), unicode=unicode)


# --- the one percentage formatter and the format-neutral cells of every renderer ---------------
def fmt_percent(p):
    """A probability (fraction of draws) as a percentage; never rounds a fraction to a certainty.

    0 and 1 exactly are "0 %" and "100 %"; below 1 % or above 99 % one decimal
    is kept ("0.2 %", "99.5 %"), and below 0.1 % / above 99.9 % the value is
    bounded ("<0.1 %", ">99.9 %"); otherwise whole per cent ("42 %").
    """
    if p is None:
        return "—"
    p = float(p)
    if not math.isfinite(p):
        return "—"
    if p <= 0:
        return "0 %"
    if p >= 1:
        return "100 %"
    x = 100 * p
    if x < 1 or x > 99:
        s = f"{x:.1f}"
        s = {"100.0": "99.9", "0.0": "0.1"}.get(s, s)
        return f"{'<' if x < 0.1 else '>' if x > 99.9 else ''}{s} %"
    return f"{x:.0f} %"


def is_summary(v):
    """Whether ``v`` is a posterior summary ``{"median", "lo", "hi", ...}``."""
    return isinstance(v, dict) and "median" in v and "lo" in v and "hi" in v


def short_name(name, system):
    """A planet's name without the system prefix ('Velmora b' -> 'b')."""
    name = str(name)
    if system and name.startswith(str(system)) and name != system:
        return name[len(str(system)):].strip() or name
    return name


def _summary_cell(value, scale):
    v, lo, hi = (value.get(k) for k in ("median", "lo", "hi"))
    inf = value.get("infinite_fraction")
    if v is None:
        return ("inf", fmt_percent(inf)) if inf else ("none",)
    v = v * scale
    lo = (lo if lo is not None else v / scale) * scale
    if hi is None and inf:                      # upper percentile at infinity
        minus = v - lo
        vs, ms = round_uncertain(v, minus, minus)[:2] if minus > 0 else (fmt_plain(v, 6), "0")
        return ("pm", vs, ms, "∞")
    hi = (hi if hi is not None else v / scale) * scale
    minus, plus = v - lo, hi - v
    if not (minus > 0 or plus > 0):
        return ("number", fmt_plain(v, 6))
    return ("pm",) + round_uncertain(v, minus, plus)


def format_value(value, fmt="summary", scale=1.0):
    """A format-neutral cell of ``value`` under a column's number format (``Column.fmt``).

    Cells: ``("none",)``, ``("text", s)``, ``("number", s)``, ``("percent", s)``,
    ``("limit", "<", value, confidence)`` (an upper limit, built by ``tables.limit_cell``),
    ``("pm", value, minus, plus)`` (strings rounded by the larger error; equal
    ``minus`` and ``plus`` mean symmetric; ``plus == "∞"`` for an upper
    percentile at infinity) and ``("inf", share)`` for an infinite median
    (``share``: the percentage of infinite draws).
    """
    if value is None:
        return ("none",)
    if isinstance(value, bool):
        return ("text", "yes" if value else "no")
    if is_summary(value):
        return _summary_cell(value, scale)
    if isinstance(value, (int, float)):
        if isinstance(value, float) and not math.isfinite(value):
            return ("none",)
        if fmt == "percent":
            return ("percent", fmt_percent(value))
        if isinstance(value, int):
            return ("number", str(value * scale if scale != 1 else value))
        return ("number", fmt_plain(value * scale, 4))
    if isinstance(value, str):
        return ("text", value)
    if isinstance(value, (list, tuple)):
        parts = [" – ".join(map(str, x)) if isinstance(x, (list, tuple)) else str(x) for x in value]
        return ("text", "; ".join(parts)) if parts else ("none",)
    import json
    return ("text", json.dumps(value, sort_keys=True, default=str))


def plain_cell(cell, unicode=True):
    """Plain-text rendering of a cell (text report, verdict sentences)."""
    kind = cell[0]
    if kind == "none":
        return "—"
    if kind == "inf":
        return f"∞ ({cell[1]} of draws infinite)"
    if kind == "limit":
        return f"{cell[1]} {cell[2]} ({cell[3]})"
    if kind == "pm":
        v, m, p = cell[1:]
        pm, mn = ("±", "−") if unicode else ("+/-", "-")
        return f"{v} {pm} {p}" if m == p else f"{v} +{p}/{mn}{m}"
    return str(cell[1])
