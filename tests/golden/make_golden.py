"""Golden figures of ``optimise_design``: regenerate them with

    python tests/golden/make_golden.py            # every case
    python tests/golden/make_golden.py demo-gravity-main-rules-on   # one case

(from the repository root, in the project's virtual environment). Each case writes
``tests/golden/<case>.json``: the status, total cost, lower bound and LP bound, the pieces
(from, to, option label) and the sequence of search stages (display name and status) of
one run. ``tests/test_golden.py`` runs every case again and compares.

The figures are not check values of the main job: they record what the optimiser gave
when they were taken, so that a change meant to leave results alone (a restructure) can
be shown to do so. Regenerate them only when a change is meant to alter results, and
say so in the commit message.

Cases: the two demo studies (``studies/``, invented data) and the 2,000-section
benchmark route of ``benchmarks/generate.py`` (seeded, invented), each with its rules as
written ("rules-on") and with every rule of the design switched off ("rules-off": no
minimum piece length, no limit on changes, any size order, no change cost; velocity
limits stay), at the study's own gap; and two "-tight" cases at a relative gap of 1e-6,
where more stages run before the proof: the first demo with its rules, and the invented
undulating route of ``tests/test_milp_priced.py`` (written here with
``tests/test_milp_support.py``); and one "-exact" case at a gap of 0, an invented seeded
route whose reach model does not prove, so every later stage runs (see
:func:`_rough_study`). Runs get a generous time limit so that no stage is cut
short or skipped by the clock, which keeps the stage sequence independent of the
machine's speed (a stage skipped as too large for the time left, or a model stopped by
its share of the time, would make it depend on the clock; none is in these cases).
"""

from __future__ import annotations

import dataclasses
import importlib.util
import json
import sys
import tempfile
from pathlib import Path

import numpy as np

from optimiser import load_study
from optimiser.milp import DesignOutcome, optimise_design
from optimiser.model import Study

ROOT = Path(__file__).resolve().parents[2]
HERE = Path(__file__).resolve().parent
TIME_LIMIT_S = 600.0
"""Generous: every case finishes far inside it, so no stage depends on the clock."""
BENCHMARK_SECTIONS = 2000

CASES = [*(f"{name}-rules-{state}" for name in
           ("demo-gravity-main", "demo-pe-option", f"benchmark-{BENCHMARK_SECTIONS}")
           for state in ("on", "off")),
         "demo-gravity-main-rules-on-tight", "undulating-rules-on-tight",
         "rough-rules-on-exact"]
TIGHT_GAP = 1e-6
"""The relative gap of the "-tight" cases (more stages run before the proof)."""
MIXED_CATALOGUE = [
    ("PE", 200, 176.2, "PN10", 102.0, 0.02, 150.0, 42.0),
    ("PE", 200, 176.2, "PN16", 163.2, 0.02, 150.0, 50.0),
    ("PE", 250, 220.4, "PN10", 102.0, 0.02, 150.0, 60.0),
    ("DI", 200, 173.0, "PN25", 254.9, 0.10, 135.0, 70.0),
    ("DI", 250, 215.0, "PN25", 254.9, 0.10, 135.0, 80.0),
    ("PE", 315, 277.6, "PN10", 102.0, 0.02, 150.0, 90.0),
]
"""Invented options (material, DN, ID mm, class, allowable head m, roughness mm, C,
cost per m), those of ``tests/test_milp_dominance.py``."""


def _module(path: Path, name: str):
    """A module loaded from a file that is not part of the package."""
    spec = importlib.util.spec_from_file_location(name, path)
    if name not in sys.modules:
        module = importlib.util.module_from_spec(spec)
        sys.modules[name] = module  # dataclasses look their module up here
        spec.loader.exec_module(module)
    return sys.modules[name]


def _benchmark_study(folder: Path, rules: bool) -> Study:
    """The seeded benchmark route of ``benchmarks/generate.py``."""
    module = _module(ROOT / "benchmarks" / "generate.py", "golden_benchmark_generate")
    return load_study(module.write(folder, BENCHMARK_SECTIONS, rules=rules))


