"""Screening: pair plans, equality with the single-link engine, resume, workers, outputs."""

from __future__ import annotations

import math

import json

import numpy as np
import pytest

from profiler import screening
from profiler.budget import Radio
from profiler.errors import InputError
from profiler.geodesy import WGS84
from profiler.io.sites import read_sites
from profiler.link import Settings, Site, analyse_link
from profiler.screening import VERDICTS as VERDICTS_BY_CODE
from profiler.screening import PairPlan, count_pairs, iter_pair_blocks, screen
from profiler.terrain import ElevationModel

from tests._screening_data import DEMO_DEM, DEMO_SITES, random_sites_csv, lose_worker_after

RADIO = Radio(5.8, tx_power_dbm=20, gain_a_dbi=23, gain_b_dbi=23, loss_a_db=1, loss_b_db=1)


@pytest.fixture
def sites25(tmp_path):
    sites, bad = read_sites(random_sites_csv(tmp_path / "sites.csv", 25))
    assert not bad
    return sites


def _pairs(sites, plan, block=7):
    blocks = list(iter_pair_blocks(sites, plan, block_pairs=block))
    if not blocks:
        return []
    return list(zip(np.concatenate([a for a, _ in blocks]).tolist(), np.concatenate([b for _, b in blocks]).tolist()))


def _brute_within(sites, km):
    n = len(sites)
    out = set()
    for i in range(n):
        for j in range(i + 1, n):
            _, _, d = WGS84.inv(sites.lon_deg[i], sites.lat_deg[i], sites.lon_deg[j], sites.lat_deg[j])
            if d <= km * 1000:
                out.add((i, j))
    return out


def test_all_pairs_count_is_n_choose_2(sites25):
    pairs = _pairs(sites25, PairPlan())
    assert len(pairs) == 25 * 24 // 2 == count_pairs(sites25, PairPlan())
    assert len(set(pairs)) == len(pairs)
    assert all(a < b for a, b in pairs)


def test_max_km_keeps_exactly_the_pairs_within_the_distance(sites25):
    for km in (3.0, 8.0, 50.0):
        pairs = _pairs(sites25, PairPlan(max_km=km))
        assert len(set(pairs)) == len(pairs)
        assert set(pairs) == _brute_within(sites25, km)
    assert len(_pairs(sites25, PairPlan(max_km=50.0))) == 300


def test_hub_mode_pairs_each_hub_once_with_every_other_site(sites25):
    pairs = _pairs(sites25, PairPlan(hubs=(3, 10)))
    assert len(pairs) == 24 + 23
    assert all(a in (3, 10) for a, _ in pairs)
    assert {frozenset(p) for p in pairs} == {frozenset((h, j)) for h in (3, 10) for j in range(25) if j != h}
    near = _pairs(sites25, PairPlan(hubs=(3,), max_km=6.0))
    assert {tuple(sorted(p)) for p in near} == {p for p in _brute_within(sites25, 6.0) if 3 in p}


def test_chunks_cover_the_sequence_and_skip_resumes_it(sites25):
    full = _pairs(sites25, PairPlan(max_km=9.0))
    chunks = list(screening.pairs.pair_chunks(sites25, PairPlan(max_km=9.0), 13))
    assert [c[0] for c in chunks] == list(range(0, len(full), 13))
    flat = [(a, b) for _, aa, bb in chunks for a, b in zip(aa.tolist(), bb.tolist())]
    assert flat == full
    later = list(screening.pairs.pair_chunks(sites25, PairPlan(max_km=9.0), 13, skip_pairs=39))
    assert later[0][0] == 39
    assert [(a, b) for _, aa, bb in later for a, b in zip(aa.tolist(), bb.tolist())] == full[39:]


def _run(sites, out, max_km=None, **kw):
    kw.setdefault("workers", 1)
    if max_km is not None:
        kw["plan"] = PairPlan(max_km=max_km)
    with ElevationModel([DEMO_DEM]) as model:
        return screen(sites, model, RADIO, Settings(), out, **kw)


def _rows(path):
    import geopandas as gpd

    return gpd.read_file(path, layer="links")


