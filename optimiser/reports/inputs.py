"""The inputs a design rests on, as small tables in plain words (the report's inputs
section and the workbook's inputs sheet): flows per scenario, offtakes, levels, roughness
and its basis, rules, zone factors, fittings and local losses, the catalogue and its
price basis, the surge method, the solver and its gap."""

from __future__ import annotations

import os
from dataclasses import dataclass
from pathlib import Path

from optimiser.model import Friction, Study, SurgeMethod
from optimiser.reports import numbers as fmt
from optimiser.reports.hashing import file_sha256
from optimiser.reports.run_summary import RunSummary
from optimiser.reports.terminal import chainage_label


@dataclass(frozen=True)
class InputTable:
    """One titled table of the inputs; every cell already written as text."""

    title: str
    columns: tuple[str, ...]
    rows: tuple[tuple[str, ...], ...]
    note: str = ""
    text: tuple[str, ...] = ()
    """Columns of words (left-aligned); empty: every column."""


def _roughness_words(study: Study, roughness_mm: float | None,
                     factor: float | None) -> str:
    if study.friction is Friction.HAZEN_WILLIAMS:
        return "Hazen–Williams C of each pipe, as catalogued"
    if roughness_mm is not None:
        return f"{roughness_mm:g} mm for every pipe"
    if factor is not None:
        return f"catalogue roughness × {factor:g}"
    return "as catalogued"


def _scenarios(study: Study) -> InputTable:
    rows = tuple((s.name, fmt.flow_l_s(s.outlet_flow_m3_s), fmt.head(s.source_level_m),
                  f"{s.offtake_factor:g}", _roughness_words(study, s.roughness_mm,
                                                            s.roughness_factor),
                  "applied" if s.velocity_limits else "not applied")
                 for s in study.scenarios)
    return InputTable("Flows per scenario",
                      ("scenario", "outlet flow (L/s)", "source level (m)",
                       "offtake flows × ", "pipe roughness", "velocity limits"), rows,
                      text=("scenario", "pipe roughness", "velocity limits"))


def _offtakes(study: Study) -> InputTable:
    rows = tuple((chainage_label(o.chainage_m), o.label or "–", fmt.flow_l_s(o.flow_m3_s),
                  fmt.head(study.min_pressure_m if o.min_pressure_m is None
                           else o.min_pressure_m))
                 for o in study.offtakes)
    return InputTable("Offtakes", ("chainage (km+m)", "name", "base flow (L/s)",
                                   "least pressure (m)"), rows,
                      "" if rows else "No offtakes along the route.",
                      text=("chainage (km+m)", "name"))


def _branches(study: Study) -> list[InputTable]:
    """A scheme's branches (contract section 7) and the offtakes on them."""
    rows = tuple((b.name, b.parent, chainage_label(b.at_chainage_m),
                  fmt.length(b.route.total_chainage_m), b.profile_label or "–",
                  fmt.flow_l_s(b.flow_m3_s), fmt.head(b.required_head_m), f"{b.exit_k:g}",
                  f"{b.junction_k:g}", fmt.head(b.min_pressure_m), f"{b.local_k_per_km:g}")
                 for b in study.branches)
    offtakes = tuple((b.name, chainage_label(o.chainage_m), o.label or "–",
                      fmt.flow_l_s(o.flow_m3_s),
                      fmt.head(b.min_pressure_m if o.min_pressure_m is None
                               else o.min_pressure_m))
                     for b in study.branches for o in b.offtakes)
    return [InputTable("Branches", (
        "branch", "leaves", "at (km+m)", "chainage (m)", "profile", "flow (L/s)",
        "required head (m)", "exit K", "junction K", "least pressure (m)", "K per km"), rows,
        "A branch's flow is delivered at its end in every scenario, times the scenario's "
        "branch factor unless the scenario gives its own; its chainage starts at 0 at its "
        "junction.", text=("branch", "leaves", "at (km+m)", "profile")),
        InputTable("Offtakes on branches", ("branch", "chainage (km+m)", "name",
                                            "base flow (L/s)", "least pressure (m)"),
                   offtakes, "" if offtakes else "No offtakes on the branches.",
                   text=("branch", "chainage (km+m)", "name"))]


def _levels(study: Study) -> InputTable:
    route = study.route
    rows = (
        ("source: design (lowest operating) level", f"{fmt.head(study.source.level_m)} m"),
        ("source: top water level (sets static head)",
         f"{fmt.head(study.source.top_water_level_m)} m"),
        ("outlet: energy level required after the exit loss",
         f"{fmt.head(study.outlet.required_head_m)} m"),
        ("least pressure head along the pipe", f"{fmt.head(study.min_pressure_m)} m"),
        ("cover to the pipe centreline", f"{fmt.head(route.cover_m)} m"),
        ("route length (chainage)", f"{fmt.length(route.total_chainage_m)} m"),
        ("pipe lengths measured", "along the slope" if route.slope_length
         else "horizontally (chainage)"),
    )
    return InputTable("Levels and route", ("item", "value"), rows)


