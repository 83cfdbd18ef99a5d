"""Screening with obstruction layers, a surface model, roof mounts and per-pair heights (as `terrahop link`)."""

from __future__ import annotations

import dataclasses
import math

import numpy as np
import pandas as pd
import pytest

from profiler.clutter import ClutterKind
from profiler.errors import InputError
from profiler.io import columns
from profiler.io.sites import read_name_pairs_with_heights, read_sites
from profiler.jobs import analyse_job, open_job_data, resolve_link_job, surroundings_from_options
from profiler.mounts import Mount
from profiler.screening import PairPlan, screen

from tests._screening_data import DEMO_DEM, REPO, lose_worker_after

TOWN = REPO / "data" / "demo" / "town.gpkg"
SURFACE = REPO / "data" / "demo" / "town-surface.tif"
ROOFTOPS = REPO / "data" / "demo" / "rooftops.csv"
ROOFTOP_LINK = REPO / "examples" / "demo-5-rooftop.toml"
#: The layers of examples/demo-5-rooftop.toml, given as options, and the demo surface model.
LAYER_OPTS = {"obstructions": (f"{TOWN}#buildings", f"trees={TOWN}#trees"), "tree_allowance_m": 2.0,
              "surface": (str(SURFACE),)}


@pytest.fixture(scope="module")
def job():
    """The rooftop demo link with the surface model: its radio and settings serve every screened pair."""
    return resolve_link_job(str(ROOFTOP_LINK), {"surface": [str(SURFACE)]})


@pytest.fixture
def surroundings():
    s = surroundings_from_options(LAYER_OPTS)
    yield s
    s.surface.close()


def _screen(tmp_path, surroundings, job, name="r.csv", sites=ROOFTOPS, **kw):
    out = (tmp_path / name).with_suffix(".gpkg")  # full precision (CSV rounds to meaningful digits)
    summary = screen(str(sites), str(DEMO_DEM), job.radio, job.settings, out, workers=kw.pop("workers", 1),
                     surroundings=surroundings, **kw)
    import pyogrio

    return summary, pd.DataFrame(pyogrio.read_dataframe(out, layer="links", read_geometry=False))


def _link_record(job, row, mount_a, mount_b):
    """`terrahop link` of one screened pair: its sites, the given mounts, the same layers and surface."""
    site_a = dataclasses.replace(job.site_a, name=row["site_a"], lat_deg=row["lat_a"], lon_deg=row["lon_a"])
    site_b = dataclasses.replace(job.site_b, name=row["site_b"], lat_deg=row["lat_b"], lon_deg=row["lon_b"])
    pair = dataclasses.replace(job, site_a=site_a, site_b=site_b, mount_a=mount_a, mount_b=mount_b)
    with open_job_data(pair) as (model, surroundings):
        return analyse_job(pair, model, surroundings).record(0)


def _assert_same_numbers(row, rec):
    """Every figure a screened pair shares with the link record, compared exactly."""
    a, b = rec["sites"]["a"], rec["sites"]["b"]
    assert row["distance_km"] == rec["distance_km"]
    assert row["azimuth_a_to_b_deg"] == rec["azimuth_a_to_b_deg"]
    assert row["ground_a_m"] == a["ground_m"] and row["ground_b_m"] == b["ground_m"]
    assert row["agl_a_m"] == a["antenna_agl_m"] and row["agl_b_m"] == b["antenna_agl_m"]
    assert row["antenna_a_amsl_m"] == a["antenna_amsl_m"] and row["antenna_b_amsl_m"] == b["antenna_amsl_m"]
    for end, site in (("a", a), ("b", b)):
        assert row[f"mount_{end}"] == site["antenna_reference"]
        if site["antenna_reference"] == "roof":
            assert row[f"roof_{end}_m"] == site["building"]["height_m"]
            assert row[f"above_roof_{end}_m"] == site["antenna_above_roof_m"]
        else:
            assert math.isnan(row[f"roof_{end}_m"]) and math.isnan(row[f"above_roof_{end}_m"])
    assert row["worst_f1_fraction"] == rec["clearance"]["worst_f1_fraction"]
    assert row["worst_clearance_m"] == rec["clearance"]["worst_clearance_m"]
    assert row["worst_point_km"] == rec["clearance"]["worst_distance_km"]
    assert bool(row["line_of_sight"]) == rec["clearance"]["line_of_sight"]
    assert row["wc_worst_f1_fraction"] == rec["worst_case"]["clearance"]["worst_f1_fraction"]
    assert row["worst_point_clutter_m"] == rec["clutter"]["at_worst_point_m"]
    assert row["worst_point_clutter"] == rec["clutter"]["at_worst_point_kind"]
    assert row["diffraction_db"] == rec["loss_db"]["diffraction"]
    assert row["gases_db"] == rec["loss_db"]["gases"]
    assert row["total_loss_db"] == rec["loss_db"]["total"]
    assert row["rx_level_dbm"] == rec["budget"]["rx_level_dbm"]
    assert row["fade_margin_db"] == rec["budget"]["fade_margin_db"]
    assert row["wc_fade_margin_db"] == rec["worst_case"]["budget"]["fade_margin_db"]
    assert bool(row["meets_criterion"]) == rec["meets_criterion"]


