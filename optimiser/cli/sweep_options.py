"""Reading and checking the options of ``tradeoff`` and ``sensitivity``: every problem is
collected, so one run reports them all (exit 2)."""

from __future__ import annotations

import math
import re
from pathlib import Path
from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from optimiser.model import Study

_LEVEL = re.compile(r"^\s*([-+]?(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?)\s*(m)?\s*$")


MAX_STEPS = 10_000
"""Most values of a sweep's ``--steps`` (each may be a whole design run)."""
MAX_YEARS = 200.0
"""Most ``--years`` in service: the longest life the study file accepts (section 9)."""
MAX_SAMPLES = 1_000_000
"""Most Monte Carlo ``--samples`` (the range of counts of section 9)."""


def parse_level_m(option: str, text: str) -> float:
    """A level or head in metres: ``842.5`` or ``842.5 m``, in the range of levels of
    the study file (contract section 9)."""
    from optimiser.io.limits import LEVEL

    match = _LEVEL.match(text)
    if not match or not math.isfinite(float(match.group(1))):
        raise ValueError(f"{option}: expected a level in metres such as 842.5, got {text!r}")
    complaint = LEVEL.message(float(match.group(1)))
    if complaint:
        raise ValueError(f"{option}: {complaint}")
    return float(match.group(1))


def steps_problems(steps: int) -> list[str]:
    """``--steps`` of a sweep: 2 to :data:`MAX_STEPS` values."""
    if not 2 <= steps <= MAX_STEPS:
        return [f"--steps: must be 2 to {MAX_STEPS:,}, not {steps}"]
    return []


def parse_sweep_value(option: str, variable: str, text: str) -> float:
    """``--from``/``--to`` in SI units: a flow with its unit for ``flow`` (or a branch's
    flow), a plain number for a pump variable, else metres."""
    from optimiser.sweeps.branch_variants import is_flow
    from optimiser.sweeps.pump_variants import PUMP_VARIABLES, parse_pump_value

    if variable in PUMP_VARIABLES:
        return parse_pump_value(option, variable, text)
    if is_flow(variable):
        from optimiser.io.units import parse_flow_m3_s

        try:
            return parse_flow_m3_s(text)
        except ValueError as error:
            raise ValueError(f"{option}: {error}") from None
    return parse_level_m(option, text)


def parse_range(vary: str, from_text: str, to_text: str
                ) -> tuple[str, float | None, float | None, list[str]]:
    """The variable of ``--vary`` and the ``--from``/``--to`` values in SI units (None
    where unreadable), with the problems found."""
    from optimiser.sweeps.branch_variants import normalised
    from optimiser.sweeps.variants import known_variable, variable_names

    variable = normalised(vary)
    if not known_variable(variable):
        return variable, None, None, [f"--vary: cannot vary {vary!r}; choose one of "
                                      f"{variable_names()}"]
    problems: list[str] = []
    values: list[float | None] = []
    for option, text in (("--from", from_text), ("--to", to_text)):
        try:
            values.append(parse_sweep_value(option, variable, text))
        except ValueError as error:
            problems.append(str(error))
            values.append(None)
    low, high = values
    if low is not None and high is not None and low >= high:
        problems.append(f"--from ({from_text}) must be less than --to ({to_text})")
    return variable, low, high, problems


def parse_ageing(items: list[str]) -> tuple[dict[str, float], list[str]]:
    """``MATERIAL=RATE`` items (mm/year) into a dict, and the problems found."""
    rates: dict[str, float] = {}
    problems: list[str] = []
    for item in items:
        material, sign, rate_text = item.rpartition("=")
        material = material.strip()
        if not sign or not material:
            problems.append(f"--ageing {item!r}: expected MATERIAL=RATE with the rate in "
                            "mm/year, e.g. --ageing \"ductile iron=0.02\"")
            continue
        try:
            rate = float(rate_text)
        except ValueError:
            problems.append(f"--ageing {item!r}: the rate {rate_text.strip()!r} is not a "
                            "number (mm/year)")
            continue
        if not math.isfinite(rate) or rate < 0:
            problems.append(f"--ageing {item!r}: the rate must be a finite number of "
                            "mm/year, 0 or more")
            continue
        if material in rates:
            problems.append(f"--ageing: material {material!r} is given twice")
            continue
        rates[material] = rate
    return rates, problems


def solver_problems(solver: str | None, time_limit_s: float | None, mip_gap: float | None,
                    workers: int, dask_address: str | None) -> list[str]:
    """Problems with the solver, time limit, gap, workers and Dask options."""
    from optimiser.io.limits import TIME
    from optimiser.milp import SOLVERS

    problems = []
    if solver is not None and solver.lower() not in SOLVERS:
        problems.append(f"--solver: unknown solver {solver!r}; use one of {', '.join(SOLVERS)}")
    if time_limit_s is not None and not (math.isfinite(time_limit_s) and time_limit_s > 0):
        problems.append(f"--time-limit: must be a positive number of seconds, not "
                        f"{time_limit_s:g}")
    elif time_limit_s is not None and TIME.message(time_limit_s):
        problems.append(f"--time-limit: {TIME.message(time_limit_s)}")
    if mip_gap is not None and not (0.0 <= mip_gap < 1.0):
        problems.append(f"--gap: must be a relative gap from 0 up to (not including) 1, not "
                        f"{mip_gap:g}")
    if workers < 1:
        problems.append(f"--workers: must be 1 or more, not {workers}")
    if dask_address is not None:
        if not dask_address.strip():
            problems.append("--dask: the scheduler address is empty")
        else:
            problems += _dask_address_problems(dask_address)
        if workers > 1:
            problems.append("--dask and --workers: give one of them (the Dask cluster has "
                            "its own workers)")
    return problems


