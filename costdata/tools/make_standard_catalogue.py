"""Write costdata/standard.csv: standard pipe dimensions with INVENTED prices.

Run from the repository root: ``python costdata/tools/make_standard_catalogue.py``.
It rewrites ``costdata/standard.csv`` and prints the wave speed of each row (Korteweg,
water at 15 C), which costdata/README.md quotes.

Dimensions follow the rules of the standards as recalled (from memory; confirm each
figure against the standard's own table and the maker's data before real use):

- PE100, ISO 4427-2: wall e = OD / (2 S + 1), S the pipe series taken as the exact R20
  (Renard) number 10^(k/20) (S 5 = 5.0119 for "SDR 11", S 8 = 7.9433 for "SDR 17"),
  rounded to 0.01 mm and then up to 0.1 mm; PN = 20 MRS / (C (SDR - 1)) with MRS
  10 MPa, C 1.25, named by the nearest PN of the R10 series.
- PVC-U, ISO 1452-2: the same wall rule; PN = 20 MRS / (C (SDR - 1)) with MRS 25 MPa and
  C 2.0 (outside diameters above 90 mm), named by the nearest PN of the R10 series.
- Ductile iron, EN 545 (2010): outside diameter DE by DN; pressure class Cxx with the
  allowable operating pressure PFA = xx bar and the maximum allowable pressure with surge
  PMA = 1.2 PFA; minimum wall e_min = PFA SF DE / (20 Rm + PFA SF) with SF 3 and
  Rm 420 MPa, at least 3.0 mm, nominal wall e_min + (1.3 + 0.001 DN) rounded up to
  0.1 mm; cement-mortar lining 3 mm up to DN 300, 5 mm above (ISO 4179 nominal values).
- Steel, EN 10224 outside diameters and EN 10220 wall steps; allowable pressure by
  Barlow's formula p = 2 sigma e / OD with sigma half the minimum yield of L235 (a
  choice of ours, not a standard's); cement-mortar lining 6 mm up to DN 300, 8 mm above
  (typical values, not a standard's).

Prices: INVENTED (laying part by outside diameter, material part by mass); they are not
quotations, not from any supplier and not an estimate of any market.
"""

from __future__ import annotations

import csv
import math
from pathlib import Path

from optimiser.hydraulics.constants import bar_to_head_m
from optimiser.hydraulics.surge import korteweg_wave_speed_m_s
from optimiser.hydraulics.water import density_kg_m3

OUT = Path(__file__).resolve().parents[1] / "standard.csv"
COLUMNS = ["material", "dn_mm", "internal_diameter_mm", "pressure_class", "allowable_head_m",
           "roughness_mm", "hazen_williams_c", "cost_per_m", "note", "outside_diameter_mm",
           "sdr", "wall_thickness_mm", "elastic_modulus_gpa", "poisson_ratio",
           "allowable_surge_head_m"]
PN_SERIES = [4.0, 5.0, 6.3, 8.0, 10.0, 12.5, 16.0, 20.0, 25.0, 32.0, 40.0, 50.0, 63.0, 80.0,
             100.0]
NOTE = "INVENTED price, not a quotation; dimensions by {rule} (from memory, confirm)"

# pipe series S: nominal SDR -> exact R20 number (ISO 4065 table values are built on them)
SERIES = {26: 10 ** (22 / 20), 21: 10 ** (20 / 20), 17: 10 ** (18 / 20), 11: 10 ** (14 / 20),
          9: 10 ** (12 / 20), 7.4: 10 ** (10 / 20)}

PE_OD = [110, 125, 160, 200, 250, 315, 400]
PE_SDR = [26, 17, 11, 9, 7.4]
PVC_OD = [110, 160, 200, 250, 315]
PVC_SDR = [26, 21, 17]
DI_OD = {100: 118.0, 150: 170.0, 200: 222.0, 250: 274.0, 300: 326.0, 350: 378.0,
         400: 429.0, 500: 532.0}
STEEL = {200: (219.1, [4.5, 6.3]), 250: (273.0, [5.0, 7.1]), 300: (323.9, [5.6, 8.0]),
         400: (406.4, [6.3, 8.8]), 500: (508.0, [7.1, 10.0])}


def round_up(value_mm: float) -> float:
    """Round up to 0.1 mm after rounding to 0.01 mm: the rule that reproduces the ISO
    4065 / ISO 4427-2 walls we recall (110 SDR 26: 4.2019 -> 4.2; 110 SDR 17: 6.514 -> 6.6;
    250 SDR 17: 14.805 -> 14.8)."""
    return math.ceil(round(value_mm, 2) * 10.0 - 1e-9) / 10.0


def pn_below(pressure_bar: float) -> float:
    """The largest PN of the R10 series not above a pressure [bar]."""
    return max(p for p in PN_SERIES if p <= pressure_bar + 1e-9)


def pn_nearest(pressure_bar: float) -> float:
    """The PN of the R10 series nearest to a pressure [bar] (how the plastics standards
    name a pipe series: S 8 at 12.5 MPa gives 15.6 bar, sold as PN 16)."""
    return min(PN_SERIES, key=lambda p: abs(math.log(p / pressure_bar)))


def head(pn_bar: float) -> float:
    return round(float(bar_to_head_m(pn_bar)), 1)


def price(outside_mm: float, mass_kg_m: float, rate_per_kg: float, extra: float) -> float:
    """INVENTED supply-and-lay price per metre: trench and laying by outside diameter,
    material by mass, a fixed extra for joints and fittings."""
    return round(40.0 + 0.20 * outside_mm + rate_per_kg * mass_kg_m + extra)


