"""Schema of the study TOML (contract section 1), validated with pydantic.

Every table forbids unknown keys so that a misspelt key is an error, never ignored.
Numbers are strict (a quoted "5" is not a number); integers are accepted for floats;
TOML's nan and inf are refused.
"""

from __future__ import annotations

from typing import Annotated, Any, Literal

from pydantic import BaseModel, ConfigDict, Field


class _Table(BaseModel):
    model_config = ConfigDict(extra="forbid", strict=True, allow_inf_nan=False)


class WaterTable(_Table):
    temperature_c: float = Field(15.0, ge=0.0, le=100.0)
    kinematic_viscosity_m2_s: float | None = Field(None, gt=0.0, lt=1e-4)


class SourceTable(_Table):
    level_m: float
    top_water_level_m: float | None = None
    entrance_k: float = Field(0.5, ge=0.0)


class OutletTable(_Table):
    required_head_m: float
    exit_k: float = Field(1.0, ge=0.0)


class FittingTable(_Table):
    chainage_m: float
    k: float = Field(ge=0.0)
    label: str = ""


class RouteTable(_Table):
    profile: str | None = None  # required unless [network] gives the scheme (io/network_file.py)
    cover_m: float = Field(1.0, ge=0.0)
    min_pressure_m: float = 0.0
    local_k_per_km: float = Field(0.0, ge=0.0)
    length: Literal["slope", "chainage"] = "slope"
    fitting: list[FittingTable] = Field(default_factory=list)
    # Routes from coordinates (contract section 11; optimiser/io/geometry).
    crs: str | None = None
    ground_raster: str | None = None
    sample_spacing_m: float = Field(25.0, gt=0.0)
    raster_interpolation: Literal["bilinear", "nearest"] = "bilinear"
    smoothing_window_m: float = Field(0.0, ge=0.0)
    min_point_spacing_m: float = Field(0.01, ge=0.0)
    warn_point_spacing_m: float = Field(100.0, gt=0.0)
    warn_grade_percent: float = Field(50.0, gt=0.0)


class OfftakeTable(_Table):
    chainage_m: float
    flow: Any
    min_pressure_m: float | None = None
    label: str = ""
    branch: str = "main"  # contract section 7


class BranchTable(_Table):
    """``[[branch]]`` of a scheme (contract section 7); resolved by io/branches.py."""

    name: str = Field(min_length=1)
    from_: str = Field("main", alias="from")
    at_chainage_m: float
    profile: str
    flow: Any = None  # required unless branch_flow gives it in every scenario
    required_head_m: float
    exit_k: float = Field(1.0, ge=0.0)
    junction_k: float = Field(0.0, ge=0.0)
    cover_m: float | None = Field(None, ge=0.0)
    min_pressure_m: float | None = None
    local_k_per_km: float | None = Field(None, ge=0.0)
    fitting: list[FittingTable] = Field(default_factory=list)


class NetworkTable(_Table):
    """``[network]`` (extension): a scheme as a nodes CSV and a links CSV, instead of
    ``[route] profile`` and ``[[branch]]`` (io/network_file.py)."""

    nodes: str
    links: str
    source: str = Field(min_length=1)


class ScenarioTable(_Table):
    name: str = Field(min_length=1)
    flow: Any = None  # required unless [network] gives the trunk's delivery flow
    offtake_factor: float = Field(1.0, ge=0.0)
    source_level_m: float | None = None
    roughness_mm: float | None = Field(None, ge=0.0)
    roughness_factor: float | None = Field(None, gt=0.0)
    velocity_limits: bool = True
    branch_factor: float = Field(1.0, ge=0.0)  # contract section 7
    branch_flow: dict[str, Any] = Field(default_factory=dict)


class CatalogueTable(_Table):
    file: str
    materials: list[str] | None = None
    surge_allowance_m: float = Field(0.0, ge=0.0)
    friction: Literal["colebrook-white", "hazen-williams"] = "colebrook-white"
    hazen_williams_coefficient: float = Field(10.67, gt=0.0)


