"""Unit tests of profiler.sheets: table text, drawing geometry, map window, page output."""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest

from profiler.budget import Radio
from profiler.link import Settings, Site, analyse_links
from profiler.sheets.content import TitleBlock, profile_drawing
from profiler.sheets.style import PAGE_SIZES_MM, page_size
from profiler.sheets.table import format_dms, format_k, height_text, parameter_rows
from profiler.terrain import ElevationModel

UTM = "EPSG:32633"


@pytest.fixture(scope="module")
def ridge_tif(tmp_path_factory):
    """A 6 km x 6 km raster (30 m cells, UTM 33N): flat at 100 m with an 80 m north-south ridge at x = 3 km."""
    import rasterio
    from rasterio.transform import from_origin

    path = tmp_path_factory.mktemp("dem") / "ridge.tif"
    x = (np.arange(200) + 0.5) * 30.0
    z = 100.0 + 80.0 * np.exp(-(((x - 3000.0) / 400.0) ** 2))
    with rasterio.open(path, "w", driver="GTiff", width=200, height=200, count=1, dtype="float32", crs=UTM,
                       transform=from_origin(500_000, 5_006_000, 30, 30), nodata=-9999.0) as dst:
        dst.write(np.tile(z, (200, 1)).astype("float32"), 1)
    return path


def _lonlat(x, y):
    from pyproj import Transformer

    return Transformer.from_crs(UTM, "EPSG:4326", always_xy=True).transform(x, y)


@pytest.fixture(scope="module")
def batch(ridge_tif):
    """Two links across the ridge: 0 blocked (10 m masts), 1 clear (100 m masts)."""
    lon_a, lat_a = _lonlat(500_600.0, 5_003_000.0)
    lon_b, lat_b = _lonlat(505_400.0, 5_003_000.0)
    a = [Site("West", lat_a, lon_a, 10.0), Site("West", lat_a, lon_a, 100.0)]
    b = [Site("East", lat_b, lon_b, 10.0), Site("East", lat_b, lon_b, 100.0)]
    model = ElevationModel([ridge_tif])
    out = analyse_links(model, a, b, Radio(freq_ghz=5.8, tx_power_dbm=20, gain_a_dbi=23, gain_b_dbi=23),
                        Settings(spacing_m=15.0), names=["blocked", "clear"])
    yield out, model
    model.close()


# --- table text -------------------------------------------------------------

@pytest.mark.parametrize("value, is_lat, text", [
    # Sexagesimal degrees: 1 degree = 60 minutes = 3600 seconds (definition).
    (-30.5, True, "30°30'00.00\" S"),
    (30.462146, True, "30°27'43.73\" N"),  # 0.462146 * 3600 = 1663.7256 s = 27' 43.7256"
    (-20.911456, False, "20°54'41.24\" W"),  # 0.911456 * 3600 = 3281.2416 s = 54' 41.2416"
    (10.9999999, False, "11°00'00.00\" E"),  # 59.99964" rounds up and carries into degrees
    (0.0, True, "0°00'00.00\" N"),
])
def test_format_dms(value, is_lat, text):
    assert format_dms(value, is_lat) == text


def test_format_k_fractions_and_others():
    assert format_k(1.3333333333) == "4/3"
    assert format_k(0.6666666667) == "2/3"
    assert format_k(1.0) == "1"
    assert format_k(0.77) == "0.77"


def test_height_text_feet_uses_the_international_foot():
    # International foot = 0.3048 m exactly (1959 agreement): 25 m = 82.02 ft.
    assert height_text(25.0, "ft") == "82.0 ft"
    assert height_text(-3.0, "m", signed=True) == "-3.0 m"


def test_parameter_rows_carry_the_record_numbers(batch):
    b, _ = batch
    rec = b.record(0)
    rows = {r.label: r for r in parameter_rows(rec)}
    assert rows["Path length"].left == f"{rec['distance_km']:.3f} km"
    assert rows["Frequency"].left == "5.8 GHz"
    assert rows["SNR"].left == f"{rec['budget']['snr_db']:.1f} dB"
    assert rows["SNR"].right == f"{rec['worst_case']['budget']['snr_db']:.1f} dB"
    assert rows["Fade margin"].left == f"{rec['budget']['fade_margin_db']:+.1f} dB"
    assert rows["Diffraction"].left == f"{rec['loss_db']['diffraction']:.1f} dB"
    assert rows["Verdict"].flag == "bad" and "FAILS" in rows["Verdict"].left
    assert rows["Name"].left == "West" and rows["Name"].right == "East"
    assert rows["Clearance criterion"].left == "0.6 F1 at k = 4/3, 0 F1 at k = 2/3"