def shell_mass_kg_m(outside_mm: float, wall_mm: float, density: float) -> float:
    return density * math.pi * (outside_mm - wall_mm) * wall_mm * 1e-6


def plastic_rows(material: str, ods: list[int], sdrs: list[float], mrs_mpa: float,
                 coefficient: float, modulus_gpa: float, poisson: float, density: float,
                 rate: float, roughness: float, standard: str) -> list[dict]:
    rows = []
    for od in ods:
        for sdr in sdrs:
            wall = round_up(od / (2 * SERIES[sdr] + 1))
            pn = pn_nearest(20 * mrs_mpa / (coefficient * (sdr - 1)))
            mass = shell_mass_kg_m(od, wall, density)
            rows.append({
                "material": material, "dn_mm": od, "internal_diameter_mm": round(od - 2 * wall, 1),
                "pressure_class": f"PN{pn:g}", "allowable_head_m": head(pn),
                "roughness_mm": roughness, "hazen_williams_c": 150,
                "cost_per_m": price(od, mass, rate, 4.0),
                "note": NOTE.format(rule=standard), "outside_diameter_mm": od, "sdr": sdr,
                "wall_thickness_mm": wall, "elastic_modulus_gpa": modulus_gpa,
                "poisson_ratio": poisson, "allowable_surge_head_m": ""})
    return rows


def ductile_iron_rows() -> list[dict]:
    rows = []
    for dn, outside in DI_OD.items():
        lining = 3.0 if dn <= 300 else 5.0
        walls: set[float] = set()
        for pfa in ([40, 64] if dn <= 300 else [30, 40, 64]):
            e_min = max(pfa * 3 * outside / (20 * 420 + pfa * 3), 3.0)
            wall = round_up(e_min + 1.3 + 0.001 * dn)
            if wall in walls:
                continue  # the 3.0 mm least wall already carries this class
            walls.add(wall)
            mass = shell_mass_kg_m(outside, wall, 7050.0) + \
                shell_mass_kg_m(outside - 2 * wall, lining, 2200.0)
            rows.append({
                "material": "ductile iron", "dn_mm": dn,
                "internal_diameter_mm": round(outside - 2 * wall - 2 * lining, 1),
                "pressure_class": f"C{pfa}", "allowable_head_m": head(pfa),
                "roughness_mm": 0.1, "hazen_williams_c": 140,
                "cost_per_m": price(outside, mass, 1.45, 14.0),
                "note": NOTE.format(rule="EN 545 classes, cement-mortar lined"),
                "outside_diameter_mm": outside, "sdr": "", "wall_thickness_mm": wall,
                "elastic_modulus_gpa": 170.0, "poisson_ratio": 0.28,
                "allowable_surge_head_m": head(1.2 * pfa)})
    return rows


def steel_rows() -> list[dict]:
    rows = []
    for dn, (outside, walls) in STEEL.items():
        lining = 6.0 if dn <= 300 else 8.0
        for wall in walls:
            pn = pn_below(2 * 117.5 * wall / outside * 10.0)  # MPa -> bar
            mass = shell_mass_kg_m(outside, wall, 7850.0) + \
                shell_mass_kg_m(outside - 2 * wall, lining, 2200.0)
            rows.append({
                "material": "steel", "dn_mm": dn,
                "internal_diameter_mm": round(outside - 2 * wall - 2 * lining, 1),
                "pressure_class": f"PN{pn:g}", "allowable_head_m": head(pn),
                "roughness_mm": 0.1, "hazen_williams_c": 130,
                "cost_per_m": price(outside, mass, 1.9, 30.0),
                "note": NOTE.format(rule="EN 10224 sizes, Barlow rating, cement-mortar lined"),
                "outside_diameter_mm": outside, "sdr": "", "wall_thickness_mm": wall,
                "elastic_modulus_gpa": 206.0, "poisson_ratio": 0.3,
                "allowable_surge_head_m": ""})
    return rows


def all_rows() -> list[dict]:
    return (plastic_rows("PE100", PE_OD, PE_SDR, 10.0, 1.25, 1.0, 0.4, 960.0, 2.4, 0.03,
                         "ISO 4427-2")
            + plastic_rows("PVC-U", PVC_OD, PVC_SDR, 25.0, 2.0, 3.0, 0.38, 1400.0, 2.2, 0.03,
                           "ISO 1452-2")
            + ductile_iron_rows() + steel_rows())


def main() -> None:
    rows = all_rows()
    keys = {(r["material"], r["dn_mm"], r["pressure_class"]) for r in rows}
    assert len(keys) == len(rows), "duplicate (material, dn_mm, pressure_class)"
    with OUT.open("w", newline="", encoding="utf-8") as handle:
        writer = csv.DictWriter(handle, fieldnames=COLUMNS, lineterminator="\n")
        writer.writeheader()
        writer.writerows(rows)
    rho = float(density_kg_m3(15.0))
    for r in rows:
        a = korteweg_wave_speed_m_s(r["internal_diameter_mm"] / 1000,
                                    r["wall_thickness_mm"] / 1000,
                                    r["elastic_modulus_gpa"] * 1e9, rho, r["poisson_ratio"])
        print(f"{r['material']:12s} {r['dn_mm']:>4} {r['pressure_class']:>6} "
              f"ID {r['internal_diameter_mm']:6.1f} e {r['wall_thickness_mm']:5.1f} "
              f"a {float(a):6.0f} m/s  cost {r['cost_per_m']}")
    print(f"wrote {OUT} ({len(rows)} rows)")


if __name__ == "__main__":
    main()
