"""The scheme diagram and the tables grouped by branch (contract section 7).

What is checked is geometry and arithmetic, not hydraulics: the diagram draws every line
(one trace each) to scale by chainage (a branch starts at its parent's start plus its
junction chainage, and is as long as its route), no junction tick crosses another
line's bar, every delivery point is labelled at its line's end, and a branch's totals
are the sums of its pieces (common practice, no source: a schedule's totals add up).
The scheme and its design are invented test data (``report_schemes.py``).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from report_schemes import scheme_design, scheme_study, with_plan

from optimiser.model.lines import study_lines
from optimiser.reports.scheme_diagram import (
    delivery_label,
    in_plan,
    scheme_figure,
    scheme_layout,
)
from optimiser.reports.scheme_tables import (
    branch_totals,
    by_branch,
    grouped_schedule_rows,
    scheme_total,
    totals_rows,
)


@pytest.fixture
def scheme(tmp_path):
    return scheme_study(tmp_path)


def _traces(fig, role):
    return [t for t in fig.data if (t.meta or {}).get("role") == role]


def test_one_trace_per_line_named_after_it(scheme):
    fig = scheme_figure(scheme, scheme_design(scheme))
    branches = _traces(fig, "branch")
    assert sorted(t.name for t in branches) == sorted(scheme.branch_names)
    assert len(branches) == len(study_lines(scheme))


def test_layout_to_scale_and_without_crossings(scheme):
    placements = {p.line.name: p for p in scheme_layout(scheme)}
    assert sorted(p.row for p in placements.values()) == list(range(len(placements)))
    assert placements["main"].row == 0 and placements["main"].start_m == 0.0
    for p in placements.values():
        assert p.end_m - p.start_m == pytest.approx(p.line.route.total_chainage_m)
        if p.line.parent is None:
            continue
        parent = placements[p.line.parent]
        assert p.start_m == pytest.approx(parent.start_m + p.line.at_chainage_m)
        assert p.parent_row == parent.row < p.row
        # The junction tick runs down from the parent's row to this one: every line on a
        # row between them starts at or beyond the junction, so the tick crosses no bar.
        for other in placements.values():
            if parent.row < other.row < p.row:
                assert other.start_m >= p.start_m - 1e-9


def test_every_delivery_point_labelled_at_its_end(scheme):
    fig = scheme_figure(scheme, scheme_design(scheme))
    (delivery,) = _traces(fig, "delivery")
    placements = scheme_layout(scheme)
    assert len(delivery.text) == len(placements)
    for p, x, y, text in zip(placements, delivery.x, delivery.y, delivery.text, strict=True):
        assert x == pytest.approx(p.end_m)
        assert y == -p.row
        assert text == delivery_label(p.line) and text
    # the builders name two ends, the spur's end has no label: its name is shown
    assert set(delivery.text) == {"tank", "east tank", "east spur", "west tank"}


def test_pieces_drawn_to_their_lengths_and_coloured_by_size(scheme):
    design = scheme_design(scheme)
    fig = scheme_figure(scheme, design)
    pieces = _traces(fig, "pieces")
    drawn = 0.0
    for trace in pieces:
        x = [v for v in trace.x]
        spans = [x[i + 1] - x[i] for i in range(0, len(x), 3)]
        drawn += sum(spans)
    assert drawn == pytest.approx(sum(p.to_m - p.from_m for p in design.pieces))
    colours = {t.name: t.line.color for t in pieces}
    assert len(set(colours.values())) == len({p.option.dn_mm for p in design.pieces})


def test_offtakes_of_every_line_are_marked(scheme):
    fig = scheme_figure(scheme, scheme_design(scheme))
    (offtakes,) = _traces(fig, "offtake")
    expected = sum(len(line.offtakes) for line in study_lines(scheme))
    assert len(offtakes.x) == expected
    assert any("school" in text and "east" in text for text in offtakes.text)


def test_in_plan_when_every_line_has_coordinates(scheme):
    assert not in_plan(scheme)
    planned = with_plan(scheme)
    assert in_plan(planned)
    fig = scheme_figure(planned, scheme_design(planned))
    (delivery,) = _traces(fig, "delivery")
    lines = [p.line for p in scheme_layout(planned)]
    for line, x, y in zip(lines, delivery.x, delivery.y, strict=True):
        ex, ey = line.route.coordinates.xy_at(np.array([line.route.total_chainage_m]))
        assert (x, y) == pytest.approx((ex[0], ey[0]))
    assert fig.layout.yaxis.scaleanchor == "x"
    assert len(_traces(fig, "branch")) == len(lines)
    # in plan no row names the lines: every delivery label starts with its line's name
    for line, text in zip(lines, delivery.text, strict=True):
        assert text.startswith(line.name)


def _pieces_table(design) -> pd.DataFrame:
    """A stand-in for the check's piece table: invented lengths and costs."""
    return pd.DataFrame([{
        "branch": p.branch, "from_m": p.from_m, "to_m": p.to_m, "length_m": p.to_m - p.from_m,
        "cost": (p.to_m - p.from_m) * p.option.cost_per_m} for p in design.pieces])


def test_totals_per_branch_are_the_sums_of_their_pieces(scheme):
    pieces = _pieces_table(scheme_design(scheme))
    totals = branch_totals(scheme, pieces)
    assert list(totals["branch"]) == ["main", "east", "east spur", "west"]
    for row in totals.itertuples():
        own = pieces[pieces["branch"] == row.branch]
        assert row.length_m == pytest.approx(own["length_m"].sum())
        assert row.cost == pytest.approx(own["cost"].sum())
        assert row.pieces == len(own)
    whole = scheme_total(totals)
    assert whole["cost"] == pytest.approx(pieces["cost"].sum())
    assert whole["length_m"] == pytest.approx(pieces["length_m"].sum())
    columns, rows = totals_rows(scheme, pieces, change_cost_total=0.0)
    assert rows[-1][0] == "scheme total (pipes)" and len(rows) == len(totals) + 1
    assert columns[0] == "branch"


def test_schedule_grouped_by_branch_with_a_total_each(scheme):
    pieces = _pieces_table(scheme_design(scheme))
    shuffled = pieces.sample(frac=1.0, random_state=3)  # grouping must not rely on order
    rows = grouped_schedule_rows(scheme, shuffled, lambda p: (
        str(p.from_m), str(p.to_m), f"{p.length_m:,.1f}", f"{p.cost:,.0f}"))
    names = [name for name, _ in by_branch(scheme, shuffled)]
    assert names == ["main", "east", "east spur", "west"]
    totals = [r for r in rows if r[0].endswith(": total")]
    assert [r[0] for r in totals] == [f"{n}: total" for n in names]
    for name, row in zip(names, totals, strict=True):
        own = pieces[pieces["branch"] == name]
        assert row[3] == f"{own['length_m'].sum():,.1f}"
        assert row[-1] == f"{own['cost'].sum():,.0f}"
    piece_rows = [r for r in rows if not r[0].endswith(": total")]
    assert len(piece_rows) == len(pieces)
    east = [float(r[1]) for r in piece_rows if r[0] == "east"]
    assert east == sorted(east)
