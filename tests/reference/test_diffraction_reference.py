"""Diffraction checks against published formulas and values.

Sources are named beside each check: ITU-R P.526-15 (10/2019); values marked
[computed] were computed from its formulas, [from memory] are textbook values.
"""

from __future__ import annotations

import numpy as np
import pytest

from profiler.losses import terrain_diffraction as td
from profiler.losses.knife_edge import fresnel_kirchhoff_v, knife_edge_loss_db
from profiler.units import EARTH_RADIUS_M


def single_edge(length_m, edge_at_m, edge_height_m, n=201):
    d = np.linspace(0.0, length_m, n)
    s = np.zeros(n)
    s[int(np.argmin(np.abs(d - edge_at_m)))] = edge_height_m
    inner = np.zeros(n, bool)
    inner[1:-1] = True
    return d[None], s[None], inner[None], np.array([length_m])


# J(v) itself (exact and approximate forms) is checked in test_knife_edge_reference.py.


def test_bullington_computed_example():
    """ITU-R P.526-15 section 4.5.1 [computed]: 10 km, one edge 20 m above the line at mid-path,
    1 GHz, flat earth: v = 1.033, J = 14.14 dB, Lbull = 23.37 dB."""
    d, s, inner, length = single_edge(10_000.0, 5_000.0, 30.0)
    v = fresnel_kirchhoff_v(20.0, 5_000.0, 5_000.0, 1.0)
    assert float(v) == pytest.approx(1.033, abs=5e-4)
    knife = td.diffraction_loss_db("knife-edge", d, s, inner, 10.0, 10.0, length, 1.0, np.inf)[0]
    assert knife == pytest.approx(14.14, abs=5e-3)
    bull = td.diffraction_loss_db("bullington", d, s, inner, 10.0, 10.0, length, 1.0, np.inf)[0]
    assert bull == pytest.approx(23.37, abs=5e-3)
    # Flat earth, flat ground: the smooth-earth term adds nothing (ITU-R P.526-15 section 4.5.2).
    delta = td.diffraction_loss_db("delta-bullington", d, s, inner, 10.0, 10.0, length, 1.0, np.inf)[0]
    assert delta == pytest.approx(bull, abs=1e-9)


@pytest.mark.parametrize("height_m, expect_db, tol_db", [(25.0, 22.0, 0.5), (0.0, 6.0, 0.05), (-25.0, 0.0, 1e-9)])
def test_textbook_knife_edge(height_m, expect_db, tol_db):
    """Textbook example (from memory): lambda = 1/3 m, d1 = d2 = 1 km, h = 25 m gives v = 2.74,
    about 22 dB; h = 0 gives 6 dB; h = -25 m about 0 dB (J(v) of ITU-R P.526-15 section 4.1)."""
    freq_ghz = 0.299792458 * 3.0  # lambda = 1/3 m
    d, s, inner, length = single_edge(2_000.0, 1_000.0, 50.0 + height_m)
    for name in ("knife-edge", "deygout", "epstein-peterson"):
        got = td.diffraction_loss_db(name, d, s, inner, 50.0, 50.0, length, freq_ghz, np.inf)[0]
        assert got == pytest.approx(expect_db, abs=tol_db), name
    if height_m > 0:
        assert float(fresnel_kirchhoff_v(height_m, 1_000.0, 1_000.0, freq_ghz)) == pytest.approx(2.74, abs=5e-3)


def test_earth_bulge_enters_knife_edge():
    """Bulge d1 d2 / (2 k a) is 36.79 m at the middle of a 50 km path at k = 4/3 (handbook form) [computed]."""
    d, s, inner, length = single_edge(50_000.0, 25_000.0, 0.0, n=501)
    bulge = 25_000.0**2 / (2 * 4 / 3 * EARTH_RADIUS_M)
    assert bulge == pytest.approx(36.79, abs=5e-3)
    got = td.diffraction_loss_db("knife-edge", d, s, inner, 0.0, 0.0, length, 1.0, 4 / 3)[0]
    expect = knife_edge_loss_db(fresnel_kirchhoff_v(bulge, 25_000.0, 25_000.0, 1.0))
    assert got == pytest.approx(float(expect), abs=1e-9)


def test_bullington_trans_horizon_by_hand():
    """ITU-R P.526-15 section 4.5.1 [computed]: two edges, the horizon rays cross between them."""
    n = 121
    d = np.linspace(0.0, 12_000.0, n)
    s = np.zeros(n)
    s[30], s[90] = 40.0, 30.0  # at 3 km and 9 km
    inner = np.zeros(n, bool)
    inner[1:-1] = True
    hts, hrs, length, f = 10.0, 20.0, 12_000.0, 2.0
    stim = (40.0 - hts) / 3_000.0
    srim = (30.0 - hrs) / 3_000.0
    dbp = (hrs - hts + srim * length) / (stim + srim)
    vb = (hts + stim * dbp - (hts * (length - dbp) + hrs * dbp) / length) * np.sqrt(
        0.002 * 12.0 / ((0.299792458 / f) * (dbp / 1000.0) * (12.0 - dbp / 1000.0)))
    luc = float(knife_edge_loss_db(vb))
    expect = luc + (1 - np.exp(-luc / 6)) * (10 + 0.02 * 12.0)
    got = td.diffraction_loss_db("bullington", d[None], s[None], inner[None], hts, hrs, [length], f, np.inf)[0]
    assert got == pytest.approx(expect, abs=1e-9)