def test_parameter_rows_in_feet(batch):
    b, _ = batch
    rec = b.record(1)
    rows = {r.label: r for r in parameter_rows(rec, "ft")}
    assert rows["Antenna above ground"].left == f"{100.0 / 0.3048:.1f} ft"
    with pytest.raises(ValueError, match="units"):
        parameter_rows(rec, "yards")


def test_page_sizes_are_iso_and_us_letter_landscape():
    # ISO 216: A4 210 x 297 mm, A3 297 x 420 mm; US Letter 8.5 x 11 in (ANSI/ASME Y14.1).
    assert PAGE_SIZES_MM["a4"] == (297.0, 210.0)
    assert PAGE_SIZES_MM["a3"] == (420.0, 297.0)
    assert page_size("Letter").size_in == pytest.approx((11.0, 8.5))
    with pytest.raises(ValueError, match="a4, letter, a3"):
        page_size("b5")


# --- drawing ----------------------------------------------------------------

def _axes():
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    fig = Figure(figsize=(8, 4))
    FigureCanvasAgg(fig)
    return fig.add_subplot()


def test_drawing_marks_the_obstruction_of_a_blocked_link(batch):
    from profiler.sheets.drawing import draw_profile

    b, _ = batch
    rec = b.record(0)
    d = profile_drawing(b, 0)
    assert not rec["clearance"]["line_of_sight"]
    art = draw_profile(_axes(), d, rec)
    j = d.worst_index
    x, y = art.worst_marker.get_data()
    assert x[0] == pytest.approx(rec["clearance"]["worst_distance_km"])
    assert y[0] == pytest.approx(d.ground_m[j] + d.bulge_m[j])
    # The ridge crest (180 m at 3 km east of the raster edge, i.e. 2.4 km from site a) is the worst point.
    assert x[0] == pytest.approx(2.4, abs=0.05)
    assert "OBSTRUCTED" in art.worst_label.get_text()
    assert f"{rec['clearance']['worst_clearance_m']:+.1f} m" in art.worst_label.get_text()


def test_drawn_bulge_fresnel_and_criterion_follow_the_handbook(batch):
    from profiler.sheets.drawing import draw_profile

    b, _ = batch
    rec = b.record(1)
    d = profile_drawing(b, 1)
    art = draw_profile(_axes(), d, rec)
    i = len(d.distance_m) // 2
    d1 = d.distance_m[i] / 1000.0
    dist = d.length_m / 1000.0
    d2 = dist - d1
    # Earth bulge h = d1 d2 / (12.742 k) m with km (handbook form of d1 d2 / (2 k a), a = 6371 km).
    bulge = d1 * d2 / (12.742 * (4.0 / 3.0))
    assert art.lines["ground"].get_ydata()[i] - d.ground_m[i] == pytest.approx(bulge, rel=1e-4)
    # First Fresnel radius F1 = 17.3 sqrt(d1 d2 / (f d)) m, f in GHz, d in km (ITU-R P.530-17;
    # the section, 2.2.2, is from memory).  17.3 rounds 17.32, hence the 2e-3 tolerance.
    f1 = 17.3 * np.sqrt(d1 * d2 / (5.8 * dist))

    def at(name):
        return np.interp(d1, *art.lines[name].get_data())

    assert at("line") == pytest.approx(d.line_m[i], abs=1e-6)
    assert at("f1_upper") - at("line") == pytest.approx(f1, rel=2e-3)
    assert at("line") - at("criterion") == pytest.approx(0.6 * f1, rel=2e-3)
    # Worst-case terrain uses k = 2/3: twice the bulge.
    assert art.lines["worst_k"].get_ydata()[i] - d.ground_m[i] == pytest.approx(2 * bulge, rel=1e-4)
    assert "OBSTRUCTED" not in art.worst_label.get_text()


