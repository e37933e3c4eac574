"""An independent hand calculation of contract section 5, for check values in tests.

It shares no code with ``optimiser``: plain Python loops over the route, the formulas of
shared/specs/study-format.md section 5 written out again, the Darcy friction factor from
``fluids.friction.Colebrook`` (reference implementation of Colebrook, C.F. (1939),
Turbulent flow in pipes, J. Inst. Civil Eng. 11) and the viscosity of water from the
``iapws`` package (IAPWS-95 density, IAPWS 2008 viscosity). Hazen--Williams is the SI
form of Williams, G.S. & Hazen, A. (1905), Hydraulic Tables:
J = 10.67 Q^1.852 / (C^1.852 d^4.8704).

Inputs are plain numbers in SI units (diameters and roughness in metres, flows in m^3/s).
"""

from __future__ import annotations

import bisect
import math
import warnings
from dataclasses import dataclass, field

G = 9.80665  # standard gravity, m/s^2 (CGPM 1901), as the contract fixes it


def water_nu_m2_s(temperature_c: float) -> float:
    """Kinematic viscosity of water at 1 atm from ``iapws`` (IAPWS-95 / IAPWS 2008)."""
    import iapws

    return float(iapws.IAPWS95(T=temperature_c + 273.15, P=0.101325).nu)


def colebrook_f(reynolds: float, relative_roughness: float) -> float:
    """Darcy friction factor from ``fluids.friction.Colebrook`` (exact Lambert-W form)."""
    import fluids.friction

    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)  # fluids' overflow fallback
        return float(fluids.friction.Colebrook(reynolds, relative_roughness))


@dataclass(frozen=True)
class Pipe:
    """One piece of a design: chainage range, internal diameter [m] and its data."""

    from_m: float
    to_m: float
    diameter_m: float
    roughness_m: float = 0.0
    hazen_williams_c: float | None = None
    allowable_head_m: float = 1e9


@dataclass
class RefPoint:
    chainage_m: float
    side: str  # "", "upstream" or "downstream"
    ground_m: float
    pipe_level_m: float
    energy_m: float
    velocity_m_s: float
    hgl_m: float
    pressure_m: float
    static_pressure_m: float
    min_pressure_m: float


@dataclass
class RefSegment:
    from_m: float
    to_m: float
    length_m: float
    piece: int
    flow_m3_s: float
    velocity_m_s: float
    friction_loss_m: float


@dataclass
class RefResult:
    points: list[RefPoint]
    segments: list[RefSegment]
    outlet_energy_m: float
    inflow_m3_s: float
    piece_static_head_m: list[float]
    piece_lowest_chainage_m: list[float]
    piece_length_m: list[float]
    nodes: list[float] = field(default_factory=list)


def _interp(x: float, xs: list[float], ys: list[float]) -> float:
    i = bisect.bisect_right(xs, x) - 1
    i = min(max(i, 0), len(xs) - 2)
    t = (x - xs[i]) / (xs[i + 1] - xs[i])
    return ys[i] + t * (ys[i + 1] - ys[i])