class SurgeTable(_Table):
    method: Literal["allowance", "joukowsky"] = "allowance"
    closure_time_s: float = Field(0.0, ge=0.0)
    min_transient_pressure_m: float | None = None


class RulesTable(_Table):
    min_piece_length_m: float = Field(0.0, ge=0.0)
    max_changes: int | None = Field(None, ge=0)
    sizes_downstream: Literal["any", "non-increasing"] = "any"
    velocity_min_m_s: float = Field(0.0, ge=0.0)
    velocity_max_m_s: float = Field(3.0, gt=0.0)


class CostsTable(_Table):
    change_cost: float = Field(0.0, ge=0.0)
    zone_factor: dict[str, float] = Field(default_factory=dict)


class QuantitiesTable(_Table):
    """The bill of quantities: standard pipe length and rates of items along the route."""

    pipe_length_m: float = Field(6.0, gt=0.0)
    pipe_length_by_material_m: dict[str, Annotated[float, Field(gt=0.0)]] = Field(
        default_factory=dict)
    air_valve_each: float | None = Field(None, ge=0.0)
    washout_each: float | None = Field(None, ge=0.0)
    fitting_each: float | None = Field(None, ge=0.0)


class SolverTable(_Table):
    name: Literal["highs", "cbc"] = "highs"
    time_limit_s: float = Field(120.0, gt=0.0)
    mip_gap: float = Field(1e-4, ge=0.0, lt=1.0)


class TankTable(_Table):
    """``[[break_pressure_tank]]`` (contract section 8): a tank the study always has."""

    chainage_m: float
    branch: str = "main"
    water_level_m: float | None = None
    label: str = ""


class TanksTable(_Table):
    """``[break_pressure_tanks]`` (contract section 8): losses of every tank and what
    ``design`` may add."""

    cost: float | None = Field(None, gt=0.0)
    sites: Literal["every point", "marked"] = "every point"
    height_m: float = Field(1.0, ge=0.0)
    inlet_k: float = Field(1.0, ge=0.0)
    outlet_k: float = Field(0.5, ge=0.0)
    max_count: int | None = Field(None, ge=0)


class StudyFile(_Table):
    title: str = Field(min_length=1)
    currency: str = ""
    water: WaterTable = Field(default_factory=WaterTable)
    source: SourceTable
    outlet: OutletTable | None = None  # required unless [network] (io/branches.py)
    route: RouteTable = Field(default_factory=RouteTable)
    offtake: list[OfftakeTable] = Field(default_factory=list)
    branch: list[BranchTable] = Field(default_factory=list)
    network: NetworkTable | None = None
    scenario: list[ScenarioTable] = Field(min_length=1)
    catalogue: CatalogueTable
    rules: RulesTable = Field(default_factory=RulesTable)
    costs: CostsTable = Field(default_factory=CostsTable)
    solver: SolverTable = Field(default_factory=SolverTable)
    surge: SurgeTable = Field(default_factory=SurgeTable)
    quantities: QuantitiesTable = Field(default_factory=QuantitiesTable)
    break_pressure_tank: list[TankTable] = Field(default_factory=list)
    break_pressure_tanks: TanksTable = Field(default_factory=TanksTable)


_ARRAYS_OF_TABLES = {"offtake", "scenario", "fitting", "branch", "break_pressure_tank"}


def describe_location(location: tuple[Any, ...]) -> str:
    """A pydantic error location as the user wrote it: ``[[scenario]] #2 flow``."""
    parts: list[str] = []
    table: list[str] = []
    for item in location:
        if isinstance(item, int):
            parts.append(f"[[{'.'.join(table)}]] #{item + 1}")
            table = []
        elif item in _ARRAYS_OF_TABLES:
            table.append(str(item))
        elif isinstance(item, str) and item[:1].isalpha() and parts == [] and not table:
            table.append(item)
        else:
            table.append(str(item))
    if table:
        if parts:
            parts.append(".".join(table))
        elif len(table) == 1:
            parts.append(f"key {table[0]}")
        else:
            parts.append(f"[{'.'.join(table[:-1])}] {table[-1]}")
    return " ".join(parts)
