"""Water properties and pressure units against sources outside the project."""

from __future__ import annotations

import iapws
import numpy as np
import pytest

from optimiser.hydraulics.constants import G_M_S2, bar_to_head_m, head_m_to_bar
from optimiser.hydraulics.water import (
    density_kg_m3,
    dynamic_viscosity_pa_s,
    kinematic_viscosity_m2_s,
)

TEMPERATURES_C = [1.0, 2.0, 5.0, 10.0, 12.5, 15.0, 20.0, 25.0, 30.0, 35.0, 40.0]


def _iapws(temperature_c: float) -> iapws.IAPWS95:
    return iapws.IAPWS95(T=temperature_c + 273.15, P=0.101325)


@pytest.mark.parametrize("temperature_c", TEMPERATURES_C)
def test_kinematic_viscosity_matches_iapws(temperature_c):
    """IAPWS (2008), Release on the IAPWS Formulation 2008 for the Viscosity of Ordinary
    Water Substance, via the ``iapws`` package (IAPWS-95 density at 1 atm): rel 0.5% per
    the reference list, and rel 1e-4 as a regression guard (the two differ only by the
    density correlation, Kell 1975 vs IAPWS-95)."""
    got = float(kinematic_viscosity_m2_s(temperature_c))
    want = _iapws(temperature_c).nu
    assert got == pytest.approx(want, rel=5e-3)
    assert got == pytest.approx(want, rel=1e-4)


@pytest.mark.parametrize("temperature_c", TEMPERATURES_C)
def test_dynamic_viscosity_matches_iapws(temperature_c):
    """IAPWS (2008) viscosity via ``iapws`` (IAPWS95.mu at 1 atm); rel 1e-4."""
    assert float(dynamic_viscosity_pa_s(temperature_c)) == pytest.approx(
        _iapws(temperature_c).mu, rel=1e-4)


@pytest.mark.parametrize("temperature_c", TEMPERATURES_C)
def test_density_matches_iapws95(temperature_c):
    """Kell, G.S. (1975), Density, thermal expansivity and compressibility of liquid water
    from 0 to 150 C, J. Chem. Eng. Data 20(1), vs IAPWS-95 via ``iapws``; rel 1e-4."""
    assert float(density_kg_m3(temperature_c)) == pytest.approx(_iapws(temperature_c).rho,
                                                                rel=1e-4)


@pytest.mark.parametrize(("temperature_c", "nu_m2_s"), [(20.0, 1.004e-6), (10.0, 1.306e-6)])
def test_handbook_viscosity(temperature_c, nu_m2_s):
    """nu(20 C) = 1.004e-6, nu(10 C) = 1.306e-6 m^2/s: common practice, no source
    (handbook tables, from memory); rel 0.5%."""
    assert float(kinematic_viscosity_m2_s(temperature_c)) == pytest.approx(nu_m2_s, rel=5e-3)


def test_viscosity_falls_with_temperature_and_is_vectorised():
    """Water gets thinner as it warms (common practice, no source); arrays in, arrays out."""
    t = np.linspace(0.0, 60.0, 61)
    nu = kinematic_viscosity_m2_s(t)
    assert nu.shape == t.shape
    assert np.all(np.diff(nu) < 0)


def test_one_bar_in_metres_of_water():
    """1 bar = 10.197 m of water: common practice, no source; rel 1e-3."""
    assert float(bar_to_head_m(1.0)) == pytest.approx(10.197, rel=1e-3)


def test_pn16_in_metres_of_water():
    """PN16 ~ 163 m of water: common practice, no source; rel 1e-3."""
    assert float(bar_to_head_m(16.0)) == pytest.approx(163.0, rel=1e-3)


def test_bar_head_round_trip_and_gravity():
    """h = p / (rho g) with standard gravity 9.80665 m/s^2 (CGPM 1901)."""
    assert G_M_S2 == 9.80665
    heads = np.array([0.0, 10.0, 102.0, 163.0])
    np.testing.assert_allclose(bar_to_head_m(head_m_to_bar(heads)), heads, rtol=1e-14)
    assert float(bar_to_head_m(1.0, density_kg_m3=999.1)) == pytest.approx(
        1e5 / (999.1 * 9.80665), rel=1e-14)
