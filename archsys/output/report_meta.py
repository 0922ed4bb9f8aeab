"""The lines around a report's tables: the opening line, the sampler's and the provenance's items.
"""
from __future__ import annotations

import json

from .numbers import fmt_plain

__all__ = ["sampler_items", "provenance_items", "intro_line"]

_META_LABELS = {"input_file": "input file", "input_sha256": "input SHA-256", "package_version": "archsys version",
                "method": "method", "why": "why this method", "draws": "draws", "seed": "seed",
                "n_eff": "effective samples", "min_n_eff": "smallest effective sample size",
                "autocorrelation_time": "autocorrelation time", "tau_max": "largest autocorrelation time",
                "acceptance": "acceptance fraction", "walkers": "walkers", "steps": "steps",
                "converged": "converged", "orientation_draws": "orientation draws",
                "orientation_pilot": "orientation pilot", "importance": "importance sampling",
                "options": "options", "versions": "versions"}


def _meta_label(key):
    return _META_LABELS.get(key, key)


def sampler_items(doc):
    """[(label, text)] of the sampler block; long mappings are summarised."""
    out = []
    for k, v in (doc.get("sampler") or {}).items():
        if isinstance(v, dict):
            nums = [x for x in v.values() if isinstance(x, (int, float)) and not isinstance(x, bool)]
            if len(v) > 6 and nums:
                text = f"{len(v)} parameters, range {fmt_plain(min(nums))} – {fmt_plain(max(nums))}"
            else:
                text = ", ".join(f"{a}={fmt_plain(b) if isinstance(b, float) else b}" for a, b in v.items())
        elif isinstance(v, float):
            text = fmt_plain(v, 6)
        elif isinstance(v, (list, tuple)):
            text = ", ".join(map(str, v))
        else:
            text = str(v)
        out.append((_meta_label(k), text))
    return out


def provenance_items(doc):
    """[(label, text)] of the provenance block for the human-readable formats (priors: see prior_lines)."""
    prov = doc.get("provenance") or {}
    out = []
    for k in ("input_file", "input_sha256", "seed", "draws", "package_version"):
        if k in prov:
            out.append((_meta_label(k), str(prov[k])))
    opts = prov.get("options") or {}
    if opts:
        out.append(("options", ", ".join(f"{a}={b}" for a, b in opts.items())))
    vers = prov.get("versions") or {}
    if vers:
        out.append(("versions", ", ".join(f"{a} {b}" for a, b in vers.items())))
    for k, v in prov.items():
        if k not in {"input_file", "input_sha256", "seed", "draws", "package_version", "options",
                     "priors", "versions"}:
            out.append((_meta_label(k), json.dumps(v, default=str) if isinstance(v, (dict, list)) else str(v)))
    return out


def intro_line(doc):
    """'4000 posterior draws (direct Monte Carlo), seed 0': how the numbers were made."""
    prov = doc.get("provenance") or {}
    smp = doc.get("sampler") or {}
    imp = smp.get("importance") or {}
    bits = []
    if "draws" in prov and imp.get("proposals"):
        ess = float(imp.get("effective_sample_size") or 0)
        bits.append(f"{prov['draws']} draws resampled from {imp['proposals']} weighted proposals "
                    f"(effective sample size {ess:.0f})" if ess >= 10 else
                    f"{prov['draws']} draws resampled from {imp['proposals']} weighted proposals "
                    f"(effective sample size {ess:.2g})")
    elif "draws" in prov:
        bits.append(f"{prov['draws']} posterior draws")
    if smp.get("method"):
        bits.append(f"({smp['method']})")
    text = " ".join(bits)
    if "seed" in prov:
        text += f", seed {prov['seed']}"
    return text
