"""Files the benchmarks read, all inside the repository."""
from __future__ import annotations

import pathlib

__all__ = ["REPO", "CATALOG", "COLUMNS"]

REPO = pathlib.Path(__file__).resolve().parents[1]
CATALOG = REPO / "tests" / "data" / "oec" / "open_exoplanet_catalogue_planets.csv"
COLUMNS = REPO / "tests" / "data" / "oec_columns.toml"