def test_a_screened_rooftop_pair_gives_exactly_the_numbers_of_terrahop_link(tmp_path, surroundings, job):
    """Rooftop candidates with the demo building and tree layers and the surface model, --above-roof."""
    summary, links = _screen(tmp_path, surroundings, job, above_roof=True)
    assert summary.pairs == 66 and not summary.bad_rows
    demo = links[(links["site_a"] == "Linthorpe Library") & (links["site_b"] == "Harbour Row Flats")].iloc[0]
    # The demo link's own pair: the Corn Exchange Tower (a building) stands in the way of 3 m roof masts.
    assert demo["verdict"] == "obstructed" and demo["worst_point_clutter"] == "building"
    picks = [demo, *(links.iloc[k] for k in (0, 20, 40, len(links) - 1))]
    assert {"ground", "roof"} <= {p["mount_b"] for p in picks} | {p["mount_a"] for p in picks}
    for row in picks:
        mounts = [Mount("roof", 3.0) if row[f"mount_{e}"] == "roof" else Mount("ground", row[f"agl_{e}_m"])
                  for e in "ab"]
        _assert_same_numbers(row, _link_record(job, row, *mounts))


def test_per_pair_heights_override_the_sites_for_that_pair_only(tmp_path, surroundings, job):
    pairs = tmp_path / "pairs.csv"
    pairs.write_text("a,b,height_a_m,height_b_m\n"
                     "Linthorpe Library,Harbour Row Flats,9,7.5\n"
                     "Linthorpe Library,Block 6 (15 m),,\n"
                     "Linthorpe Park mast,Harbour Row Flats,32,2\n")
    sites, _ = read_sites(ROOFTOPS)
    a, b, heights, bad = read_name_pairs_with_heights(pairs, sites.names)
    assert not bad
    summary, links = _screen(tmp_path, surroundings, job, above_roof=True,
                             plan=PairPlan(explicit=(a, b), heights=heights))
    assert summary.pairs == 3
    by = {(r["site_a"], r["site_b"]): r for _, r in links.iterrows()}
    tall = by[("Linthorpe Library", "Harbour Row Flats")]
    assert (tall["above_roof_a_m"], tall["above_roof_b_m"]) == (9.0, 7.5)
    assert tall["line_of_sight"]  # 9 m and 7.5 m above the roofs clear the tower the 3 m masts hit
    _assert_same_numbers(tall, _link_record(job, tall, Mount("roof", 9.0), Mount("roof", 7.5)))
    site_heights = by[("Linthorpe Library", "Block 6 (15 m)")]
    assert site_heights["above_roof_a_m"] == 3.0 and site_heights["above_roof_b_m"] == 3.0
    mast = by[("Linthorpe Park mast", "Harbour Row Flats")]
    assert mast["mount_a"] == "ground" and mast["agl_a_m"] == 32.0 and mast["above_roof_b_m"] == 2.0
    _assert_same_numbers(mast, _link_record(job, mast, Mount("ground", 32.0), Mount("roof", 2.0)))


