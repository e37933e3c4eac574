"""Regenerate the INVENTED demo profile of studies/demo-gravity-main/profile.csv.

The route, its levels and its labels are made up for the demo; they describe no real
place. The ground line is a smooth curve through a handful of hand-picked control points
(monotone cubic, so it does not overshoot them), plus a gentle undulation and a small
+/-0.3 m jitter that mimics survey noise. The generator is seeded, so running it again
gives the same file byte for byte.

    python studies/tools/make_demo_profile.py                # writes the demo profile
    python studies/tools/make_demo_profile.py --out other.csv

Needs numpy only.
"""

from __future__ import annotations

import argparse
from pathlib import Path

import numpy as np

SEED = 20260415
LAST_CHAINAGE_M = 21948.6

# (chainage m, ground m) control points of the invented route.
CONTROL = np.array(
    [
        (0.0, 836.0),  # intake chamber beside the hill source
        (300.0, 830.5),
        (1500.0, 816.0),
        (3000.0, 801.0),
        (4500.0, 795.0),
        (6000.0, 790.0),
        (7000.0, 786.5),
        (8000.0, 790.0),
        (9000.0, 800.0),
        (9800.0, 808.5),
        (10200.0, 812.0),  # ridge crest
        (10600.0, 808.5),
        (11500.0, 795.0),
        (12500.0, 770.0),
        (13500.0, 735.0),
        (14300.0, 706.0),
        (14900.0, 698.5),  # valley floor
        (15500.0, 703.0),
        (16200.0, 712.0),
        (17000.0, 722.0),
        (18500.0, 732.0),
        (20000.0, 735.0),
        (21000.0, 733.0),
        (LAST_CHAINAGE_M, 728.0),  # service reservoir inlet
    ]
)

ROCK_FROM_M = 9150.0  # the ridge is rock from here ...
ROCK_TO_M = 11300.0  # ... to here (zone applies to the section starting at a row)


def pchip(x: np.ndarray, y: np.ndarray, xi: np.ndarray) -> np.ndarray:
    """Monotone piecewise cubic Hermite interpolation (Fritsch and Carlson 1980)."""
    h = np.diff(x)
    delta = np.diff(y) / h
    m = np.zeros_like(y)
    for k in range(1, len(x) - 1):
        if delta[k - 1] * delta[k] > 0:
            w1 = 2 * h[k] + h[k - 1]
            w2 = h[k] + 2 * h[k - 1]
            m[k] = (w1 + w2) / (w1 / delta[k - 1] + w2 / delta[k])
    m[0], m[-1] = delta[0], delta[-1]
    k = np.clip(np.searchsorted(x, xi, side="right") - 1, 0, len(x) - 2)
    t = (xi - x[k]) / h[k]
    h00 = (1 + 2 * t) * (1 - t) ** 2
    h10 = t * (1 - t) ** 2
    h01 = t**2 * (3 - 2 * t)
    h11 = t**2 * (t - 1)
    return h00 * y[k] + h10 * h[k] * m[k] + h01 * y[k + 1] + h11 * h[k] * m[k + 1]


def make_profile(seed: int = SEED) -> list[tuple[float, float, str, str]]:
    rng = np.random.default_rng(seed)
    # Survey stations: irregular spacing, denser over the ridge and through the valley.
    stations = [0.0]
    while True:
        c = stations[-1]
        dense = 9300.0 < c < 11200.0 or 13800.0 < c < 16000.0
        step = rng.uniform(35.0, 80.0) if dense else rng.uniform(70.0, 140.0)
        if c + step > LAST_CHAINAGE_M - 40.0:
            break
        stations.append(round(c + step, 1))
    stations.append(LAST_CHAINAGE_M)
    x = np.array(stations)

    ground = pchip(CONTROL[:, 0], CONTROL[:, 1], x)
    # Gentle rolling ground (zero at both ends) plus survey jitter.
    taper = np.sin(np.pi * x / LAST_CHAINAGE_M)
    ground += taper * (
        0.8 * np.sin(2 * np.pi * x / 1370.0 + 0.4) + 0.5 * np.sin(2 * np.pi * x / 610.0 + 1.9)
    )
    ground += rng.uniform(-0.3, 0.3, size=x.size)
    ground = np.round(ground, 2)

    labels = [""] * x.size
    labels[0] = "intake"
    labels[-1] = "reservoir inlet"
    ridge = np.where((x > 9000.0) & (x < 11500.0))[0]
    labels[ridge[np.argmax(ground[ridge])]] = "ridge crest"
    valley = np.where((x > 13000.0) & (x < 17000.0))[0]
    labels[valley[np.argmin(ground[valley])]] = "valley floor"

    zones = ["rock" if ROCK_FROM_M <= c < ROCK_TO_M else "normal" for c in x]
    rows = zip(x, ground, labels, zones, strict=True)
    return [(float(c), float(g), lab, z) for c, g, lab, z in rows]


def main() -> None:
    here = Path(__file__).resolve().parent
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    default_out = here.parent / "demo-gravity-main" / "profile.csv"
    parser.add_argument("--out", type=Path, default=default_out)
    parser.add_argument("--seed", type=int, default=SEED)
    args = parser.parse_args()
    rows = make_profile(args.seed)
    with args.out.open("w", encoding="utf-8", newline="\n") as f:
        f.write("chainage_m,ground_m,label,zone\n")
        for c, g, lab, z in rows:
            f.write(f"{c:.1f},{g:.2f},{lab},{z}\n")
    print(f"wrote {len(rows)} points to {args.out}")


if __name__ == "__main__":
    main()
