"""End-to-end: `terrahop sheet` on the shipped (invented) demo link files."""

from __future__ import annotations

import csv
import json
from pathlib import Path

import pytest
from click.testing import CliRunner

from profiler.cli.main import cli

pypdf = pytest.importorskip("pypdf")

EXAMPLES = Path(__file__).resolve().parents[2] / "examples"
CLEAR = str(EXAMPLES / "demo-1-clear.toml")
BLOCKED = str(EXAMPLES / "demo-3-blocked.toml")


def _run(*args):
    return CliRunner().invoke(cli, [str(a) for a in args], catch_exceptions=False)


def _record(link_file):
    result = _run("link", link_file, "--json")
    assert result.exit_code == 0, result.output
    return json.loads(result.stdout)


def _squash(text: str) -> str:
    """Text without whitespace (PDF text extraction may split words at kerning)."""
    return "".join(text.split())


@pytest.fixture(scope="module")
def two_page_pdf(tmp_path_factory):
    out = tmp_path_factory.mktemp("sheets") / "two.pdf"
    result = _run("sheet", CLEAR, BLOCKED, "-o", out, "--project", "Demo network", "--prepared-by", "Test Planner",
                  "--date", "2026-01-02", "--revision", "C")
    assert result.exit_code == 0, result.output
    assert f"wrote {out} (2 pages)" in result.output
    return out


def test_multi_link_pdf_has_one_page_per_link(two_page_pdf):
    reader = pypdf.PdfReader(two_page_pdf)
    assert len(reader.pages) == 2
    # A4 landscape is 297 x 210 mm = 841.89 x 595.28 pt (ISO 216; 1 pt = 1/72 in).
    box = reader.pages[0].mediabox
    assert float(box.width) == pytest.approx(841.89, abs=0.5)
    assert float(box.height) == pytest.approx(595.28, abs=0.5)


def test_pdf_text_layer_holds_each_links_names_and_numbers(two_page_pdf):
    reader = pypdf.PdfReader(two_page_pdf)
    for page, link_file in zip(reader.pages, (CLEAR, BLOCKED)):
        text = _squash(page.extract_text())
        rec = _record(link_file)
        radio = rec["inputs"]["radio"]
        for expected in (
            rec["sites"]["a"]["name"], rec["sites"]["b"]["name"], rec["name"],
            f"{radio['freq_ghz']:g} GHz",
            f"{rec['distance_km']:.3f} km",
            f"SNR {rec['budget']['snr_db']:.1f} dB",
            f"Fade margin {rec['budget']['fade_margin_db']:+.1f} dB",
            f"{rec['sites']['a']['ground_m']:.1f} m",
            f"{rec['clearance']['worst_distance_km']:.3f} km",
            "Demo network", "Test Planner", "2026-01-02", "not a survey", "SHA-256",
        ):
            assert _squash(expected) in text, expected


def test_blocked_link_sheet_shows_the_obstruction_point(two_page_pdf):
    reader = pypdf.PdfReader(two_page_pdf)
    rec = _record(BLOCKED)
    c = rec["clearance"]
    text = _squash(reader.pages[1].extract_text())
    assert _squash(f"OBSTRUCTED at k = 4/3: {c['worst_distance_km']:.3f} km from a") in text
    assert _squash(f"clearance {c['worst_clearance_m']:+.1f} m = {c['worst_f1_fraction']:+.2f} F1 "
                   "(surface above the line)") in text
    assert "FAILSCLEARANCECRITERION" in text
    assert "OBSTRUCTED" not in _squash(reader.pages[0].extract_text())


def test_png_writes_one_file_per_link(tmp_path):
    from PIL import Image

    result = _run("sheet", CLEAR, BLOCKED, "-o", tmp_path / "s.png", "--dpi", 50, "--page", "letter")
    assert result.exit_code == 0, result.output
    pngs = sorted(tmp_path.glob("s-*.png"))
    assert [p.name for p in pngs] == ["s-01-orrin-water-tank-to-brackwell-silo.png",
                                      "s-02-wexby-grange-to-highfold-tower.png"]
    with Image.open(pngs[0]) as im:
        assert im.size == (550, 425)  # US Letter landscape, 11 x 8.5 in at 50 dpi


