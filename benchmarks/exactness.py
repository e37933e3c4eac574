"""Is "optimal" the cheapest design the check accepts? Random routes against an
independent grid MILP; writes the ``exactness`` section of benchmarks/RESULTS.md.

    python benchmarks/exactness.py                 # 200 routes rules off, 200 rules on
    python benchmarks/exactness.py --cases 20      # a quick look

For every seeded random route (``tests/random_routes.py``, invented data) the optimiser
designs the study (gap 1e-6) and an independent model (``tests/independent_grid.py``:
cells of equal chainage plus the exact class-limit crossings, one option per cell,
``scipy.optimize.milp``, friction from the ``fluids`` package) designs it too; its design
is judged by ``check_design``. Counted: routes where the optimiser's design is dearer
than an accepted independent design (beyond 1e-6), and where its ``lower_bound`` is above
the cost of one. Both must be zero. Not a test: nothing here asserts.
"""

from __future__ import annotations

import argparse
import sys
import tempfile
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE.parent / "tests"))
sys.path.insert(0, str(HERE))

from independent_grid import solve_grid  # noqa: E402
from random_routes import write_random_study  # noqa: E402
from results_file import update_section  # noqa: E402

from optimiser import load_study  # noqa: E402
from optimiser.analysis import check_design  # noqa: E402
from optimiser.milp import optimise_design  # noqa: E402

TOLERANCE = 1e-6


def judge(seed: int, rules: bool, folder: Path) -> dict:
    study = load_study(write_random_study(folder / f"r{seed}-{int(rules)}", seed, rules))
    outcome = optimise_design(study)
    grid = solve_grid(study, cells=4)
    row = {"seed": seed, "rules": rules, "status": str(outcome.status),
           "cost": outcome.total_cost, "bound": outcome.lower_bound, "grid": None}
    if grid is None:
        return row
    checked = check_design(study, grid.design, capacity=False)
    if not checked.ok:
        row["grid_rejected"] = True
        return row
    row["grid"] = checked.total_cost
    return row


def summarise(rows: list[dict], rules: bool) -> str:
    mine = [r for r in rows if r["rules"] == rules]
    judged = [r for r in mine if r["grid"] is not None]
    dearer = [r for r in judged if r["cost"] is None
              or r["cost"] > r["grid"] * (1 + TOLERANCE)]
    above = [r for r in judged if r["bound"] is not None
             and r["bound"] > r["grid"] * (1 + TOLERANCE)]
    rejected = sum(1 for r in mine if r.get("grid_rejected"))
    excess = max(((r["cost"] or float("inf")) / r["grid"] - 1 for r in dearer), default=0.0)
    seeds = ", ".join(str(r["seed"]) for r in dearer[:8])
    return (f"| rules {'on' if rules else 'off'} | {len(mine)} | {len(judged)} | {rejected} | "
            f"{len(dearer)} | {excess:.2%} | {len(above)} | {seeds} |")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--cases", type=int, default=200)
    parser.add_argument("--no-write", action="store_true")
    args = parser.parse_args()
    rows: list[dict] = []
    started = time.perf_counter()
    with tempfile.TemporaryDirectory() as tmp:
        for rules in (False, True):
            for seed in range(args.cases):
                rows.append(judge(seed, rules, Path(tmp)))
    table = ["| case | routes | independent design accepted | independent design rejected "
             "by the check | optimiser dearer | largest excess | bound above an accepted "
             "design | first seeds dearer |", "|---|---|---|---|---|---|---|---|",
             summarise(rows, False), summarise(rows, True)]
    text = "\n".join(table) + f"\n\n{time.perf_counter() - started:.0f} s in all.\n"
    print(text)
    if not args.no_write:
        update_section(HERE / "RESULTS.md", "exactness", text)


if __name__ == "__main__":
    main()
