"""Surge head of pipe options in a study (contract section 10), shared by the check and
the optimiser so that both use one rule.

``[surge] method = "allowance"``: every piece takes ``[catalogue] surge_allowance_m``.
``method = "joukowsky"``: a piece's surge head is a V / g (Joukowsky), V the largest
velocity in it in any scenario, a the option's wave speed (the catalogue's
``wave_speed_m_s``, else Korteweg's from its wall); 2 L V / (g T) instead when the closure
time T exceeds 2 L / a (Michaud), L the pipe length from the source to the end of the
route (on a scheme, to the end of the piece's branch, through its junctions: contract
section 10). The formulas live in :mod:`optimiser.hydraulics.surge`.
"""

from __future__ import annotations

from collections.abc import Iterable

import numpy as np

from optimiser.hydraulics.constants import REFERENCE_DENSITY_KG_M3
from optimiser.hydraulics.surge import closure_head_rise_m, korteweg_wave_speed_m_s
from optimiser.hydraulics.water import density_kg_m3
from optimiser.model import PipeOption, Study, SurgeMethod
from optimiser.model.lines import Line, line_of


def water_density_kg_m3(study: Study) -> float:
    """Density [kg/m^3] for the wave speed: at the study's water temperature (Kell 1975),
    or the trade's 1000 kg/m^3 when the study gives a viscosity instead of a temperature."""
    if study.temperature_c is None:
        return REFERENCE_DENSITY_KG_M3
    return float(density_kg_m3(study.temperature_c))


def option_wave_speed_m_s(option: PipeOption, density: float) -> float:
    """Wave speed [m/s] of an option: as given, else Korteweg's from wall and modulus;
    NaN when the catalogue gives neither."""
    if option.wave_speed_m_s is not None:
        return option.wave_speed_m_s
    if option.wall_thickness_mm is None or option.elastic_modulus_gpa is None:
        return float("nan")
    return float(korteweg_wave_speed_m_s(
        option.internal_diameter_m, option.wall_thickness_mm / 1000.0,
        option.elastic_modulus_gpa * 1e9, density, option.poisson_ratio))


def wave_speeds_m_s(study: Study, options: Iterable[PipeOption]) -> np.ndarray:
    """Wave speed [m/s] of each option (NaN where the catalogue gives no way to find it)."""
    density = water_density_kg_m3(study)
    return np.array([option_wave_speed_m_s(o, density) for o in options], dtype=float)


def reflection_length_m(study: Study, line: Line | None = None) -> float:
    """Pipe length L [m] from the free surface upstream (the source) to the end of the
    route, or of ``line`` through the junctions above it: the length the slow-closure
    formula uses."""
    if line is None or line.is_trunk:
        return study.upstream_pipe_length_m + float(study.route.length_m.sum())
    return length_above_m(study, line) + float(line.route.length_m.sum())


def length_above_m(study: Study, line: Line) -> float:
    """Pipe length [m] from the source to the junction of branch ``line``."""
    parent = line_of(study, line.parent or "")
    route = parent.route.with_nodes([line.at_chainage_m])
    upstream = float(route.length_m[route.chainage_m[1:] <= line.at_chainage_m + 1e-6].sum())
    return upstream + (0.0 if parent.is_trunk else length_above_m(study, parent))


def surge_head_m(study: Study, wave_speed_m_s: np.ndarray, velocity_m_s: np.ndarray,
                 line: Line | None = None) -> np.ndarray:
    """Surge head [m] of pipes with the given wave speeds and largest velocities (arrays
    broadcast), by the study's method; on ``line`` (default the trunk) for the reflection
    length."""
    shape = np.broadcast_shapes(np.shape(wave_speed_m_s), np.shape(velocity_m_s))
    surge = study.surge
    if surge.method is SurgeMethod.ALLOWANCE:
        return np.full(shape, study.surge_allowance_m)
    return closure_head_rise_m(wave_speed_m_s, velocity_m_s,
                               reflection_length_m(study, line), surge.closure_time_s)