def test_a_screened_pair_gives_exactly_the_numbers_of_terrahop_link(tmp_path):
    sites, _ = read_sites(DEMO_SITES)
    summary = _run(sites, tmp_path / "r.gpkg", chunk_pairs=40)
    assert summary.pairs == 66
    links = _rows(tmp_path / "r.gpkg")
    picks = links.iloc[[0, 10, 30, 50, 65]]
    assert set(links["verdict"]) >= {"viable", "obstructed"}
    index = {n: k for k, n in enumerate(sites.names)}
    with ElevationModel([DEMO_DEM]) as model:
        for _, row in picks.iterrows():
            a, b = index[row["site_a"]], index[row["site_b"]]
            sa = Site(str(sites.names[a]), sites.lat_deg[a], sites.lon_deg[a], sites.antenna_agl_m[a])
            sb = Site(str(sites.names[b]), sites.lat_deg[b], sites.lon_deg[b], sites.antenna_agl_m[b])
            rec = analyse_link(model, sa, sb, RADIO, Settings()).record(0)
            assert row["distance_km"] == rec["distance_km"]
            assert row["azimuth_a_to_b_deg"] == rec["azimuth_a_to_b_deg"]
            assert row["worst_f1_fraction"] == rec["clearance"]["worst_f1_fraction"]
            assert row["worst_clearance_m"] == rec["clearance"]["worst_clearance_m"]
            assert row["wc_worst_f1_fraction"] == rec["worst_case"]["clearance"]["worst_f1_fraction"]
            assert bool(row["line_of_sight"]) == rec["clearance"]["line_of_sight"]
            assert row["diffraction_db"] == rec["loss_db"]["diffraction"]
            assert row["total_loss_db"] == rec["loss_db"]["total"]
            assert row["rx_level_dbm"] == rec["budget"]["rx_level_dbm"]
            assert row["fade_margin_db"] == rec["budget"]["fade_margin_db"]
            assert row["wc_fade_margin_db"] == rec["worst_case"]["budget"]["fade_margin_db"]
            assert bool(row["meets_criterion"]) == rec["meets_criterion"]
            assert row["ground_a_m"] == rec["sites"]["a"]["ground_m"]
            assert row["gases_db"] == rec["loss_db"]["gases"]
            assert row["method"] == rec["inputs"]["diffraction_method"]
            import pandas as pd

            av = rec["availability"]
            if av["estimated"]:
                if av["availability_pct"] is None:
                    assert math.isnan(row["availability_pct"]) and "outside" in row["availability_note"]
                else:
                    assert row["availability_pct"] == av["availability_pct"]
                assert bool(row["meets_availability"]) == av["meets_target"]
            else:
                assert math.isnan(row["availability_pct"]) and pd.isna(row["meets_availability"])
                assert row["availability_note"].startswith("availability not estimated")


def test_output_layers_ranked_with_crs_and_columns(tmp_path):
    import geopandas as gpd

    sites, _ = read_sites(DEMO_SITES)
    summary = _run(sites, tmp_path / "r.gpkg", max_km=8.0)
    links = gpd.read_file(tmp_path / "r.gpkg", layer="links")
    points = gpd.read_file(tmp_path / "r.gpkg", layer="sites")
    assert links.crs.to_epsg() == 4326 and points.crs.to_epsg() == 4326
    assert set(links.geom_type) == {"LineString"} and set(points.geom_type) == {"Point"}
    for col in ("site_a", "site_b", "distance_km", "azimuth_a_to_b_deg", "worst_f1_fraction",
                "wc_worst_f1_fraction", "line_of_sight", "meets_criterion", "diffraction_db",
                "total_loss_db", "rx_level_dbm", "snr_db", "fade_margin_db", "method", "verdict",
                "a_kind", "b_kind", "fixable_with_masts", "mast_raise_m"):
        assert col in links.columns, col
    assert (links["distance_km"] <= 8.0).all()
    fade = links["fade_margin_db"].to_numpy()
    assert np.all(np.diff(fade) <= 0)
    assert list(links["rank"]) == list(range(1, len(links) + 1))
    assert len(links) == summary.pairs == sum(summary.counts.values())
    # The site layer counts each link at both ends.
    assert points["pairs"].sum() == 2 * len(links)
    assert points["viable_links"].sum() == 2 * (links["verdict"] == "viable").sum()
    assert "kind" in points.columns
    # Verdicts follow their definitions.
    viable = links[links["verdict"] == "viable"]
    assert (viable["fade_margin_db"] >= 10).all() and viable["meets_criterion"].all()
    for verdict, n in summary.counts.items():
        assert (links["verdict"] == verdict.value).sum() == n
        assert points[verdict.column].sum() == 2 * n
    obstructed = links[links["verdict"] == "obstructed"]
    assert len(obstructed) and not obstructed["line_of_sight"].any()
    short = links[links["verdict"] == "budget-short"]
    assert (short["fade_margin_db"] < 0).all() and short["meets_criterion"].all()
    _check_mast_raise(links, sites)


