"""The review page builder: reading results, recomputed profiles, the page's data, offline rules."""

from __future__ import annotations

import base64
import json
import re
import sqlite3

import numpy as np
import pytest

from profiler.errors import DataFileError, InputError
from profiler.review import build_review_page, check_tiles_url, read_result
from profiler.review.basemap import mercator_xy, png_grey_alpha
from profiler.review.profiles import DEFAULT_POINTS, STEP_M, freq_ghz_of, recompute_profiles
from tests.conftest import DEMO_DEM
from tests.review.fixtures import links_rows, with_run_table


def page_data(path) -> dict:
    text = path.read_text(encoding="utf-8")
    m = re.search(r'<script type="application/json" id="review-data">(.*?)</script>', text, re.S)
    return json.loads(m.group(1))


def decode(text, dtype):
    return np.frombuffer(base64.b64decode(text), dtype=np.dtype(dtype).newbyteorder("<"))


def test_read_result_matches_the_links_layer(demo_result):
    res = read_result(demo_result)
    rows = links_rows(demo_result)
    assert res.n_links == len(rows) == 66
    assert list(res.rank) == [r["rank"] for r in rows]
    assert [res.site_names[i] for i in res.a] == [r["site_a"] for r in rows]
    assert [res.site_names[i] for i in res.b] == [r["site_b"] for r in rows]
    np.testing.assert_array_equal(res.numbers["fade_margin_db"], [r["fade_margin_db"] for r in rows])
    np.testing.assert_allclose(res.site_lat[res.a], [r["lat_a"] for r in rows])
    assert res.run is None


def test_frequency_from_the_free_space_loss_equals_the_screened_one(demo_result, demo_result_with_run):
    # P.525 inverted on every row gives back the 5.8 GHz the demo was screened at.
    assert freq_ghz_of(read_result(demo_result)) == pytest.approx(5.8, rel=1e-9)
    assert freq_ghz_of(read_result(demo_result_with_run)) == 5.8


def test_recomputed_profiles_match_the_screening(demo_result):
    res = read_result(demo_result)
    packed = recompute_profiles(res, [str(DEMO_DEM)], limit=10, freq_ghz=5.8)
    assert packed.link.size == 10 and packed.points == DEFAULT_POINTS
    assert packed.mismatch == 0 and packed.largest_mismatch_m < 1e-6
    # Each end of the stored ground is the screened ground height at that site (to the 0.1 m step).
    ground = packed.base_m[:, None] + packed.ground.astype(float) * STEP_M
    np.testing.assert_allclose(ground[:, 0], res.numbers["ground_a_m"][packed.link], atol=STEP_M)
    np.testing.assert_allclose(ground[:, -1], res.numbers["ground_b_m"][packed.link], atol=STEP_M)


def test_binned_profile_keeps_the_highest_sample(demo_result):
    from profiler.profile import build_profiles
    from profiler.terrain import ElevationModel

    res = read_result(demo_result)
    packed = recompute_profiles(res, [str(DEMO_DEM)], limit=3, freq_ghz=5.8, points=16)
    i = int(packed.link[0])
    prof = build_profiles(ElevationModel([str(DEMO_DEM)]), res.site_lat[res.a[[i]]], res.site_lon[res.a[[i]]],
                          res.site_lat[res.b[[i]]], res.site_lon[res.b[[i]]], spacing_m=res.numbers["spacing_m"][[i]])
    top = float(np.nanmax(prof.ground_m))
    stored = packed.base_m[0] + packed.ground[0].astype(float) * STEP_M
    assert stored.max() == pytest.approx(top, abs=STEP_M / 2 + 1e-6)


def test_other_terrain_is_reported_as_a_mismatch(demo_result, tmp_path, raster_factory):
    import rasterio

    with rasterio.open(DEMO_DEM) as ds:
        arr = ds.read(1).astype("float32") + 25.0  # the same shape, 25 m higher everywhere
        profile = ds.profile
    other = tmp_path / "other.tif"
    with rasterio.open(other, "w", **{**profile, "dtype": "float32"}) as ds:
        ds.write(arr, 1)
    s = build_review_page(demo_result, tmp_path / "p.html", dem=[other], max_profiles=5)
    assert any("differ from the screening for 5 link" in n for n in s.notes)


