"""Fluid properties against published tables."""

import pytest

from axibore import fluids


def test_iapws_if97_region1_specific_volume():
    # IAPWS-IF97 (Wagner et al., J. Eng. Gas Turbines Power 122, 2000), Table 5:
    # v(300 K, 3 MPa) = 0.100215168e-2 m^3/kg, v(500 K, 3 MPa) = 0.120241800e-2 m^3/kg
    assert 1.0 / fluids.water_density(300.0, 3e6) == pytest.approx(0.100215168e-2, rel=1e-8)
    assert 1.0 / fluids.water_density(500.0, 3e6) == pytest.approx(0.120241800e-2, rel=1e-8)


def test_iapws_if97_saturation_pressure():
    # IAPWS-IF97, Table 35: psat(300 K) = 3.53658941 kPa, psat(500 K) = 2.63889776 MPa
    assert fluids.water_vapour_pressure(300.0) == pytest.approx(3.53658941e3, rel=1e-8)
    assert fluids.water_vapour_pressure(500.0) == pytest.approx(2.63889776e6, rel=1e-8)


def test_steam_is_refused():
    with pytest.raises(ValueError, match="not liquid"):
        fluids.water_density(500.0, 1e5)


def test_seawater_default_density_and_vapour_pressure():
    # 1025 kg/m^3: the documented default for seawater (common practice); the vapour pressure is
    # that of pure water: IAPWS-IF97, Table 35, psat(300 K) = 3.53658941 kPa
    f = fluids.resolve_seawater(300.0, None)
    assert f.density == 1025.0
    assert f.vapour_pressure == pytest.approx(3.53658941e3, rel=1e-8)
    assert fluids.resolve_seawater(300.0, 1030.0).density == 1030.0
