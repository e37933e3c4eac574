"""Colours and marker shapes shared by every chart of every report.

Options: each option of a comparison keeps one colour in every chart and every report
of that comparison (its own report included). The palette is our own: eight dark,
well-separated hues that stay apart from the scenario colours (Okabe & Ito 2008, used
for scenarios in :mod:`optimiser.reports.charts`) and print legibly in grey. Options are
coloured in the order the engineer lists them; a design on its own takes the colour its
name hashes to, so the same name always gets the same colour.

Points along the route (offtakes, fittings, air valves, washouts, the source and the
outlet) have one marker shape and colour each, in the long section and in the plan.
"""

from __future__ import annotations

import hashlib

OPTION_PALETTE = ("#1F3A68", "#9C3D1B", "#2E6B34", "#7A5A0A", "#5E2F73", "#1D6E73",
                  "#8C2449", "#4A4A4A")
"""Option colours, in the order they are given out."""

MARKERS: dict[str, tuple[str, str, int]] = {
    "source": ("triangle-up", "#0072B2", 13), "outlet": ("square", "#0072B2", 12),
    "offtake": ("diamond", "#D55E00", 11), "fitting": ("x", "#3A3A3A", 10),
    "air valve": ("circle-open", "#009E73", 10),
    "washout": ("triangle-down-open", "#CC79A7", 10),
}
"""Plotly symbol, colour and size of each kind of point along the route."""


def option_colour(key: str) -> str:
    """The colour of an option on its own: fixed by its name."""
    digest = hashlib.sha256(key.encode("utf-8")).digest()
    return OPTION_PALETTE[digest[0] % len(OPTION_PALETTE)]


def option_colours(keys: list[str]) -> dict[str, str]:
    """One colour per option of a comparison, in the order given (distinct up to eight
    options, then the palette repeats)."""
    return {key: OPTION_PALETTE[index % len(OPTION_PALETTE)]
            for index, key in enumerate(keys)}
