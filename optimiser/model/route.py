"""The route: surveyed nodes and the sections between them, held as a tree.

Sections form a tree rooted at the source: every section has one upstream (parent)
section, or none for a section leaving the source. A plain gravity main is a chain,
which is all the hydraulic code handles today; the parent array is kept so that
branched systems can be added without reworking the model.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass, field

import numpy as np

from optimiser.model.validation import finite, refuse


@dataclass(frozen=True)
class Offtake:
    """A withdrawal at a node of the route."""

    chainage_m: float
    flow_m3_s: float
    min_pressure_m: float | None = None
    label: str = ""


@dataclass(frozen=True)
class Fitting:
    """A point loss K V^2/2g at a node (valve chamber, meter, bend group)."""

    chainage_m: float
    k: float
    label: str = ""


@dataclass(frozen=True)
class RouteCoordinates:
    """Where the route lies in plan: a polyline keyed by chainage (contract section 11).

    ``x_m``, ``y_m`` are easting and northing [m] in the projected ``crs`` (an
    ``"EPSG:...."`` string, or ``None`` for a local grid of an ``x_m, y_m`` profile given
    without one). Any chainage of the route has a plan position, linear between the
    polyline's points, so nodes inserted later (offtakes, fittings) have one too.
    ``notes`` says what was done to the survey on loading (clean-up, sampling, warnings).
    """

    crs: str | None
    chainage_m: np.ndarray
    x_m: np.ndarray
    y_m: np.ndarray
    notes: tuple[str, ...] = ()
    point_refs: tuple[str, ...] = ()
    """Per polyline point, where it came from in the file (``line 7``, ``point 12``,
    ``sample``)."""

    def xy_at(self, chainage_m: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Easting and northing [m] at any chainages, linear between polyline points."""
        return (np.interp(chainage_m, self.chainage_m, self.x_m),
                np.interp(chainage_m, self.chainage_m, self.y_m))


@dataclass
class Route:
    """Nodes (profile points) and sections of a route.

    Arrays are indexed by node (``chainage_m``, ``ground_m``, ``pipe_level_m``,
    ``labels``) or by section (``parent``, ``zones``, ``length_m``); section i runs
    from node ``start_node[i]`` to node ``end_node[i]``.
    """

    chainage_m: np.ndarray
    ground_m: np.ndarray
    cover_m: float
    labels: list[str]
    zones: list[str]
    slope_length: bool = True
    coordinates: RouteCoordinates | None = None
    start_node: np.ndarray = field(init=False)
    end_node: np.ndarray = field(init=False)
    parent: np.ndarray = field(init=False)

    def __post_init__(self) -> None:
        n = len(self.chainage_m)
        self.chainage_m = np.asarray(self.chainage_m, dtype=float)
        self.ground_m = np.asarray(self.ground_m, dtype=float)
        refuse("Route", route_problems(self.chainage_m, self.ground_m, self.cover_m))
        self.start_node = np.arange(n - 1)
        self.end_node = np.arange(1, n)
        self.parent = np.arange(-1, n - 2)  # a chain: section i hangs below section i-1

    @property
    def pipe_level_m(self) -> np.ndarray:
        """Pipe centreline level [m] = ground - cover."""
        return self.ground_m - self.cover_m

    @property
    def n_sections(self) -> int:
        return len(self.chainage_m) - 1

    @property
    def total_chainage_m(self) -> float:
        return float(self.chainage_m[-1])

    @property
    def chainage_length_m(self) -> np.ndarray:
        """Horizontal length of each section [m]."""
        return np.diff(self.chainage_m)

    @property
    def length_m(self) -> np.ndarray:
        """Pipe length of each section [m]: slope length sqrt(dx^2 + dz^2), or chainage."""
        dx = self.chainage_length_m
        if not self.slope_length:
            return dx
        return np.hypot(dx, np.diff(self.pipe_level_m))

    def is_chain(self) -> bool:
        return bool(np.all(self.parent == np.arange(-1, self.n_sections - 1)))

    def pipe_level_at(self, chainage_m: np.ndarray) -> np.ndarray:
        """Pipe level [m] at any chainages, linear between nodes."""
        return np.interp(chainage_m, self.chainage_m, self.pipe_level_m)

    def ground_at(self, chainage_m: np.ndarray) -> np.ndarray:
        return np.interp(chainage_m, self.chainage_m, self.ground_m)

    def between(self, first: int, last: int) -> Route:
        """Nodes ``first`` to ``last`` of this route as a route of its own, chainage
        from 0 (each section keeps its zone; every other field is carried over)."""
        start = float(self.chainage_m[first])
        return dataclasses.replace(
            self, chainage_m=self.chainage_m[first:last + 1] - start,
            ground_m=self.ground_m[first:last + 1].copy(),
            labels=list(self.labels[first:last + 1]), zones=list(self.zones[first:last]))

    def with_nodes(self, chainage_m: list[float] | np.ndarray,
                   tolerance_m: float = 1e-6) -> Route:
        """This route with a node at each chainage not already one (within
        ``tolerance_m``): ground linear between survey points, no label, and each part of
        a split section keeps its zone. Every other field is carried over."""
        new = sorted({float(c) for c in chainage_m
                      if not np.any(np.abs(self.chainage_m - c) <= tolerance_m)})
        if not new:
            return self
        chainage = list(self.chainage_m)
        ground = list(self.ground_m)
        labels = list(self.labels)
        zones = list(self.zones)  # one per section
        for c in new:
            index = int(np.searchsorted(chainage, c))
            ground.insert(index, float(np.interp(c, chainage, ground)))
            chainage.insert(index, c)
            labels.insert(index, "")
            zones.insert(index, zones[index - 1])
        return dataclasses.replace(self, chainage_m=np.array(chainage),
                                   ground_m=np.array(ground), labels=labels, zones=zones)


def route_problems(chainage_m: np.ndarray, ground_m: np.ndarray, cover_m: float) -> list[str]:
    """At least two nodes, chainage strictly increasing (a section of zero or negative
    length has no slope or friction), every level finite."""
    if chainage_m.ndim != 1 or len(chainage_m) < 2 or ground_m.shape != chainage_m.shape:
        return [f"chainage_m and ground_m must be two arrays of the same length, at least "
                f"2 nodes (got {chainage_m.shape} and {ground_m.shape})"]
    problems = []
    if not np.all(np.isfinite(chainage_m)) or not np.all(np.isfinite(ground_m)):
        problems.append("chainage_m and ground_m must be finite numbers (no nan or inf)")
    steps = np.diff(chainage_m)
    if np.any(steps <= 0.0):
        node = int(np.argmax(steps <= 0.0)) + 1
        problems.append(f"chainage_m must increase strictly from node to node (node {node}: "
                        f"{chainage_m[node - 1]:g} then {chainage_m[node]:g} m)")
    problems += finite("cover_m", cover_m)
    return problems
