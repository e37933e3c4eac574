"""Catalogue of purchasable pipe options."""

from __future__ import annotations

from collections.abc import Iterator
from dataclasses import dataclass

import numpy as np

from optimiser.model.validation import at_least, finite, refuse


@dataclass(frozen=True)
class PipeOption:
    """One purchasable pipe: material, nominal size, pressure class and its data."""

    material: str
    dn_mm: float
    internal_diameter_mm: float
    pressure_class: str
    allowable_head_m: float
    roughness_mm: float
    hazen_williams_c: float | None
    cost_per_m: float
    note: str = ""
    wave_speed_m_s: float | None = None
    """Pressure wave speed a [m/s] as given; else derived from the wall (Korteweg)."""
    wall_thickness_mm: float | None = None
    elastic_modulus_gpa: float | None = None
    poisson_ratio: float = 0.3
    allowable_surge_head_m: float | None = None
    """Most head the option takes with surge included [m]; None: allowable_head_m."""
    outside_diameter_mm: float | None = None
    sdr: float | None = None
    """Standard dimension ratio OD / wall: with the outside diameter, names PE pipe."""

    def __post_init__(self) -> None:
        refuse(f"PipeOption {self.material} DN{self.dn_mm:g} {self.pressure_class}",
               option_problems(self))

    @property
    def has_wave_speed(self) -> bool:
        """A wave speed is given, or the wall and modulus it is derived from (section 10)."""
        return self.wave_speed_m_s is not None or (
            self.wall_thickness_mm is not None and self.elastic_modulus_gpa is not None)

    @property
    def key(self) -> tuple[str, float, str]:
        """(material, dn_mm, pressure_class): unique in a catalogue."""
        return (self.material, self.dn_mm, self.pressure_class)

    @property
    def internal_diameter_m(self) -> float:
        return self.internal_diameter_mm / 1000.0

    @property
    def label(self) -> str:
        if self.outside_diameter_mm is not None and self.sdr is not None:
            # Plastic pipe is ordered by outside diameter and SDR.
            return (f"{self.material} OD{self.outside_diameter_mm:g} SDR{self.sdr:g} "
                    f"{self.pressure_class}")
        dn = f"{self.dn_mm:g}"
        return f"{self.material} DN{dn} {self.pressure_class}"

    @property
    def surge_limit_head_m(self) -> float:
        """Limit of static + surge head [m]: allowable_surge_head_m, else allowable_head_m."""
        if self.allowable_surge_head_m is None:
            return self.allowable_head_m
        return self.allowable_surge_head_m


@dataclass(frozen=True)
class Catalogue:
    """An ordered collection of options with array views for vectorised hydraulics."""

    options: tuple[PipeOption, ...]

    def __iter__(self) -> Iterator[PipeOption]:
        return iter(self.options)

    def __len__(self) -> int:
        return len(self.options)

    def __getitem__(self, index: int) -> PipeOption:
        return self.options[index]

    def find(self, material: str, dn_mm: float, pressure_class: str) -> PipeOption | None:
        for option in self.options:
            if (
                option.material == material
                and np.isclose(option.dn_mm, dn_mm)
                and option.pressure_class == pressure_class
            ):
                return option
        return None

    def index_of(self, option: PipeOption) -> int:
        return self.options.index(option)

    @property
    def internal_diameter_m(self) -> np.ndarray:
        return np.array([o.internal_diameter_m for o in self.options])

    @property
    def internal_diameter_mm(self) -> np.ndarray:
        return np.array([o.internal_diameter_mm for o in self.options])

    @property
    def roughness_mm(self) -> np.ndarray:
        return np.array([o.roughness_mm for o in self.options])

    @property
    def hazen_williams_c(self) -> np.ndarray:
        return np.array([np.nan if o.hazen_williams_c is None else o.hazen_williams_c
                         for o in self.options])

    @property
    def cost_per_m(self) -> np.ndarray:
        return np.array([o.cost_per_m for o in self.options])

    @property
    def allowable_head_m(self) -> np.ndarray:
        return np.array([o.allowable_head_m for o in self.options])

    @property
    def surge_limit_head_m(self) -> np.ndarray:
        return np.array([o.surge_limit_head_m for o in self.options])

    @property
    def materials(self) -> list[str]:
        return sorted({o.material for o in self.options})


def option_problems(option: PipeOption) -> list[str]:
    """Dimensions and data of a pipe option that would give nan hydraulics or costs."""
    problems = at_least("internal_diameter_mm", option.internal_diameter_mm, 0.0, strict=True)
    problems += at_least("roughness_mm", option.roughness_mm, 0.0)
    problems += at_least("cost_per_m", option.cost_per_m, 0.0)
    problems += finite("allowable_head_m", option.allowable_head_m)
    problems += at_least("hazen_williams_c", option.hazen_williams_c, 0.0, strict=True)
    problems += at_least("wave_speed_m_s", option.wave_speed_m_s, 0.0, strict=True)
    problems += at_least("wall_thickness_mm", option.wall_thickness_mm, 0.0, strict=True)
    problems += at_least("elastic_modulus_gpa", option.elastic_modulus_gpa, 0.0, strict=True)
    return problems