def test_page_data_equals_the_result(demo_result, tmp_path):
    out = tmp_path / "page.html"
    s = build_review_page(demo_result, out, dem=[DEMO_DEM], max_profiles=20)
    assert s.n_links == 66 and s.n_profiles == 20
    data = page_data(out)
    rows = links_rows(demo_result)
    assert data["n_links"] == 66
    rank = decode(data["links"]["rank"], "i4")
    assert list(rank) == [r["rank"] for r in rows]
    verdict = decode(data["links"]["verdict"], "u1")
    assert [data["verdicts"][v] for v in verdict] == [r["verdict"] for r in rows]
    margin = next(c for c in data["columns"] if c["name"] == "fade_margin_db")
    np.testing.assert_allclose(decode(margin["data"], "f4"), [r["fade_margin_db"] for r in rows], rtol=1e-6)
    assert decode(data["profiles"]["link"], "i4").tolist() == list(range(20))  # the 20 best ranked
    assert any("20 best-ranked links of 66" in n for n in data["notes"])


def test_page_fetches_nothing(demo_result, tmp_path):
    out = tmp_path / "page.html"
    build_review_page(demo_result, out, dem=[DEMO_DEM])
    text = out.read_text(encoding="utf-8")
    assert "default-src 'none'; img-src data:;" in text
    # No address the browser could fetch: no src= or href= outside data: URIs, no http(s) at all.
    assert not re.search(r"https?://", text)
    assert not re.search(r'(src|href)="(?!data:)', text)


def test_tiles_open_only_their_origin(demo_result, tmp_path):
    out = tmp_path / "page.html"
    build_review_page(demo_result, out, tiles="https://tiles.example.org/{z}/{x}/{y}.png")
    text = out.read_text(encoding="utf-8")
    assert "img-src data: https://tiles.example.org;" in text
    assert page_data(out)["tiles"] == "https://tiles.example.org/{z}/{x}/{y}.png"


@pytest.mark.parametrize("url", ["tiles.example.org/{z}/{x}/{y}.png", "https://t.example.org/{z}/{x}.png",
                                 "ftp://t.example.org/{z}/{x}/{y}", "https://t.example.org/{z}/{x}/{y}?k={key}",
                                 "https://t.example.org/{z}/{x}/{y}\" onload=\"x", "https:///{z}/{x}/{y}"])
def test_bad_tile_templates_are_refused(url):
    with pytest.raises(InputError, match="tiles"):
        check_tiles_url(url)


def test_run_description_gives_the_terrain(demo_result_with_run, tmp_path):
    out = tmp_path / "page.html"
    s = build_review_page(demo_result_with_run, out, max_profiles=5)
    data = page_data(out)
    assert s.n_profiles == 5 and data["relief"] is not None
    assert data["run"]["radio"]["freq_ghz"] == 5.8
    assert data["profiles"]["freq_ghz"] == 5.8


def test_changed_or_missing_terrain_of_the_run_is_said(demo_result, tmp_path):
    changed = with_run_table(demo_result, tmp_path / "changed.gpkg",
                             terrain=[{"path": str(DEMO_DEM.resolve()), "sha256": "0" * 64, "role": "dem"}])
    s = build_review_page(changed, tmp_path / "a.html", max_profiles=2)
    assert any("has changed since the screening" in n for n in s.notes)
    missing = with_run_table(demo_result, tmp_path / "missing.gpkg",
                             terrain=[{"path": str(tmp_path / "gone.tif"), "sha256": "0" * 64, "role": "dem"}])
    s = build_review_page(missing, tmp_path / "b.html")
    assert s.n_profiles == 0 and any("is not found" in n for n in s.notes)


def test_the_screenings_own_run_table_names_the_terrain(demo_screened, tmp_path):
    # terrahop screen writes the run description (table run); the page takes the terrain from it.
    res = read_result(demo_screened)
    assert res.run is not None and res.run["terrain"][0]["path"] == str(DEMO_DEM.resolve())
    s = build_review_page(demo_screened, tmp_path / "own.html", max_profiles=3)
    assert s.n_profiles == 3 and s.terrain == [str(DEMO_DEM.resolve())]


def test_without_terrain_the_page_says_why(demo_result, tmp_path):
    out = tmp_path / "page.html"
    s = build_review_page(demo_result, out)
    data = page_data(out)
    assert s.n_profiles == 0 and data["profiles"] is None and data["relief"] is None
    assert "no terrain" in data["no_profile_note"]