def _hydraulics(study: Study) -> InputTable:
    if study.friction is Friction.COLEBROOK_WHITE:
        method = ("Darcy–Weisbach with Colebrook–White (laminar 64/Re below Re 2,000, "
                  "blended to Re 4,000)")
    else:
        method = "Hazen–Williams (SI form)"
    water = (f"{study.temperature_c:g} °C" if study.temperature_c is not None else
             "given directly")
    rows = [("friction", method), ("water temperature", water),
            ("kinematic viscosity", f"{study.kinematic_viscosity_m2_s:.3e} m²/s")]
    by_material: dict[str, set[float]] = {}
    for option in study.catalogue:
        value = (option.roughness_mm if study.friction is Friction.COLEBROOK_WHITE
                 else option.hazen_williams_c)
        by_material.setdefault(option.material, set()).add(value)
    unit = "mm (catalogue)" if study.friction is Friction.COLEBROOK_WHITE else "(catalogue C)"
    for material, values in by_material.items():
        shown = ", ".join(f"{v:g}" for v in sorted(v for v in values if v is not None))
        rows.append((f"roughness of {material}", f"{shown} {unit}"))
    return InputTable("Friction and roughness", ("item", "basis"), tuple(rows))


def _losses(study: Study) -> InputTable:
    rows = [("entrance at the source", f"K = {study.source.entrance_k:g}"),
            ("exit at the outlet", f"K = {study.outlet.exit_k:g}"),
            ("bends and minor fittings along the route",
             f"K = {study.local_k_per_km:g} per km")]
    rows += [(f"{f.label or 'fitting'} at {chainage_label(f.chainage_m)}", f"K = {f.k:g}")
             for f in study.fittings]
    return InputTable("Fittings and local losses", ("where", "loss coefficient"), tuple(rows))


def _rules(study: Study) -> InputTable:
    rules = study.rules
    rows = (
        ("shortest piece of one pipe", f"{fmt.length(rules.min_piece_length_m)} m"),
        ("most changes of pipe", "no limit" if rules.max_changes is None
         else str(rules.max_changes)),
        ("sizes downstream", "never larger than upstream" if rules.sizes_non_increasing
         else "any order"),
        ("velocity window", f"{fmt.velocity(rules.velocity_min_m_s)} to "
                            f"{fmt.velocity(rules.velocity_max_m_s)} m/s"),
        ("cost of each change of pipe", fmt.money(study.costs.change_cost, study.currency)),
    )
    return InputTable("Design rules", ("rule", "value"), rows)


def _zones(study: Study) -> InputTable:
    used = sorted(set(study.route.zones) - {""})
    rows = tuple((zone, f"{study.costs.factor(zone):g}") for zone in used)
    return InputTable("Zone cost factors", ("zone", "pipe cost × "), rows,
                      "" if rows else "No zones: every pipe at its catalogue price.",
                      text=("zone",))


def _catalogue(study: Study) -> InputTable:
    options = list(study.catalogue)
    notes = sorted({o.note for o in options if o.note})
    dns = sorted({o.dn_mm for o in options})
    path = study.catalogue_path
    rows = [
        ("file", _beside_study(study, path) if path else "given in the study"),
        ("SHA-256 of the file", file_sha256(path)),
        ("options offered", f"{len(options)} ({', '.join(study.catalogue.materials)})"),
        ("sizes", f"DN{fmt.dn(dns[0])} to DN{fmt.dn(dns[-1])}" if dns else "–"),
        ("classes", ", ".join(sorted({o.pressure_class for o in options}))),
        ("price basis", f"cost per metre of pipe laid, in {study.currency or 'the study currency'}"
                        ", times the zone factor"),
    ]
    rows += [("catalogue note", note) for note in notes[:5]]
    return InputTable("Pipe catalogue", ("item", "value"), tuple(rows))


def _beside_study(study: Study, path: Path) -> str:
    """``path`` relative to the study file's folder when it can be, else as it is."""
    if study.path is None:
        return str(path)
    try:
        return os.path.relpath(path, Path(study.path).resolve().parent)
    except ValueError:  # another drive
        return str(path)


def _surge(study: Study) -> str:
    if study.surge.method is SurgeMethod.JOUKOWSKY:
        closure = study.surge.closure_time_s
        if closure > 0:
            return (f"each pipe's Joukowsky head a·V/g from its wave speed, reduced for a "
                    f"closure of {closure:g} s where that is slower than 2L/a")
        return "each pipe's Joukowsky head a·V/g from its wave speed (instant closure)"
    return f"a fixed allowance of {fmt.head(study.surge_allowance_m)} m added to static head"


def _solver(study: Study, summary: RunSummary | None) -> InputTable:
    settings = study.solver
    rows = [("surge head", _surge(study)),
            ("solver", f"{settings.name}, time limit {settings.time_limit_s:g} s"),
            ("gap target", fmt.percent(settings.mip_gap))]
    if summary is not None:
        rows += [("solver used", summary.solver or "–"),
                 ("gap reached", fmt.percent(summary.gap)),
                 ("status", summary.status)]
    return InputTable("Surge and solver", ("item", "value"), tuple(rows))


def input_tables(study: Study, summary: RunSummary | None = None) -> list[InputTable]:
    """Every input table of the report, in reading order."""
    scheme = _branches(study) if study.is_scheme else []
    return [_scenarios(study), _offtakes(study), *scheme, _levels(study), _hydraulics(study),
            _losses(study), _rules(study), _zones(study), _catalogue(study),
            _solver(study, summary)]


def study_file_label(study: Study) -> str:
    """The study file as given, or a note when the study was built in code."""
    return str(Path(study.path)) if study.path else "built in code (no file)"