def test_buildings_and_trees_draw_as_distinct_layers(batch):
    from profiler.sheets.drawing import draw_profile
    from profiler.sheets.page import _obstruction_note

    b, _ = batch
    d = profile_drawing(b, 1)
    n = len(d.distance_m)
    clutter = np.zeros(n)
    kind = np.zeros(n, dtype=int)
    clutter[50:60], kind[50:60] = 12.0, 1  # a building
    clutter[200:240], kind[200:240] = 18.0, 2  # a tree stand
    d2 = dataclasses.replace(d, clutter_m=clutter, clutter_kind=kind)
    art = draw_profile(_axes(), d2, b.record(1))
    assert set(art.clutter) == {"buildings", "trees"}
    labels = [h.get_label() for h in art.legend]
    assert "buildings" in labels and "trees" in labels
    # Without kinds, clutter still shows, as one layer.
    art2 = draw_profile(_axes(), dataclasses.replace(d, clutter_m=clutter), b.record(1))
    assert set(art2.clutter) == {"clutter"}
    from profiler.sheets.content import SheetContent

    content = SheetContent(record=b.record(1), drawing=d2, path_lat_deg=np.zeros(2), path_lon_deg=np.zeros(2),
                           sources=())
    assert "buildings, trees" in _obstruction_note(content)


# --- map ----------------------------------------------------------------------

