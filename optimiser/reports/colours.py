"""Colours and marker shapes shared by every chart of every report.

Options: each option of a comparison keeps one colour in every chart and every report
of that comparison (its own report included). The palette is our own: eight dark,
well-separated hues, drawn as the solid pipe line beside the scenario colours (Okabe &
Ito 2008, used for scenarios in :mod:`optimiser.reports.charts`), legible in grey. An
option's colour follows from its name, so the same options keep their colours from one
comparison to the next and a design on its own has the colour it has in a comparison.

Points along the route (offtakes, fittings, air valves, washouts, the source and the
outlet) have one marker shape and colour each, in the long section and in the plan.
"""

from __future__ import annotations

import hashlib

from plotly.colors import sample_colorscale

OPTION_PALETTE = ("#8C2449", "#1D6E73", "#7A5A0A", "#5E2F73", "#1F3A68", "#9C3D1B",
                  "#2E6B34", "#4A4A4A")
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
    """One colour per option of a comparison: the colour its name hashes to, or the next
    free one when two names hash alike (resolved in sorted order, so the same options
    get the same colours in whatever order they are given); distinct up to eight
    options, then the palette repeats."""
    colours: dict[str, str] = {}
    free = list(OPTION_PALETTE)
    for key in sorted(set(keys)):
        if not free:
            free = list(OPTION_PALETTE)
        wanted = option_colour(key)
        start = OPTION_PALETTE.index(wanted)
        ring = OPTION_PALETTE[start:] + OPTION_PALETTE[:start]
        colours[key] = next(c for c in ring if c in free)
        free.remove(colours[key])
    return colours


def size_colours(dns: list[float]) -> dict[float, str]:
    """A colour per nominal size, darker for larger DN: a sequential scale (Cividis:
    Nuñez, Anderton & Renslow 2018, optimised for colour-vision deficiency), shared by
    the plan view and the scheme diagram."""
    sizes = sorted(set(dns))
    if len(sizes) == 1:
        return {sizes[0]: sample_colorscale("Cividis", [0.35])[0]}
    positions = [0.85 - 0.75 * i / (len(sizes) - 1) for i in range(len(sizes))]
    return dict(zip(sizes, sample_colorscale("Cividis", positions), strict=True))
