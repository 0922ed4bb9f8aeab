"""Compatibility across the supported Python versions (3.10+)."""
from __future__ import annotations

import sys

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover - Python 3.10: the same parser, published as 'tomli'
    import tomli as tomllib

__all__ = ["tomllib"]
