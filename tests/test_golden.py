"""Golden test: the optimiser's results on fixed cases stay what they were.

The figures in ``tests/golden/*.json`` were taken by ``tests/golden/make_golden.py``
(its docstring says how to regenerate them). They are not check values of the main job
(the demo data and the benchmark route are invented): they pin the results of the
search so that a restructure of the optimiser can be shown to change none of them. The
correctness of the figures themselves rests on the other tests (brute force,
enumeration, the independent check), whose sources are named there.

Compared: the status, the total cost and the LP bound to 1e-9 relative, every piece (its
chainages to 1e-6 m and its option), and the sequence of search stages (display name
and status). The lower bound too, to 1e-9, where it was proven equal to the cost; where a
run stopped at its gap target the bound is the solver's dual bound at that moment, which
moves with the machine (the benchmark case's bound moved by 1.8e-5 relative between an
earlier machine and an AMD EPYC one with the same code, under every HiGHS version from
1.10 to 1.16): there it must stay at or below the cost and within the recorded gap
(cost less bound) of the recorded bound. Every case runs with a generous time limit, so
no stage is cut short or skipped by the clock.
"""

from __future__ import annotations

import json

import pytest
from golden.make_golden import CASES, golden_path, run_case

RELATIVE = 1e-9


def _same(value: float | None, expected: float | None) -> bool:
    if expected is None or value is None:
        return value is expected
    return value == pytest.approx(expected, rel=RELATIVE, abs=1e-9)


def _same_bound(got: dict, expected: dict) -> bool:
    """The lower bound as recorded, or, for a run stopped at its gap, one as good."""
    bound, want, cost = got["lower_bound"], expected["lower_bound"], expected["total_cost"]
    if want is None or bound is None or _same(want, cost):
        return _same(bound, want)
    return bound <= cost * (1 + RELATIVE) and abs(bound - want) <= cost - want + RELATIVE * cost


@pytest.mark.parametrize("case", CASES)
def test_results_match_the_golden_figures(case: str) -> None:
    expected = json.loads(golden_path(case).read_text())
    got = run_case(case)
    assert got["status"] == expected["status"]
    for key in ("total_cost", "lp_bound"):
        assert _same(got[key], expected[key]), (key, got[key], expected[key])
    assert _same_bound(got, expected), (got["lower_bound"], expected["lower_bound"])
    assert len(got["pieces"]) == len(expected["pieces"])
    for piece, want in zip(got["pieces"], expected["pieces"], strict=True):
        assert piece[2] == want[2]
        assert piece[0] == pytest.approx(want[0], abs=1e-6)
        assert piece[1] == pytest.approx(want[1], abs=1e-6)
    assert got["stages"] == expected["stages"]
