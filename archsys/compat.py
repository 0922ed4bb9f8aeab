"""Compatibility across the supported Python versions (3.10+)."""
from __future__ import annotations

try:  # Python >= 3.11
    import tomllib
except ImportError:  # Python 3.10: the same parser, published as 'tomli' (a dependency there)
    import tomli as tomllib

__all__ = ["tomllib"]