def test_pairs_table_draws_the_best_links_as_svg(tmp_path):
    sites = {r["name"]: r for r in csv.DictReader(open(EXAMPLES.parent / "data" / "demo" / "sites.csv"))}
    pairs = [("Orrin Water Tank", "Brackwell Silo", 20.6), ("Wexby Grange", "Highfold Tower", -17.4),
             ("Corrow Ridge Mast", "Dunmore Tank", 16.0)]
    table = tmp_path / "ranked.csv"
    with open(table, "w", newline="") as fh:
        w = csv.writer(fh)
        w.writerow(["name_a", "lat_a", "lon_a", "agl_a_m", "name_b", "lat_b", "lon_b", "agl_b_m", "fade_margin_db"])
        for a, b, margin in pairs:
            sa, sb = sites[a], sites[b]
            w.writerow([a, sa["lat"], sa["lon"], sa["antenna_agl_m"], b, sb["lat"], sb["lon"], sb["antenna_agl_m"],
                        margin])
        w.writerow(["Broken", "x", "1", "1", "Row", "1", "1", "1", "99"])
    result = _run("sheet", CLEAR, "--pairs", table, "--best", 2, "-o", tmp_path / "best.svg", "--units", "ft",
                  "--page", "a3")
    assert result.exit_code == 0, result.output
    svgs = sorted(tmp_path.glob("best-*.svg"))
    assert [p.name for p in svgs] == ["best-01-orrin-water-tank-brackwell-silo.svg",
                                      "best-02-corrow-ridge-mast-dunmore-tank.svg"]
    svg = svgs[1].read_text(encoding="utf-8")
    assert "<text" in svg and "Corrow Ridge Mast" in svg and "Elevation, ft" in svg
    assert 'width="1190.' in svg  # A3 landscape: 420 mm = 1190.55 pt (ISO 216)


@pytest.mark.parametrize("args, message", [
    (["sheet", CLEAR, "-o", "sheet.jpg"], "cannot tell the sheet format from 'sheet.jpg'"),
    (["sheet", "missing.toml", "-o", "x.pdf"], "link file not found: missing.toml"),
    (["sheet", CLEAR, "--best", "2", "-o", "x.pdf"], "give the table with --pairs"),
    (["sheet", CLEAR, BLOCKED, "--pairs", CLEAR, "-o", "x.pdf"], "at most one link file"),
    (["sheet", "--pairs", "nope.csv", "--dem", "x.tif", "-o", "x.pdf"], "pair table not found: nope.csv"),
    (["sheet", CLEAR, "--freq-ghz", "-3", "-o", "x.pdf"], "frequency (freq_ghz) must lie between 0.03 and 1000 GHz"),
    (["sheet", "--site-a", "1,2", "--site-b", "1,3", "-o", "x.pdf"], "no elevation raster"),
])
def test_bad_inputs_give_one_line_errors(args, message, tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    result = CliRunner().invoke(cli, args)
    assert result.exit_code != 0
    assert message in result.output
    assert "Traceback" not in result.output


def test_pairs_with_site_flags_or_bad_columns_are_refused(tmp_path):
    table = tmp_path / "t.csv"
    table.write_text("a,b\n1,2\n")
    result = CliRunner().invoke(cli, ["sheet", CLEAR, "--pairs", table, "-o", tmp_path / "x.pdf"])
    assert result.exit_code == 1 and "no column for lat_a" in result.output
    result = CliRunner().invoke(cli, ["sheet", CLEAR, "--pairs", table, "--site-a", "1,2", "-o", tmp_path / "x.pdf"])
    assert result.exit_code == 1 and "cannot be combined with --pairs" in result.output
    table.write_text("lat_a,lon_a,lat_b,lon_b,agl_a_m,agl_b_m\n10,10,10.01,10.01,5,5\n")
    result = CliRunner().invoke(cli, ["sheet", CLEAR, "--pairs", table, "-o", tmp_path / "x.pdf"])
    assert result.exit_code == 1
    assert "lies outside the elevation rasters" in result.output
    assert "none of the selected pairs can be profiled" in result.output


def test_rooftop_sheet_draws_buildings_trees_and_roof_masts(tmp_path):
    """The invented town demo: obstruction layers and roof mounts reach the sheet as they reach `link`."""
    out = tmp_path / "roof.svg"
    result = _run("sheet", EXAMPLES / "demo-5-rooftop.toml", "-o", out)
    assert result.exit_code == 0, result.output
    svg = out.read_text(encoding="utf-8")
    rec = _record(str(EXAMPLES / "demo-5-rooftop.toml"))
    c = rec["clearance"]
    for expected in (
        ">buildings<", ">trees<",  # legend entries of the two obstruction layers
        "Corn Exchange Tower (fid 752)", "3.0 m above roof", "town.gpkg",
        f"OBSTRUCTED at k = 4/3: {c['worst_distance_km']:.3f} km from a",
    ):
        assert expected in svg, expected


def test_pairs_table_heights_win_over_the_template_link_file(tmp_path):
    # The template (demo-1-clear: 20 m / 15 m) supplies terrain and radio; each row's own heights are drawn.
    sites = {r["name"]: r for r in csv.DictReader(open(EXAMPLES.parent / "data" / "demo" / "sites.csv"))}
    sa, sb = sites["Wexby Grange"], sites["Highfold Tower"]
    table = tmp_path / "one.csv"
    table.write_text("name_a,lat_a,lon_a,agl_a_m,name_b,lat_b,lon_b,agl_b_m\n"
                     f"Wexby Grange,{sa['lat']},{sa['lon']},33,Highfold Tower,{sb['lat']},{sb['lon']},27\n")
    result = _run("sheet", CLEAR, "--pairs", table, "-o", tmp_path / "one.svg")
    assert result.exit_code == 0, result.output
    svg = next(tmp_path.glob("one*.svg")).read_text(encoding="utf-8")
    assert "antenna 33.0 m above ground" in svg and "antenna 27.0 m above ground" in svg
