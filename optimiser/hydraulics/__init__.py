"""Pure hydraulics: no I/O, no model objects, vectorised over numpy arrays.

One module per physical concern:

- :mod:`constants` -- gravity and unit conversions for pressure head;
- :mod:`water` -- density and viscosity of water at atmospheric pressure;
- :mod:`friction` -- Darcy friction factor (laminar, transition, Colebrook--White,
  Swamee--Jain) and the friction gradients of Darcy--Weisbach and Hazen--Williams;
- :mod:`local_losses` -- velocity, velocity head and minor (local) losses;
- :mod:`gradeline` -- energy line and hydraulic grade line along a series of pipe segments
  (point and section losses, outlet energy after the exit, static head plus surge).

Every docstring gives the equation, the units in brackets and the source, with worked
numbers as doctests (run by ``tests/test_doctests.py``).
"""

from optimiser.hydraulics.constants import G_M_S2, bar_to_head_m, head_m_to_bar
from optimiser.hydraulics.friction import (
    colebrook_white,
    darcy_friction_factor,
    darcy_weisbach_gradient,
    hazen_williams_gradient,
    laminar_friction_factor,
    reynolds_number,
    swamee_jain,
)
from optimiser.hydraulics.gradeline import (
    energy_along_chain,
    energy_line_m,
    hydraulic_grade_m,
    outlet_energy_m,
    section_loss_m,
    start_point_loss_m,
    static_head_m,
)
from optimiser.hydraulics.local_losses import local_loss_m, velocity_head_m, velocity_m_s
from optimiser.hydraulics.water import (
    density_kg_m3,
    dynamic_viscosity_pa_s,
    kinematic_viscosity_m2_s,
)

__all__ = [
    "G_M_S2",
    "bar_to_head_m",
    "colebrook_white",
    "darcy_friction_factor",
    "darcy_weisbach_gradient",
    "density_kg_m3",
    "dynamic_viscosity_pa_s",
    "energy_along_chain",
    "energy_line_m",
    "hazen_williams_gradient",
    "head_m_to_bar",
    "hydraulic_grade_m",
    "kinematic_viscosity_m2_s",
    "laminar_friction_factor",
    "local_loss_m",
    "outlet_energy_m",
    "reynolds_number",
    "section_loss_m",
    "start_point_loss_m",
    "static_head_m",
    "swamee_jain",
    "velocity_head_m",
    "velocity_m_s",
]