def _dask_address_problems(address: str) -> list[str]:
    """An address Dask cannot parse (such as a TCP address without its port) is bad
    usage, found before any work (it used to fail on connecting, as a solver failure)."""
    from distributed.comm.addressing import parse_address, parse_host_port

    try:
        scheme, location = parse_address(address)
        if scheme in ("tcp", "tls"):
            parse_host_port(location)
    except ValueError as error:
        return [f"--dask {address!r}: not a scheduler address ({error}); give e.g. "
                "tcp://127.0.0.1:8786"]
    return []


def out_problems(out_dir: Path) -> list[str]:
    if out_dir.exists() and not out_dir.is_dir():
        return [f"{out_dir}: --out must be a folder, but a file has this name"]
    return []


def roughness_problems(low_mm: float, high_mm: float, steps: int) -> list[str]:
    """The roughness range (in the study file's range of roughness, section 9) and its
    steps."""
    from optimiser.io.limits import ROUGHNESS

    problems = []
    for option, value in (("--roughness-from", low_mm), ("--roughness-to", high_mm)):
        if not math.isfinite(value) or value < 0:
            problems.append(f"{option}: roughness must be 0 mm or more, not {value:g}")
        elif ROUGHNESS.message(value):
            problems.append(f"{option}: {ROUGHNESS.message(value)}")
    if low_mm >= high_mm:
        problems.append(f"--roughness-from ({low_mm:g}) must be less than "
                        f"--roughness-to ({high_mm:g})")
    return problems + steps_problems(steps)


def ageing_problems(rates: dict[str, float], years: float | None,
                    high_mm: float) -> list[str]:
    """Aged roughness (the range's top + rate x years) within the range of roughness of
    section 9: a rate or a number of years far beyond any pipe's is a slip."""
    from optimiser.io.limits import ROUGHNESS

    if years is None or not math.isfinite(years) or not math.isfinite(high_mm):
        return []
    problems = []
    for material, rate in rates.items():
        aged_mm = high_mm + rate * years
        if ROUGHNESS.message(aged_mm):
            problems.append(f"--ageing '{material}={rate:g}' with --years {years:g}: the "
                            f"roughness would reach {aged_mm:g} mm; "
                            f"{ROUGHNESS.message(aged_mm)}")
    return problems


def monte_carlo_problems(samples: int | None, seed: int | None, distribution: str | None,
                         mode_mm: float | None, years: float | None, ageing: list[str],
                         low_mm: float, high_mm: float) -> list[str]:
    """Problems with the Monte Carlo options (all of them need ``--samples``)."""
    from optimiser.analysis.sensitivity import DISTRIBUTIONS

    problems = []
    if samples is None:
        for given, option in ((seed is not None, "--seed"),
                              (distribution is not None, "--distribution"),
                              (mode_mm is not None, "--mode"), (years is not None, "--years"),
                              (bool(ageing), "--ageing")):
            if given:
                problems.append(f"{option}: applies to Monte Carlo only; give --samples N")
        return problems
    if not 1 <= samples <= MAX_SAMPLES:
        problems.append(f"--samples: must be 1 to {MAX_SAMPLES:,}, not {samples}")
    if seed is not None and seed < 0:
        problems.append(f"--seed: must be 0 or more, not {seed}")
    kind = (distribution or "uniform").lower()
    if kind not in DISTRIBUTIONS:
        problems.append(f"--distribution: unknown distribution {distribution!r}; use one of "
                        f"{', '.join(DISTRIBUTIONS)}")
    if kind == "log-uniform" and low_mm <= 0:
        problems.append("--roughness-from: must be above 0 for --distribution log-uniform")
    if mode_mm is not None:
        if kind != "triangular":
            problems.append("--mode: applies to --distribution triangular only")
        elif not (low_mm <= mode_mm <= high_mm):
            problems.append(f"--mode: {mode_mm:g} mm is outside the roughness range "
                            f"{low_mm:g}-{high_mm:g} mm")
    if years is not None and not (math.isfinite(years) and 0 <= years <= MAX_YEARS):
        problems.append(f"--years: must be 0 to {MAX_YEARS:g}, not {years:g}")
    return problems


def study_problems(study: Study, rates: dict[str, float]) -> list[str]:
    """What the loaded study must allow: Colebrook-White friction, the aged materials."""
    from optimiser.model import Friction

    problems = []
    if study.friction is not Friction.COLEBROOK_WHITE:
        problems.append(f"{study.path}: [catalogue] friction = {study.friction.value}: "
                        "roughness sensitivity needs colebrook-white (with Hazen-Williams, "
                        "age the C values in a catalogue instead)")
    materials = (study.full_catalogue or study.catalogue).materials
    for material in rates:
        if material not in materials:
            problems.append(f"--ageing: no material {material!r} in the catalogue "
                            f"{study.catalogue_path}; its materials are "
                            f"{', '.join(materials)}")
    return problems
