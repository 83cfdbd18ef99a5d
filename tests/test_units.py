import numpy as np
import pytest

from profiler import units


def test_db_ratio_round_trip():
    values = np.array([-30.0, 0.0, 3.0, 10.0, 47.5])
    assert np.allclose(units.ratio_to_db(units.db_to_ratio(values)), values)


@pytest.mark.parametrize(
    "dbm, watts",
    # Common practice: 0 dBm = 1 mW, 10 dBm = 10 mW, 20 dBm = 100 mW, 30 dBm = 1 W.
    [(0.0, 1e-3), (10.0, 1e-2), (20.0, 0.1), (30.0, 1.0)],
)
def test_dbm_watts(dbm, watts):
    assert units.dbm_to_watts(dbm) == pytest.approx(watts)
    assert units.watts_to_dbm(watts) == pytest.approx(dbm)


def test_forty_watts_is_about_46_dbm():
    # Common practice: 40 W = 46.02 dBm.
    assert units.watts_to_dbm(40.0) == pytest.approx(46.02, abs=0.005)


def test_wavelength():
    # lambda = c / f; at 3 GHz about 0.0999 m (common practice).
    assert units.wavelength_m(3.0) == pytest.approx(0.0999308, rel=1e-6)
    assert units.wavelength_m(np.array([1.0, 10.0])) == pytest.approx([0.299792458, 0.0299792458])


def test_isotropic_aperture_at_3_ghz():
    # Effective aperture of an isotropic antenna lambda^2 / (4 pi): about 7.9 cm^2 at 3 GHz
    # (common practice).
    lam = units.wavelength_m(3.0)
    assert lam**2 / (4 * np.pi) * 1e4 == pytest.approx(7.95, abs=0.05)