def gradeline(
    *,
    profile: list[tuple[float, float]],
    pipes: list[Pipe],
    outlet_flow_m3_s: float,
    source_level_m: float,
    top_water_level_m: float | None = None,
    cover_m: float = 1.0,
    entrance_k: float = 0.5,
    exit_k: float = 1.0,
    local_k_per_km: float = 0.0,
    fittings: list[tuple[float, float]] = (),
    offtakes: list[tuple[float, float, float | None]] = (),
    offtake_factor: float = 1.0,
    min_pressure_m: float = 0.0,
    nu_m2_s: float | None = None,
    slope_length: bool = True,
    hazen_williams: bool = False,
) -> RefResult:
    """Energy, HGL and pressure at every check point of a design, by hand.

    ``profile`` is (chainage, ground) survey points; ``fittings`` (chainage, k);
    ``offtakes`` (chainage, flow m^3/s, own minimum pressure or None).
    """
    top_water = source_level_m if top_water_level_m is None else top_water_level_m
    xs = [float(c) for c, _ in profile]
    ground = [float(g) for _, g in profile]
    # Nodes: survey points, offtakes, fittings and piece boundaries (contract 2 and 4).
    node_set = set(xs) | {float(c) for c, _ in fittings} | {float(c) for c, _, _ in offtakes}
    node_set |= {p.from_m for p in pipes} | {pipes[-1].to_m}
    nodes = sorted(node_set)
    node_ground = [_interp(c, xs, ground) for c in nodes]
    node_pipe = [g - cover_m for g in node_ground]

    segments: list[RefSegment] = []
    for i in range(len(nodes) - 1):
        a, b = nodes[i], nodes[i + 1]
        dx = b - a
        dz = node_pipe[i + 1] - node_pipe[i]
        length = math.sqrt(dx * dx + dz * dz) if slope_length else dx
        piece = next(k for k, p in enumerate(pipes) if p.from_m <= a < p.to_m)
        pipe = pipes[piece]
        # An offtake at chainage c is upstream of every section starting at c or later.
        flow = outlet_flow_m3_s + offtake_factor * sum(q for c, q, _ in offtakes if c > a)
        area = math.pi * pipe.diameter_m**2 / 4.0
        velocity = flow / area
        if hazen_williams:
            gradient = 10.67 * flow**1.852 / (pipe.hazen_williams_c**1.852
                                              * pipe.diameter_m**4.8704)
        else:
            reynolds = velocity * pipe.diameter_m / nu_m2_s
            if reynolds < 4000:
                raise ValueError("the hand calculation covers turbulent flow only")
            f = colebrook_f(reynolds, pipe.roughness_m / pipe.diameter_m)
            gradient = f / pipe.diameter_m * velocity**2 / (2 * G)
        segments.append(RefSegment(a, b, length, piece, flow, velocity, gradient * length))

    k_at = {c: 0.0 for c in nodes}
    for c, k in fittings:
        k_at[float(c)] += k
    minimum = {c: min_pressure_m for c in nodes}
    for c, _, own in offtakes:
        if own is not None:
            minimum[float(c)] = own

    def head(v: float) -> float:
        return v * v / (2 * G)

    # Energy line: entrance loss, then friction + per-km allowance along each segment,
    # and a fitting's k V^2/2g with the velocity of the pipe just downstream.
    energy_start: list[float] = []
    energy_end: list[float] = []
    energy = source_level_m - entrance_k * head(segments[0].velocity_m_s)
    for i, seg in enumerate(segments):
        energy -= k_at[nodes[i]] * head(seg.velocity_m_s)
        energy_start.append(energy)
        energy -= seg.friction_loss_m + local_k_per_km * seg.length_m / 1000 * head(
            seg.velocity_m_s)
        energy_end.append(energy)
    last_v = segments[-1].velocity_m_s
    energy_after_last = energy_end[-1] - k_at[nodes[-1]] * head(last_v)
    outlet = energy_after_last - exit_k * head(last_v)

    def point(j: int, side: str, e: float, v: float) -> RefPoint:
        hgl = e - head(v)
        return RefPoint(nodes[j], side, node_ground[j], node_pipe[j], e, v, hgl,
                        hgl - node_pipe[j], top_water - node_pipe[j], minimum[nodes[j]])

    points: list[RefPoint] = []
    for j in range(len(nodes)):
        up = (energy_end[j - 1], segments[j - 1].velocity_m_s) if j > 0 else None
        if j < len(segments):
            down = (energy_start[j], segments[j].velocity_m_s)
        else:
            down = (energy_after_last, last_v)
        if up is None:
            points.append(point(j, "", *down))
            continue
        changes = k_at[nodes[j]] != 0.0 or (
            j < len(segments) and (segments[j].piece != segments[j - 1].piece
                                   or segments[j].flow_m3_s != segments[j - 1].flow_m3_s))
        if changes:
            points.append(point(j, "upstream", *up))
            points.append(point(j, "downstream", *down))
        else:
            points.append(point(j, "", *up))

    static, lowest_at, lengths = [], [], []
    for k, pipe in enumerate(pipes):
        inside = [j for j, c in enumerate(nodes) if pipe.from_m <= c <= pipe.to_m]
        lowest = min(inside, key=lambda j: node_pipe[j])
        static.append(top_water - node_pipe[lowest])
        lowest_at.append(nodes[lowest])
        lengths.append(sum(s.length_m for s in segments if s.piece == k))
    inflow = outlet_flow_m3_s + offtake_factor * sum(q for _, q, _ in offtakes)
    return RefResult(points, segments, outlet, inflow, static, lowest_at, lengths, nodes)
