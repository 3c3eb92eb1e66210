"""Air density against ISO 2533 and the ideal-gas law."""

import numpy as np
import pytest

from cardgen.physics.atmosphere import (
    air_density,
    air_density_isa,
    isa_pressure,
    isa_temperature,
    saturation_vapour_pressure_buck,
)

# ISO 2533:1975 Standard Atmosphere table (ICAO Doc 7488 gives the same), tolerance
# 5e-4 kg/m³ covers geometric vs geopotential height and the rounding of R.
ISA_TABLE = [
    (0.0, 288.15, 101325.0, 1.2250),
    (500.0, 284.90, 95461.0, 1.1673),
    (1000.0, 281.65, 89875.0, 1.1117),
    (1500.0, 278.40, 84556.0, 1.0581),
    (2000.0, 275.15, 79495.0, 1.0066),
    (3000.0, 268.65, 70109.0, 0.9093),
]


@pytest.mark.parametrize("height, temperature, pressure, density", ISA_TABLE)
def test_isa_table_iso_2533(height, temperature, pressure, density):
    assert isa_temperature(height) == pytest.approx(temperature, abs=0.01)
    assert isa_pressure(height) == pytest.approx(pressure, rel=1e-4)
    assert air_density_isa(height) == pytest.approx(density, abs=5e-4)


def test_isa_accepts_arrays_and_keeps_the_shape():
    heights = np.array([[0.0, 1000.0], [2000.0, 3000.0]])
    rho = air_density_isa(heights)
    assert rho.shape == (2, 2)
    np.testing.assert_allclose(rho.ravel(), [1.2250, 1.1117, 1.0066, 0.9093], atol=5e-4)


def test_isa_outside_the_troposphere_is_nan():
    assert np.isnan(air_density_isa(12000.0))
    assert np.isnan(air_density_isa(-2000.0))
    assert np.isnan(air_density_isa(np.nan))


# Dry air, ideal gas with R = 287.05 J/(kg K) at 1013.25 hPa; values computed
# independently in docs/sources.md section 2 [C].
@pytest.mark.parametrize(
    "celsius, hpa, density",
    [
        (0, 1013.25, 1.2923),
        (15, 1013.25, 1.2250),
        (20, 1013.25, 1.2041),
        (30, 1013.25, 1.1644),
        (25, 900.0, 1.0516),
        (10, 800.0, 0.9843),
    ],
)
def test_dry_air_ideal_gas(celsius, hpa, density):
    assert air_density(celsius + 273.15, hpa * 100) == pytest.approx(density, abs=1e-4)


def test_humid_air_is_lighter():
    # 30 °C, 80 % RH, 1013.25 hPa → 1.1497 kg/m³ (docs/sources.md section 2 [C],
    # p_d/(R_d T) + p_v/(R_v T) with R_v = 461.5).
    assert air_density(303.15, 101325.0, 0.8) == pytest.approx(1.1497, abs=2e-4)


def test_saturation_vapour_pressure_buck_1981():
    # Buck (1981) J. Appl. Meteorol. 20:1527, table: 100 °C is out of range; at 20 °C
    # e_w ≈ 23.37 hPa (from memory of the usual tables, e.g. CRC Handbook 2.339 kPa).
    assert saturation_vapour_pressure_buck(293.15) == pytest.approx(2339.0, rel=2e-3)
    assert np.isnan(saturation_vapour_pressure_buck(373.15))


@pytest.mark.parametrize("t, p, rh", [(0.0, 101325.0, 0.0), (288.15, -1.0, 0.0), (288.15, 101325.0, 1.5)])
def test_impossible_inputs_give_nan(t, p, rh):
    assert np.isnan(air_density(t, p, rh))


def test_actual_temperature_overrides_isa():
    warm = air_density_isa(0.0, temperature=303.15)
    assert warm == pytest.approx(1.1644, abs=2e-4)  # same as dry air at 30 °C, 1013.25 hPa


def test_density_along_a_route_is_the_isa_density_at_each_segments_mid_height():
    """ISO 2533 table (above): 1.2250 kg/m³ at 0 m, 1.1117 at 1000 m, 1.0066 at 2000 m;
    a segment from 0 to 2000 m takes its mid-height, 1000 m. Heights beyond the
    troposphere's table (a damaged elevation) are clipped, never NaN."""
    from cardgen.physics.atmosphere import density_along

    rho = density_along(np.array([0.0, 0.0, 2000.0, 2000.0, 50_000.0]))
    np.testing.assert_allclose(rho[:3], [1.2250, 1.1117, 1.0066], atol=5e-4)
    assert rho.shape == (4,) and np.isfinite(rho).all()
