"""Provenance sidecar: how a set of outputs was made, and a checksum of each.

The sidecar ``<name>.provenance.json`` repeats the document's provenance
block (input file and its SHA-256, seed, number of draws, options, priors,
package versions) and its sampler block, adds the versions of the plotting
libraries and the figure preset, and lists every file written with its size
and SHA-256.  It has no time stamp, so the same input and seed give the same
sidecar (the figures are written without creation dates for the same reason).
"""
from __future__ import annotations

import hashlib
import json

__all__ = ["build_provenance", "provenance_json", "sha256_of", "FORMAT"]

FORMAT = "archsys-provenance"


def sha256_of(data) -> str:
    """Hex SHA-256 of ``bytes`` or of a ``str`` encoded as UTF-8."""
    if isinstance(data, str):
        data = data.encode("utf-8")
    return hashlib.sha256(data).hexdigest()


def _plot_versions():
    out = {}
    for mod in ("matplotlib", "corner"):
        try:
            out[mod] = __import__(mod).__version__
        except (ImportError, AttributeError):
            out[mod] = None
    return out


def build_provenance(doc, outputs=None, preset=None) -> dict:
    """The provenance mapping of ``doc``; ``outputs``: ``{file name: bytes or str}`` to checksum."""
    prov = dict(doc.get("provenance") or {})
    versions = dict(prov.pop("versions", {}) or {})
    versions.update(_plot_versions())
    out = {
        "format": FORMAT,
        "format_version": 1,
        "system": doc.get("system"),
        "schema_version": doc.get("schema_version"),
        "input_file": prov.pop("input_file", None),
        "input_sha256": prov.pop("input_sha256", None),
        "seed": prov.pop("seed", None),
        "draws": prov.pop("draws", None),
        "options": prov.pop("options", {}),
        "priors": prov.pop("priors", {}),
        "sampler": doc.get("sampler", {}),
        "package_version": prov.pop("package_version", None),
        "versions": versions,
        "figure_preset": getattr(preset, "name", preset) or "one-column",
    }
    out.update(prov)                       # keys added to the document later are kept
    if outputs:
        out["outputs"] = {name: {"bytes": len(data.encode("utf-8") if isinstance(data, str) else data),
                                 "sha256": sha256_of(data)} for name, data in sorted(outputs.items())}
    return out


def provenance_json(prov) -> str:
    return json.dumps(prov, indent=2, sort_keys=False, default=str) + "\n"
