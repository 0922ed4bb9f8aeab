"""Star, Planet and System: the validated data model."""
from __future__ import annotations

from dataclasses import dataclass, field

from .quantity import Measurement

__all__ = ["Star", "Planet", "System"]


@dataclass(frozen=True)
class Star:
    mass: Measurement                      # M_sun
    radius: Measurement | None = None      # R_sun
    density: Measurement | None = None     # g cm^-3
    name: str | None = None


@dataclass(frozen=True)
class Planet:
    name: str
    period: Measurement                    # day
    quantities: dict = field(default_factory=dict)   # field name -> Measurement
    transiting: bool | None = None

    def get(self, key):
        return self.quantities.get(key)

    def has(self, *keys):
        return all(k in self.quantities for k in keys)


@dataclass(frozen=True)
class System:
    name: str
    star: Star
    planets: tuple                          # sorted by period
    source: str = "<memory>"
    sha256: str = ""
    reference_plane: str = "sky"            # what `inclination` is measured from
    epoch: float | None = None              # day: reference time of mean longitudes and phases

    @property
    def n_planets(self) -> int:
        return len(self.planets)

    @property
    def planet_names(self):
        return [p.name for p in self.planets]

    @property
    def has_transits(self) -> bool:
        return any(p.transiting or p.has("b") for p in self.planets)
