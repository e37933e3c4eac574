"""Catalogue of purchasable pipe options."""

from __future__ import annotations

from collections.abc import Iterator
from dataclasses import dataclass

import numpy as np


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

    @property
    def key(self) -> tuple[str, float, str]:
        """(material, dn_mm, pressure_class): unique in a catalogue."""
        return (self.material, self.dn_mm, self.pressure_class)

    @property
    def internal_diameter_m(self) -> float:
        return self.internal_diameter_mm / 1000.0

    @property
    def label(self) -> str:
        dn = f"{self.dn_mm:g}"
        return f"{self.material} DN{dn} {self.pressure_class}"


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
    def materials(self) -> list[str]:
        return sorted({o.material for o in self.options})