def test_the_mount_column_chooses_per_site_without_above_roof(tmp_path, surroundings, job):
    summary, links = _screen(tmp_path, surroundings, job)  # the file says roof for all but the park mast
    _, with_flag = _screen(tmp_path, surroundings, job, name="flag.csv", above_roof=True)
    pd.testing.assert_frame_equal(links, with_flag)
    sites = tmp_path / "ground.csv"
    sites.write_text(ROOFTOPS.read_text().replace(",roof\n", ",\n"))  # blank: the run's default (ground)
    summary, ground = _screen(tmp_path, surroundings, job, name="ground-run.csv", sites=sites)
    assert set(ground["mount_a"]) == {"ground"} and ground["roof_a_m"].isna().all()
    # 3 m above the ground inside a building: the building blocks the path, as terrahop link warns.
    inside = [w for w in summary.warnings if "higher than the antenna" in w]
    assert len(inside) == 11 and any("'Linthorpe Library' stands in building" in w for w in inside)
    assert not ground["agl_a_m"].equals(links["agl_a_m"])


def test_layer_runs_agree_on_a_local_pool_and_a_dask_cluster(tmp_path, surroundings, job):
    distributed = pytest.importorskip("distributed")
    _, alone = _screen(tmp_path, surroundings, job, name="one.csv", above_roof=True, chunk_pairs=10)
    _, pool = _screen(tmp_path, surroundings, job, name="pool.csv", above_roof=True, chunk_pairs=10, workers=2)
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=False, protocol="tcp",
                                  host="127.0.0.1", dashboard_address=":0") as cluster:
        with distributed.Client(cluster) as client:
            _, dask = _screen(tmp_path, surroundings, job, name="dask.csv", above_roof=True, chunk_pairs=10,
                              scheduler=client)
    pd.testing.assert_frame_equal(alone, pool)
    pd.testing.assert_frame_equal(alone, dask)


def test_resume_with_other_layers_or_mounts_is_refused(tmp_path, surroundings, job, monkeypatch):
    lose_worker_after(monkeypatch, 2)
    with pytest.raises(RuntimeError, match="worker lost"):
        _screen(tmp_path, surroundings, job, above_roof=True, chunk_pairs=10)
    monkeypatch.undo()
    trees_only = surroundings_from_options({**LAYER_OPTS, "tree_allowance_m": 5.0})
    try:
        for other, roof in ((trees_only, True), (surroundings, False)):
            with pytest.raises(InputError, match="different inputs or settings"):
                _screen(tmp_path, other, job, sites=_all_roof(tmp_path) if not roof else ROOFTOPS,
                        above_roof=roof, chunk_pairs=10, resume=True)
    finally:
        trees_only.surface.close()
    summary, _ = _screen(tmp_path, surroundings, job, above_roof=True, chunk_pairs=10, resume=True)
    assert summary.resumed_pairs == 20 and summary.pairs == 66


def _all_roof(tmp_path):
    """The rooftop sites with the park mast on a roof too (another mount, so another run)."""
    path = tmp_path / "all-roof.csv"
    path.write_text(ROOFTOPS.read_text().replace("20,ground", "20,roof"))
    return path


def test_a_hub_whose_roof_is_not_found_stops_the_run_with_one_reason(tmp_path, surroundings, job):
    sites = tmp_path / "sites.csv"
    sites.write_text(ROOFTOPS.read_text() + "Open field,-30.5340,-20.8500,3,roof\n")
    table, _ = read_sites(sites)
    with pytest.raises(InputError, match="every hub was skipped"):
        _screen(tmp_path, surroundings, job, sites=sites, plan=PairPlan(hubs=(len(table) - 1,)))


def test_a_roof_site_outside_every_building_is_skipped_and_the_run_goes_on(tmp_path, surroundings, job):
    sites = tmp_path / "sites.csv"
    sites.write_text(ROOFTOPS.read_text().replace("20,ground", "3,roof")
                     + "Open field,-30.5340,-20.8500,3,roof\nWrong mount,-30.535178,-20.845193,3,attic\n")
    summary, links = _screen(tmp_path, surroundings, job, sites=sites)
    reasons = {r.name: r.reason for r in summary.bad_rows}
    assert set(reasons) == {"Linthorpe Park mast", "Open field", "Wrong mount"}
    assert "not inside any building" in reasons["Open field"] and "attic" in reasons["Wrong mount"]
    assert summary.pairs == 55 == len(links)  # the 11 sites that stand on roofs, every pair


def test_a_plain_run_has_no_roof_or_clutter_columns(tmp_path, job):
    out = tmp_path / "plain.csv"
    screen(str(DEMO_DEM.parent / "sites.csv"), str(DEMO_DEM), job.radio, job.settings, out, workers=1)
    cols = set(pd.read_csv(out).columns)
    group = {c.name for c in columns.LINK_TABLE if c.group == columns.SURROUNDINGS_GROUP}
    assert group and not group & cols and "agl_a_m" in cols


