"""Result objects as plain dictionaries (the JSON of contract section 6)."""

from __future__ import annotations

from typing import Any

from optimiser import __version__
from optimiser.analysis.check import CheckResult, ScenarioResult
from optimiser.model import Friction, Study
from optimiser.reports.cautions import CAUTIONS
from optimiser.reports.outlet_control import outlets
from optimiser.reports.tank_tables import tank_dicts

POINT_FIELDS = ["branch", "chainage_m", "side", "label", "ground_m", "pipe_level_m",
                "energy_m", "hgl_m", "pressure_m", "static_pressure_m", "min_pressure_m",
                "velocity_m_s", "flow_m3_s"]
PIECE_FIELDS = ["branch", "from_m", "to_m", "material", "dn_mm", "pressure_class",
                "length_m", "internal_diameter_mm", "cost", "static_head_m",
                "allowable_head_m", "wave_speed_m_s", "surge_head_m",
                "allowable_surge_head_m", "class_governs"]


def assumptions(study: Study) -> dict[str, Any]:
    """What the numbers rest on, for the record of every output."""
    return {
        "kinematic_viscosity_m2_s": study.kinematic_viscosity_m2_s,
        "temperature_c": study.temperature_c,
        "friction": study.friction.value,
        "friction_note": (
            "Darcy-Weisbach with Colebrook-White (laminar 64/Re below Re 2000, linear "
            "blend to Re 4000)" if study.friction is Friction.COLEBROOK_WHITE
            else "Hazen-Williams (SI)"),
        "surge_allowance_m": study.surge_allowance_m,
        "surge_method": study.surge.method.value,
        "closure_time_s": study.surge.closure_time_s,
        "min_transient_pressure_m": study.surge.min_transient_pressure_m,
        "hazen_williams_coefficient": study.hazen_williams_coefficient,
        "min_pressure_m": study.min_pressure_m,
        "local_k_per_km": study.local_k_per_km,
        "entrance_k": study.source.entrance_k,
        "exit_k": study.outlet.exit_k,
        "top_water_level_m": study.source.top_water_level_m,
        "cover_m": study.route.cover_m,
        "length": "slope" if study.route.slope_length else "chainage",
        "g_m_s2": 9.80665,
    }


def scenario_dict(result: ScenarioResult) -> dict[str, Any]:
    least = result.least_pressure_margin
    return {
        "name": result.name,
        "inflow_m3_s": result.inflow_m3_s,
        "outlet_flow_m3_s": result.outlet_flow_m3_s,
        "outlet_energy_m": result.outlet_energy_m,
        "required_head_m": result.required_head_m,
        "outlet_margin_m": result.outlet_margin_m,
        "capacity_m3_s": result.capacity_m3_s,
        "capacity_outlet_only_m3_s": result.capacity_outlet_only_m3_s,
        "outlets": outlets(result),
        "least_pressure_margin": {
            "branch": str(least["branch"]),
            "chainage_m": float(least["chainage_m"]),
            "pressure_m": float(least["pressure_m"]),
            "min_pressure_m": float(least["min_pressure_m"]),
            "margin_m": float(least["pressure_m"] - least["min_pressure_m"]),
        },
        "max_velocity_m_s": float(result.segments["velocity_m_s"].max()),
        "points": result.points[POINT_FIELDS].to_dict(orient="records"),
    }


def check_dict(result: CheckResult, command: str = "check") -> dict[str, Any]:
    study = result.study
    return {
        "ok": result.ok,
        "command": command,
        "tool_version": __version__,
        "title": study.title,
        "study": str(study.path) if study.path else None,
        "currency": study.currency,
        "violations": [v.as_dict() for v in result.violations],
        "scenarios": [scenario_dict(s) for s in result.scenarios],
        "pieces": result.pieces[PIECE_FIELDS].to_dict(orient="records"),
        "total_cost": result.total_cost,
        "change_cost_total": result.change_cost_total,
        "break_pressure_tanks": tank_dicts(result),
        "tank_cost_total": result.tank_cost_total,
        "assumptions": assumptions(study),
        "cautions": list(CAUTIONS),
    }