def _check_mast_raise(links, sites):
    """Both antennas raised by mast_raise_m meet the criterion, 5 cm less does not; fixable follows the masts."""
    short = links[~links["meets_criterion"].astype(bool)]
    assert len(short) >= 3
    index = {str(n): k for k, n in enumerate(sites.names)}
    with ElevationModel([DEMO_DEM]) as model:
        for _, row in short.head(6).iterrows():
            raise_m = float(row["mast_raise_m"])
            assert raise_m > 0, row["site_a"]

            def meets(extra_m):
                a, b = index[row["site_a"]], index[row["site_b"]]
                site_a = Site(row["site_a"], sites.lat_deg[a], sites.lon_deg[a], sites.antenna_agl_m[a] + extra_m)
                site_b = Site(row["site_b"], sites.lat_deg[b], sites.lon_deg[b], sites.antenna_agl_m[b] + extra_m)
                return bool(analyse_link(model, site_a, site_b, RADIO, Settings()).meets_criterion[0])

            assert meets(raise_m + 0.001) and not meets(raise_m - 0.05)
    mast_a = sites.max_mast_m[links["site_a"].map(index).to_numpy()]
    mast_b = sites.max_mast_m[links["site_b"].map(index).to_numpy()]
    fits = ((links["agl_a_m"] + links["mast_raise_m"] <= mast_a) & (links["agl_b_m"] + links["mast_raise_m"] <= mast_b))
    assert (links["fixable_with_masts"].astype(bool) == fits).all()
    assert fits.any() and not fits.all()


@pytest.mark.parametrize("ext", [".csv", ".geojson"])
def test_csv_and_geojson_outputs(tmp_path, ext, sites25):
    import geopandas as gpd
    import pandas as pd

    out = tmp_path / f"r{ext}"
    summary = _run(sites25, out, max_km=5.0)
    companion = tmp_path / f"r-sites{ext}"
    assert summary.outputs == (str(out), str(companion), str(tmp_path / f"r{ext}.run.json"))
    links = pd.read_csv(out) if ext == ".csv" else gpd.read_file(out)
    assert len(links) == summary.pairs
    if ext == ".geojson":
        assert links.crs.to_epsg() == 4326
    points = pd.read_csv(companion) if ext == ".csv" else gpd.read_file(companion)
    assert len(points) == 25