def _undulating_study(folder: Path) -> Study:
    """An invented 4 km route with a bump, two scenarios, an offtake with its own
    minimum pressure, and the rules on (the study of ``tests/test_milp_priced.py``, invented)."""
    builders = _module(HERE.parent / "test_milp_support.py", "golden_milp_support")
    chainage = np.linspace(0.0, 4000.0, 41)
    x = chainage / chainage[-1]
    ground = 100.0 - 45.0 * x + 3.0 * np.sin(9.0 * x) + 9.0 * np.exp(-((x - 0.35) / 0.08) ** 2)
    zone = ["rock" if 0.6 < v < 0.7 else "normal" for v in x]
    profile = [(float(c), round(float(g), 3), "", z)
               for c, g, z in zip(chainage, ground, zone, strict=True)]
    return load_study(builders.write_study(
        folder, profile=profile, source_level_m=106.0, required_head_m=58.0,
        friction="colebrook-white", route={"min_pressure_m": 2.0, "local_k_per_km": 0.3},
        scenarios=[{"name": "today", "flow": "25 L/s"},
                   {"name": "horizon", "flow": "32 L/s", "roughness_factor": 2.0}],
        offtakes=[{"chainage_m": 2500.0, "flow": "3 L/s", "min_pressure_m": 8.0}],
        rules={"min_piece_length_m": 300.0, "max_changes": 2},
        costs={"change_cost": 500.0}))


def without_rules(study: Study) -> Study:
    """``study`` with every rule of the design switched off (velocity limits stay)."""
    rules = dataclasses.replace(study.rules, min_piece_length_m=0.0, max_changes=None,
                                sizes_non_increasing=False)
    costs = dataclasses.replace(study.costs, change_cost=0.0)
    return dataclasses.replace(study, rules=rules, costs=costs)


def _rough_study(folder: Path, seed: int = 11) -> Study:
    """An invented, seeded 4 km route with a hump and a dip, the mixed catalogue and the
    rules on: at a gap of 0 its reach model does not prove, so the polishing, the priced
    dynamic programme, the large-neighbourhood search, the larger restricted models and
    the full model all run, each to its own proof (no clock involved)."""
    support = _module(HERE.parent / "test_milp_support.py", "golden_milp_support")
    rng = np.random.default_rng(seed)
    chainage = np.linspace(0.0, 4000.0, 21 + seed % 3 * 10)
    ground = 100.0 - 0.01 * chainage + rng.normal(0.0, 2.0, chainage.size)
    ground[(chainage > 1500) & (chainage < 2500)] -= float(rng.uniform(0.0, 50.0))
    ground[(chainage > 800) & (chainage < 1100)] += float(rng.uniform(0.0, 25.0))
    profile = [(float(c), round(float(g), 3)) for c, g in zip(chainage, ground, strict=True)]
    required = float(rng.uniform(40.0, 60.0))
    flow = f"{rng.uniform(15.0, 30.0):.1f} L/s"
    rules = {"min_piece_length_m": float(rng.choice([200.0, 400.0, 700.0])),
             "max_changes": int(rng.integers(1, 4))}
    costs = {"change_cost": float(rng.choice([0.0, 300.0, 3000.0]))}
    return load_study(support.write_study(
        folder, profile=profile, catalogue=MIXED_CATALOGUE, source_level_m=106.0,
        required_head_m=required, scenarios=[{"name": "peak", "flow": flow}], rules=rules,
        costs=costs))


def case_study(case: str, folder: Path) -> Study:
    """The study of ``case`` (``folder``: where a generated study may be written)."""
    name, state = case.removesuffix("-tight").removesuffix("-exact").rsplit("-rules-", 1)
    if name == "rough":
        return _rough_study(folder)
    if name == "undulating":
        return _undulating_study(folder)
    if name.startswith("benchmark-"):
        return _benchmark_study(folder, rules=state == "on")
    study = load_study(ROOT / "studies" / name / "study.toml")
    return study if state == "on" else without_rules(study)


def figures(outcome: DesignOutcome) -> dict:
    """What the golden test compares, as plain JSON values."""
    pieces = [] if outcome.design is None else [
        [piece.from_m, piece.to_m, piece.option.label] for piece in outcome.design.pieces]
    return {
        "status": str(outcome.status),
        "total_cost": outcome.total_cost,
        "lower_bound": outcome.lower_bound,
        "lp_bound": outcome.lp_bound,
        "pieces": pieces,
        "stages": [[stage.name, str(stage.status)] for stage in outcome.stages],
    }


def run_case(case: str) -> dict:
    """Run ``case`` once and return its figures."""
    with tempfile.TemporaryDirectory(prefix="golden_") as folder:
        study = case_study(case, Path(folder))
        gap = TIGHT_GAP if case.endswith("-tight") else 0.0 if case.endswith("-exact") \
            else None
        return figures(optimise_design(study, time_limit_s=TIME_LIMIT_S, mip_gap=gap))


def golden_path(case: str) -> Path:
    return HERE / f"{case}.json"


def main(cases: list[str]) -> None:
    for case in cases or CASES:
        if case not in CASES:
            raise SystemExit(f"unknown case {case!r}; use one of {', '.join(CASES)}")
        result = run_case(case)
        golden_path(case).write_text(json.dumps(result, indent=1) + "\n")
        print(f"{case}: {result['status']} {result['total_cost']} "
              f"({len(result['stages'])} stages)")


if __name__ == "__main__":
    main(sys.argv[1:])