def test_not_a_result_is_refused(tmp_path):
    gpkg = tmp_path / "x.gpkg"
    con = sqlite3.connect(gpkg)
    con.execute("CREATE TABLE gpkg_contents (table_name TEXT, data_type TEXT, identifier TEXT)")
    con.execute("INSERT INTO gpkg_contents VALUES ('roads', 'features', 'roads')")
    con.commit()
    con.close()
    with pytest.raises(DataFileError, match="no 'links' layer .layers: roads"):
        read_result(gpkg)


def test_existing_file_that_is_not_a_page_is_kept(demo_result, tmp_path):
    out = tmp_path / "notes.html"
    out.write_text("<p>my notes</p>")
    with pytest.raises(InputError, match="not a terrahop review page"):
        build_review_page(demo_result, out)
    assert out.read_text() == "<p>my notes</p>"
    build_review_page(demo_result, out, overwrite=True)
    build_review_page(demo_result, out)  # our own page may be replaced


def test_png_writer_round_trips():
    import matplotlib.image as mpimg
    import io

    grey = np.arange(12, dtype=np.uint8).reshape(3, 4) * 20
    alpha = np.array([[255, 0, 255, 255]] * 3, np.uint8)
    img = mpimg.imread(io.BytesIO(png_grey_alpha(grey, alpha)), format="png")
    np.testing.assert_allclose(img[..., 0] * 255, grey, atol=0.5)
    np.testing.assert_allclose(img[..., 3] * 255, alpha, atol=0.5)


def test_mercator_world_units():
    x, y = mercator_xy([-180.0, 0.0, 180.0], [0.0, 0.0, 0.0])
    np.testing.assert_allclose(x, [0, 0.5, 1])
    np.testing.assert_allclose(y, [0.5, 0.5, 0.5])
    _, yn = mercator_xy(0.0, 85.05112878)
    assert float(yn) == pytest.approx(0.0, abs=1e-9)


def test_names_that_look_like_markup_stay_data(demo_result, tmp_path):
    gpkg = tmp_path / "odd.gpkg"
    import shutil

    shutil.copyfile(demo_result, gpkg)
    con = sqlite3.connect(gpkg)
    with con:
        for (trigger,) in con.execute("SELECT name FROM sqlite_master WHERE type = 'trigger'").fetchall():
            con.execute(f'DROP TRIGGER "{trigger}"')
        con.execute("UPDATE links SET site_a = '</script><!-- x' WHERE site_a = 'Tallis Farm'")
        con.execute("UPDATE sites SET name = '</script><!-- x' WHERE name = 'Tallis Farm'")
    con.close()
    out = tmp_path / "odd.html"
    build_review_page(gpkg, out)
    text = out.read_text(encoding="utf-8")
    assert text.count("</script>") == 2  # the data's and the code's own ends, nothing from a name
    assert "</script><!-- x" in page_data(out)["sites"]["names"]


def test_empty_result_makes_a_page(demo_result, tmp_path):
    gpkg = tmp_path / "empty.gpkg"
    import shutil

    shutil.copyfile(demo_result, gpkg)
    con = sqlite3.connect(gpkg)
    with con:
        for (trigger,) in con.execute("SELECT name FROM sqlite_master WHERE type = 'trigger'").fetchall():
            con.execute(f'DROP TRIGGER "{trigger}"')
        con.execute("DELETE FROM links")
    con.close()
    s = build_review_page(gpkg, tmp_path / "empty.html", dem=[DEMO_DEM])
    assert (s.n_links, s.n_profiles) == (0, 0)
    data = page_data(tmp_path / "empty.html")
    assert data["n_links"] == 0 and len(data["sites"]["names"]) == 12


def test_profile_bytes_per_link_as_the_readme_says(demo_result, tmp_path):
    out = tmp_path / "p.html"
    build_review_page(demo_result, out, dem=[DEMO_DEM])
    p = page_data(out)["profiles"]
    per_link = sum(len(p[k]) for k in ("link", "base", "ground")) / 66
    assert 340 < per_link < 360  # about 0.35 MB of page per 1,000 profiles (README)


def test_surface_model_adds_clutter(demo_result, tmp_path):
    surface = DEMO_DEM.parent / "town-surface.tif"
    out = tmp_path / "s.html"
    build_review_page(demo_result, out, dem=[DEMO_DEM], surface=[surface], max_profiles=4)
    p = page_data(out)["profiles"]
    assert p["clutter"] is not None
    assert decode(p["clutter"], "u2").size == 4 * p["points"]