def test_map_grid_reprojects_the_window_around_the_path(batch, ridge_tif):
    from profiler.sheets.minimap import read_map_grid

    b, model = batch
    n = int(b.profiles.n_samples[0])
    lat, lon = b.profiles.lat_deg[0, :n], b.profiles.lon_deg[0, :n]
    g = read_map_grid(model.sources, lat, lon, aspect=1.2, max_px=200)
    left, right, bottom, top = g.extent_m
    assert (right - left) / (top - bottom) == pytest.approx(1.2)
    assert left < g.path_x_m.min() and right > g.path_x_m.max()
    assert bottom < g.path_y_m.min() and top > g.path_y_m.max()
    # The path runs 4.8 km east-west; in the azimuthal frame its ends are 4.8 km apart.
    assert np.hypot(g.path_x_m[-1] - g.path_x_m[0], g.path_y_m[-1] - g.path_y_m[0]) == pytest.approx(4800, rel=2e-3)
    # Heights agree with the raster: the centre row crosses the ridge crest (180 m).
    row = g.elevation_m[g.elevation_m.shape[0] // 2]
    assert np.nanmax(row) == pytest.approx(180.0, abs=1.5)
    assert np.nanmin(row) == pytest.approx(100.0, abs=0.5)
    # The map reaches past the raster's western edge there: no data, not an error.
    assert np.isnan(g.elevation_m).any()


def test_map_grid_reads_a_geographic_raster(tmp_path):
    import rasterio
    from rasterio.transform import from_origin

    from profiler.sheets.minimap import read_map_grid

    path = tmp_path / "geo.tif"
    z = np.add.outer(np.linspace(300, 100, 120), np.zeros(120)).astype("float32")  # falls to the south
    with rasterio.open(path, "w", driver="GTiff", width=120, height=120, count=1, dtype="float32",
                       crs="EPSG:4326", transform=from_origin(10.0, 46.0, 0.001, 0.001)) as dst:
        dst.write(z, 1)
    model = ElevationModel([path])
    g = read_map_grid(model.sources, np.array([45.95, 45.93]), np.array([10.03, 10.09]), max_px=100)
    col = g.elevation_m[:, g.elevation_m.shape[1] // 2]
    good = col[np.isfinite(col)]
    assert good.size > 10 and good[0] > good[-1]  # north (top rows) is higher


def test_scale_bar_lengths_are_round():
    from profiler.sheets.minimap import nice_scale_length_m

    assert nice_scale_length_m(9000) == 2000
    assert nice_scale_length_m(4000) == 1000
    assert nice_scale_length_m(25000) == 5000
    assert nice_scale_length_m(700) == 100


# --- pages --------------------------------------------------------------------

def test_sheet_paths_number_the_files_of_several_links(tmp_path):
    from profiler.sheets import sheet_paths

    assert sheet_paths(tmp_path / "s.pdf", "pdf", ["x", "y"]) == [tmp_path / "s.pdf"]
    assert sheet_paths(tmp_path / "s.png", "png", ["one"]) == [tmp_path / "s.png"]
    assert sheet_paths(tmp_path / "s.svg", "svg", ["A to B", "C/D"]) == [
        tmp_path / "s-01-a-to-b.svg", tmp_path / "s-02-c-d.svg"]


def test_svg_keeps_text_as_text(batch, tmp_path):
    from profiler.sheets.build import sheet_contents
    from profiler.sheets.page import write_sheets

    b, model = batch
    contents = sheet_contents(b, model, title=TitleBlock(project="Ridge test"), indices=[0])
    (path,) = write_sheets(contents, tmp_path / "x.svg", fmt="svg")
    svg = path.read_text(encoding="utf-8")
    assert "<text" in svg and "Ridge test" in svg and "OBSTRUCTED" in svg
    with pytest.raises(ValueError, match="pdf, png, svg"):
        write_sheets(contents, tmp_path / "x.eps", fmt="eps")


def test_importing_the_cli_leaves_matplotlib_out():
    import subprocess
    import sys

    code = "import sys, profiler.cli.main, profiler.sheets; print('matplotlib' in sys.modules)"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "False"


def test_notes_and_table_show_obstruction_and_roof_keys_when_present(batch):
    """Records with obstruction crossings and roof mounts (added by the obstruction work) print them."""
    from profiler.sheets.content import SheetContent
    from profiler.sheets.page import _obstruction_note

    b, _ = batch
    rec = b.record(1)
    rec["clutter"] = {"crossed": [
        {"layer": "town", "feature": "Corn Exchange", "kind": "building", "from_km": 1.2, "to_km": 1.26,
         "height_m": 24.0},
        {"layer": "town", "feature": 7, "kind": "trees", "from_km": 2.0, "to_km": 2.1, "height_m": 15.5},
    ]}
    rec["sites"]["a"]["antenna_above_roof_m"] = 3.0
    content = SheetContent(record=rec, drawing=profile_drawing(b, 1), path_lat_deg=np.zeros(2),
                           path_lon_deg=np.zeros(2), sources=())
    note = _obstruction_note(content)
    assert "building Corn Exchange at 1.200-1.260 km, 24.0 m high" in note
    assert "trees 7 at 2.000-2.100 km, 15.5 m high" in note
    rows = {r.label: r for r in parameter_rows(rec)}
    assert rows["Antenna above roof"].left == "3.0 m" and rows["Antenna above roof"].right == "-"


def test_wall_samples_give_obstructions_vertical_sides():
    from profiler.sheets.drawing import wall_samples

    mask = np.array([True, False, True, True, False, True])
    idx, zero = wall_samples(mask)
    # Each run's first sample is repeated with a ground copy before it, its last with one after.
    assert idx.tolist() == [0, 0, 0, 1, 2, 2, 3, 3, 4, 5, 5, 5]
    assert zero.tolist() == [True, False, True, False, True, False, False, True, False, True, False, True]
    idx, zero = wall_samples(np.zeros(3, dtype=bool))
    assert idx.tolist() == [0, 1, 2] and not zero.any()


def test_availability_rows_when_the_record_has_them(batch):
    from profiler.sheets.table import availability_rows

    b, _ = batch
    rec = b.record(1)
    assert availability_rows({k: v for k, v in rec.items() if k != "availability"}) == []
    rec["availability"] = {"estimated": True, "availability_pct": 99.98490559904604, "target_availability_pct": 99.99,
                           "meets_target": False, "required_fade_margin_db": 30.53,
                           "required_fade_margin_rain_only_db": 30.48,
                           "rain": {"outage_min_per_year": 78.85},
                           "multipath": {"estimated": True, "worst_month_min": 0.27, "average_year_min": 0.545}}
    rows = {r.label: r for r in parameter_rows(rec)}
    assert rows["Availability (rain only)"].left == "99.9849 % (target 99.99 %)"
    assert rows["Availability (rain only)"].flag == "bad"
    assert rows["Rain outage per year"].left == "79 min"
    assert rows["Multipath (performance)"].left == "0.27 min worst month, 0.55 min/yr"
    assert rows["Margin needed, rain"].left == "30.5 dB for 99.99 %"
    assert rows["  rain + multipath"].left == "30.5 dB (average year)"
    # Beyond the range of ITU-R P.530-17 eq. 34 (0.001-1 %): a bound, never a figure.
    rec["availability"].update(availability_pct=None, availability_above_pct=99.999, meets_target=True,
                               rain={"outage_pct": None, "outage_min_per_year": None, "outage_below_pct": 0.001},
                               required_fade_margin_rain_below_range=True)
    rows = {r.label: r for r in parameter_rows(rec)}
    assert rows["Availability (rain only)"].left == "above 99.999 % (target 99.99 %)"
    assert rows["Rain outage per year"].left == "< 0.001 % (below P.530-17 range)"
    assert rows["  rain + multipath"].left == "30.5 dB (average year; rain < 0.001 % there)"
    # Not estimated (obstructed path, link that does not close): no verdict row.
    rec["availability"] = {"estimated": False, "reason": "the path fails the clearance criterion; more",
                           "target_availability_pct": 99.99}
    rows = {r.label: r for r in parameter_rows(rec)}
    assert rows["Availability"].left == "not estimated"
    assert rows["  why"].left == "the path fails the clearance criterion"
    assert not any("MEETS" in (r.left or "") for r in availability_rows(rec))


# --- long names, distances in miles, mast labels -----------------------------

def test_fit_cuts_a_very_long_name_with_few_measurements():
    """Bounded time: a 20,000-character name is fitted with a handful of measurements, not one per character."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    from profiler.sheets.page import _fit

    fig = Figure(figsize=(11.7, 8.3), dpi=100)
    FigureCanvasAgg(fig)
    renderer = fig.canvas.get_renderer()
    text = fig.text(0.1, 0.5, "Wide Name " * 2000, fontsize=8.5)
    calls = 0
    measure = text.get_window_extent

    def counted(*args, **kw):
        nonlocal calls
        calls += 1
        return measure(*args, **kw)

    text.get_window_extent = counted
    _fit(text, 300.0, renderer, 6.0)
    assert calls <= 25
    assert measure(renderer).width <= 300.0
    assert text.get_text().endswith("…") and text.get_text().startswith("Wide Name")
    assert text.get_fontsize() == 6.0


def test_fit_leaves_a_short_name_whole():
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    from profiler.sheets.page import _fit

    fig = Figure(figsize=(11.7, 8.3), dpi=100)
    FigureCanvasAgg(fig)
    text = fig.text(0.1, 0.5, "Orrin Water Tank", fontsize=8.5)
    _fit(text, 300.0, fig.canvas.get_renderer(), 6.0)
    assert text.get_text() == "Orrin Water Tank" and text.get_fontsize() == 8.5


def test_distances_in_miles_with_feet():
    from profiler.sheets.table import MILE_M, distance_text

    # International mile = 5280 ft x 0.3048 m = 1609.344 m (exact, 1959 agreement).
    assert MILE_M == pytest.approx(1609.344, abs=1e-9)
    assert distance_text(1.609344, "ft") == "1.000 mi"
    assert distance_text(8.562, "ft", with_km=True) == "5.320 mi (8.562 km)"
    assert distance_text(8.562, "m", with_km=True) == "8.562 km"


def test_sheet_in_feet_gives_distances_in_miles(batch):
    out, model = batch
    rows = {r.label: r for r in parameter_rows(out.record(1), "ft")}
    assert rows["Path length"].left.endswith("km)") and " mi " in rows["Path length"].left
    assert rows["Worst point from a"].left.endswith(" mi")


def _label_box_data(ax, label):
    renderer = ax.figure.canvas.get_renderer()
    box = label.get_window_extent(renderer)
    (x0, y0), (x1, y1) = ax.transData.inverted().transform([(box.x0, box.y0), (box.x1, box.y1)])
    return x0, x1, y0, y1


@pytest.mark.parametrize("units", ["m", "ft"])
def test_mast_labels_stay_off_the_ray_the_fresnel_zone_and_the_criterion_line(batch, units):
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    from profiler.sheets.drawing import draw_profile

    out, model = batch
    for i in range(2):
        fig = Figure(figsize=(8, 3), dpi=100)
        FigureCanvasAgg(fig)
        ax = fig.add_axes([0.1, 0.15, 0.85, 0.8])
        art = draw_profile(ax, profile_drawing(out, i), out.record(i), units=units)
        assert "AGL" not in " ".join(lb.get_text() for lb in art.mast_labels)
        assert any(lb.get_visible() for lb in art.mast_labels)
        for label in art.mast_labels:
            if not label.get_visible():
                continue
            x0, x1, y0, y1 = _label_box_data(ax, label)
            for key in ("line", "f1_upper", "f1_lower", "criterion"):
                xs, ys = art.lines[key].get_data()
                inside = (xs >= x0) & (xs <= x1) & (ys >= y0) & (ys <= y1)
                assert not inside.any(), (i, key, label.get_text())
