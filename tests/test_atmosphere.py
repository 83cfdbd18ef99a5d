"""Unit tests of profiler.losses.atmosphere (ITU-R P.676-12 Annex 1)."""

from __future__ import annotations

import numpy as np
import pytest

from profiler.errors import InputError, ModelValidityError
from profiler.losses._p676_lines import OXYGEN_LINES, WATER_VAPOUR_LINES
from profiler.losses.atmosphere import (
    gaseous_path_attenuation_db,
    gaseous_specific_attenuation_db_km,
    oxygen_specific_attenuation_db_km,
    water_vapour_specific_attenuation_db_km,
)


def test_line_tables_have_the_size_of_p676_12_tables_1_and_2():
    # ITU-R P.676-12 Annex 1: Table 1 has 44 oxygen lines, Table 2 has 35 water-vapour
    # rows (34 lines + the 1780 GHz continuum pseudo-line).
    assert OXYGEN_LINES.shape == (44, 7)
    assert WATER_VAPOUR_LINES.shape == (35, 7)
    assert np.all(np.diff(OXYGEN_LINES[:, 0]) > 0)
    assert np.all(np.diff(WATER_VAPOUR_LINES[:, 0]) > 0)
    assert WATER_VAPOUR_LINES[0, 0] == pytest.approx(22.23508)  # the 22 GHz water line
    assert OXYGEN_LINES[37, 0] == pytest.approx(118.750334)  # the isolated 119 GHz oxygen line
    assert not OXYGEN_LINES.flags.writeable


def test_total_is_sum_of_parts_and_broadcasts():
    f = np.array([[5.0, 15.0, 25.0], [40.0, 55.0, 80.0]])
    total = gaseous_specific_attenuation_db_km(f, temperature_c=[10.0, 20.0, 30.0])
    parts = oxygen_specific_attenuation_db_km(f, temperature_c=[10.0, 20.0, 30.0]) + water_vapour_specific_attenuation_db_km(
        f, temperature_c=[10.0, 20.0, 30.0]
    )
    assert total.shape == (2, 3)
    np.testing.assert_allclose(total, parts, rtol=1e-14)


def test_dry_air_has_no_water_vapour_attenuation():
    assert water_vapour_specific_attenuation_db_km(23.0, water_vapour_g_m3=0.0) == 0.0
    assert oxygen_specific_attenuation_db_km(23.0, water_vapour_g_m3=0.0) > 0.0


def test_water_line_and_oxygen_complex_stand_out():
    # Physical shape of the spectrum (ITU-R P.676-12 Annex 1, Figure 1): a peak near
    # the 22.235 GHz water line and the 60 GHz oxygen absorption complex.
    g = gaseous_specific_attenuation_db_km(np.array([18.0, 22.235, 28.0, 40.0, 60.0]))
    assert g[1] > g[0] and g[1] > g[2]
    assert g[4] > 100 * g[3]


def test_more_water_vapour_more_loss_at_23_ghz():
    low, high = gaseous_specific_attenuation_db_km(23.0, water_vapour_g_m3=[3.0, 15.0])
    assert high > 3 * low


def test_path_attenuation_scales_with_length():
    a = gaseous_path_attenuation_db([0.0, 10_000.0, 20_000.0], 23.0)
    assert a[0] == 0.0
    assert a[2] == pytest.approx(2 * a[1])
    assert a[1] == pytest.approx(10 * gaseous_specific_attenuation_db_km(23.0))


@pytest.mark.parametrize("freq", [0.5, 1001.0, float("nan")])
def test_frequency_outside_annex_1_range_is_refused(freq):
    with pytest.raises(ModelValidityError, match="P.676"):
        gaseous_specific_attenuation_db_km(freq)


@pytest.mark.parametrize(
    "kwargs",
    [{"pressure_hpa": 0.0}, {"temperature_c": -300.0}, {"water_vapour_g_m3": -1.0}],
)
def test_unphysical_atmosphere_is_refused(kwargs):
    with pytest.raises(InputError):
        gaseous_specific_attenuation_db_km(10.0, **kwargs)


def test_negative_distance_is_refused():
    with pytest.raises(InputError, match="path length"):
        gaseous_path_attenuation_db(-1.0, 10.0)