def test_resume_after_a_failing_chunk_equals_an_uninterrupted_run(tmp_path, sites25, monkeypatch):
    _run(sites25, tmp_path / "full.gpkg", max_km=7.0, chunk_pairs=9)
    real = lose_worker_after(monkeypatch, 3)
    with pytest.raises(RuntimeError):
        _run(sites25, tmp_path / "part.gpkg", max_km=7.0, chunk_pairs=9)
    staged = screening.staging_folder(tmp_path / "part.gpkg")
    assert json.loads((staged / "progress.json").read_text())["rows"] == 27
    assert not (tmp_path / "part.gpkg").exists()
    # Rows written after the last commit (a killed process) are cut away on resume.
    with open(staged / "columns" / "pair.bin", "ab") as fh:
        fh.write(np.arange(5, dtype="i8").tobytes())
    with pytest.raises(InputError, match="--resume"):
        _run(sites25, tmp_path / "part.gpkg", max_km=7.0, chunk_pairs=9)
    monkeypatch.setattr(screening.executors, "evaluate_chunk", real)
    summary = _run(sites25, tmp_path / "part.gpkg", max_km=7.0, chunk_pairs=9, resume=True)
    assert summary.resumed_pairs == 27
    assert not staged.exists()
    full, part = _rows(tmp_path / "full.gpkg"), _rows(tmp_path / "part.gpkg")
    assert len(full) == len(part) == summary.pairs
    assert full.drop(columns="geometry").equals(part.drop(columns="geometry"))


def test_resume_with_other_settings_is_refused(tmp_path, sites25, monkeypatch):
    def boom(model, task):
        raise RuntimeError("stop")

    monkeypatch.setattr(screening.executors, "evaluate_chunk", boom)
    with pytest.raises(RuntimeError):
        _run(sites25, tmp_path / "r.gpkg", max_km=7.0, chunk_pairs=9)
    monkeypatch.undo()
    with pytest.raises(InputError, match="different inputs"):
        _run(sites25, tmp_path / "r.gpkg", max_km=6.0, chunk_pairs=9, resume=True)
    summary = _run(sites25, tmp_path / "r.gpkg", max_km=6.0, chunk_pairs=9, restart=True)
    assert summary.pairs == len(_brute_within(sites25, 6.0))


def test_two_local_workers_give_the_same_rows(tmp_path, sites25):
    _run(sites25, tmp_path / "one.gpkg", max_km=6.0, chunk_pairs=10)
    _run(sites25, tmp_path / "two.gpkg", max_km=6.0, chunk_pairs=10, workers=2)
    one, two = _rows(tmp_path / "one.gpkg"), _rows(tmp_path / "two.gpkg")
    assert one.drop(columns="geometry").equals(two.drop(columns="geometry"))


def test_dask_local_cluster_gives_the_same_rows(tmp_path, sites25):
    distributed = pytest.importorskip("distributed")
    _run(sites25, tmp_path / "local.gpkg", max_km=6.0, chunk_pairs=10)
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=False,
                                  dashboard_address=":0") as cluster:
        with distributed.Client(cluster) as client:
            summary = _run(sites25, tmp_path / "dask.gpkg", max_km=6.0, chunk_pairs=10, scheduler=client)
    assert summary.pairs > 10
    a, b = _rows(tmp_path / "local.gpkg"), _rows(tmp_path / "dask.gpkg")
    assert a.drop(columns="geometry").equals(b.drop(columns="geometry"))


def test_sites_outside_the_raster_and_same_position_pairs_are_reported(tmp_path):
    path = random_sites_csv(tmp_path / "s.csv", 6, extra_rows=[
        ["Far Away", "10.0", "10.0", "10", "40", "x"],
        ["Twin", "", "", "10", "40", "x"],
    ])
    text = path.read_text().splitlines()
    # Twin at the same position as S000 but a different name.
    first = text[1].split(",")
    text[-1] = ",".join(["Twin", first[1], first[2], "10", "40", "x"])
    path.write_text("\n".join(text) + "\n")
    sites, bad = read_sites(path)
    summary = _run(sites, tmp_path / "r.gpkg", bad_rows=bad)
    assert [(r.row, r.name) for r in summary.bad_rows] == [(8, "Far Away")]
    assert "outside the elevation rasters" in summary.bad_rows[0].reason
    assert summary.pairs == 7 * 6 // 2
    assert summary.errors == 1
    links = _rows(tmp_path / "r.gpkg")
    err = links[links["verdict"] == "error"]
    assert len(err) == 1 and "same position" in err.iloc[0]["problem"]
    assert err.index[0] == len(links) - 1  # unprofiled pairs rank last