def test_roof_mounts_without_a_building_layer_are_refused_before_any_work(tmp_path, job):
    out = tmp_path / "r.csv"
    with pytest.raises(InputError, match="needs a building layer"):
        screen(str(ROOFTOPS), str(DEMO_DEM), job.radio, job.settings, out, workers=1)  # its mount column
    assert not out.exists() and not list(tmp_path.iterdir())


def test_clutter_words_are_those_of_the_link_record():
    assert columns.CLUTTER_LABELS == tuple(ClutterKind(k).label for k in range(len(ClutterKind)))
    assert columns.CODED_COLUMNS["worst_point_clutter"] == columns.CLUTTER_LABELS


def test_surface_model_alone_needs_no_building_layer(tmp_path, job):
    surface = surroundings_from_options({"surface": (str(SURFACE),)})
    try:
        sites = tmp_path / "ground.csv"
        sites.write_text(ROOFTOPS.read_text().replace(",roof\n", ",ground\n"))
        summary, links = _screen(tmp_path, surface, job, sites=sites)
        with pytest.raises(InputError, match="building layer"):
            _screen(tmp_path, surface, job, name="roof.csv", above_roof=True)
    finally:
        surface.surface.close()
    assert summary.pairs == 66 and (links["worst_point_clutter"].isin(["none", "surface model"])).all()


# -- per-pair heights of a pairs file


def _read(tmp_path, text):
    path = tmp_path / "pairs.csv"
    path.write_text(text)
    sites, _ = read_sites(ROOFTOPS)
    return read_name_pairs_with_heights(path, sites.names)


def test_pair_heights_blank_means_the_sites_heights(tmp_path):
    a, b, (ha, hb), bad = _read(tmp_path, "a,b,height_a_m,height_b_m\nLinthorpe Library,Block 1 (15 m),,\n"
                                          "Block 2 (15 m),Block 3 (15 m),4,5.5\n")
    assert not bad and a.size == 2 and np.isnan(ha[0]) and np.isnan(hb[0]) and (ha[1], hb[1]) == (4.0, 5.5)


def test_pair_heights_without_columns_are_none(tmp_path):
    a, b, heights, bad = _read(tmp_path, "a,b\nLinthorpe Library,Block 1 (15 m)\n")
    assert heights is None and a.size == 1 and not bad


@pytest.mark.parametrize("cells, words", [
    ("4,", "height_b_m is blank but height_a_m is not"),
    (",4", "height_a_m is blank but height_b_m is not"),
    ("-2,4", "height_a_m"),
    ("4,tall", "height_b_m 'tall' is not a number"),
    ("nan,4", "not a number"),
    ("4,5000", "height_b_m"),
])
def test_a_bad_pair_height_skips_that_pair_only(tmp_path, cells, words):
    a, b, (ha, hb), bad = _read(tmp_path, "a,b,height_a_m,height_b_m\n"
                                          f"Linthorpe Library,Block 1 (15 m),{cells}\n"
                                          "Block 2 (15 m),Block 3 (15 m),4,5.5\n")
    assert a.size == 1 and (ha[0], hb[0]) == (4.0, 5.5)
    assert len(bad) == 1 and bad[0].row == 2 and words in bad[0].reason, bad[0].reason
    assert bad[0].name == "Linthorpe Library - Block 1 (15 m)"


def test_a_pairs_file_with_one_height_column_is_refused(tmp_path):
    with pytest.raises(InputError, match="height_a_m without height_b_m"):
        _read(tmp_path, "a,b,height_a_m\nLinthorpe Library,Block 1 (15 m),4\n")


def test_a_bad_mount_word_is_a_skipped_row_also_without_layers(tmp_path, job):
    sites = tmp_path / "m.csv"
    sites.write_text("name,lat,lon,antenna_agl_m,mount\nA,-30.535178,-20.845193,10,ground\n"
                     "B,-30.534618,-20.830600,10,attic\nC,-30.530243,-20.847028,10,\n")
    summary = screen(str(sites), str(DEMO_DEM), job.radio, job.settings, tmp_path / "r.csv", workers=1)
    assert summary.pairs == 1 and [(r.row, r.name) for r in summary.bad_rows] == [(3, "B")]
    assert "'attic' is neither ground nor roof" in summary.bad_rows[0].reason