def test_bad_hub_and_bad_settings(tmp_path, sites25):
    with pytest.raises(InputError, match="hub 'Nowhere'"):
        screening.resolve_hubs(sites25, ["Nowhere"])
    with pytest.raises(InputError, match="chunk size"):
        _run(sites25, tmp_path / "r.gpkg", chunk_pairs=0)
    with pytest.raises(InputError, match="unknown extension"):
        _run(sites25, tmp_path / "r.xlsx", max_km=2.0)


def test_the_command_line_imports_no_heavy_package_until_it_screens():
    import subprocess
    import sys

    from tests._screening_data import REPO

    code = ("import sys, profiler.cli.main, profiler.screening; "
            "print(sorted(m for m in ('numba', 'geopandas', 'dask', 'distributed', 'pyarrow', 'pandas') "
            "if m in sys.modules))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, cwd=REPO, check=True)
    assert out.stdout.strip() == "[]"


def test_verdicts_name_the_path_before_the_budget():
    """A clear path with a negative margin is budget-short, never obstructed; no line of sight wins."""
    from profiler.screening import Verdict, verdict_counts, verdicts

    cols = {
        "status": np.array([0, 0, 0, 0, 0, 0, 1]),
        "line_of_sight": np.array([1, 1, 1, 1, 0, 0, 1]),
        "meets_criterion": np.array([1, 1, 1, 0, 0, 0, 1]),
        "fade_margin_db": np.array([12.0, 5.0, -3.0, 20.0, 30.0, -40.0, 12.0]),
    }
    codes = verdicts(cols, 10.0)
    got = [Verdict(VERDICTS_BY_CODE[c]) for c in codes]
    assert got == [Verdict.VIABLE, Verdict.MARGINAL, Verdict.BUDGET_SHORT, Verdict.CLEARANCE_SHORT,
                   Verdict.OBSTRUCTED, Verdict.OBSTRUCTED, Verdict.ERROR]
    counts = verdict_counts(codes)
    assert counts[Verdict.OBSTRUCTED] == 2 and sum(counts.values()) == 7
    assert Verdict.BUDGET_SHORT.column == "budget_short_links" and str(Verdict.BUDGET_SHORT) == "budget-short"


def test_clear_path_with_gains_left_at_0_dbi_is_budget_short_not_obstructed(tmp_path):
    """The demo's clear pairs with isotropic antennas: line of sight and the criterion met, margin < 0."""
    import geopandas as gpd

    sites, _ = read_sites(DEMO_SITES)
    bare = Radio(5.8, tx_power_dbm=20)
    with ElevationModel([DEMO_DEM]) as model:
        summary = screen(sites, model, bare, Settings(), tmp_path / "r.gpkg", workers=1)
    links = gpd.read_file(tmp_path / "r.gpkg", layer="links")
    short = links[links["verdict"] == "budget-short"]
    assert summary.count("budget-short") == len(short) > 0
    assert short["line_of_sight"].all() and short["meets_criterion"].all()
    assert (short["fade_margin_db"] < 0).all()


def test_one_column_table_serves_the_engine_the_stage_and_the_writer(sites25):
    """The engine's figures, the staged columns and the written ones all come from profiler.io.columns."""
    from profiler.io import columns
    from profiler.io.screen_output import LINK_COLUMNS
    from profiler.screening.evaluate import engine_columns
    from profiler.link import analyse_links

    with ElevationModel([DEMO_DEM]) as model:
        sites, _ = read_sites(DEMO_SITES)
        batch = analyse_links(model, [Site("a", sites.lat_deg[0], sites.lon_deg[0], 10.0)],
                              [Site("b", sites.lat_deg[1], sites.lon_deg[1], 10.0)], RADIO, Settings())
    assert set(engine_columns(batch)) == set(columns.ENGINE_COLUMNS)
    assert screening.COLUMNS is columns.STAGED_COLUMNS and LINK_COLUMNS is columns.LINK_COLUMNS
    assert set(columns.ENGINE_COLUMNS) | set(columns.AVAILABILITY_COLUMNS) <= set(columns.STAGED_COLUMNS)
    assert [v.column for v in screening.Verdict] == [c for c in columns.SITE_COLUMNS if c.endswith("_links")]
