"""`screen --out x.kmz`, `link --kml` and `sheet --kml` on the demo files: valid KML 2.2, the right placemarks."""

from __future__ import annotations

import json

import pytest

from profiler.io.columns import Verdict
from profiler.io.kml import VERDICT_STYLE, kml_colour
from profiler.sheets.style import COLOURS
from tests._screening_data import DEMO_DEM, DEMO_SITES
from tests.conftest import EXAMPLES
from tests.kml_schema import NS, parse_valid_kml

RADIO = ["--freq-ghz", "5.8", "--gain-a-dbi", "23", "--gain-b-dbi", "23"]


def _folders(doc) -> dict:
    return {f.get("id"): f for f in doc.iter(f"{{{NS['k']}}}Folder")}


def _coords(placemark) -> list[tuple[float, float]]:
    text = " ".join(c.text for c in placemark.iter(f"{{{NS['k']}}}coordinates"))
    return [tuple(map(float, t.split(",")[:2])) for t in text.split()]


def test_screen_kmz_matches_the_csv(cli, tmp_path):
    import pandas as pd

    kmz, csv = tmp_path / "demo.kmz", tmp_path / "demo.csv"
    for out in (kmz, csv):
        result = cli("screen", str(DEMO_SITES), "--dem", str(DEMO_DEM), *RADIO, "--out", str(out),
                     "--workers", "1", "-q")
        assert result.exit_code == 0, result.stderr
    links = pd.read_csv(csv)
    sites = pd.read_csv(tmp_path / "demo-sites.csv")
    doc = parse_valid_kml(kmz)
    folders = _folders(doc)
    assert len(folders["sites"].findall("k:Placemark", NS)) == len(sites)
    for verdict, count in links["verdict"].value_counts().items():
        marks = folders[f"folder-{verdict}"].findall("k:Placemark", NS)
        assert len(marks) == count
        for m in marks:
            assert m.findtext("k:styleUrl", namespaces=NS) == f"#verdict-{verdict}"
    # coordinates are lon,lat: the first vertex of the best link is site a of the CSV's rank 1
    best = folders[f"folder-{links.verdict[0]}"].findall("k:Placemark", NS)[0]
    assert best.findtext("k:name", namespaces=NS) == f"{links.site_a[0]} - {links.site_b[0]}"
    xy = _coords(best)
    assert xy[0] == (links.lon_a[0], links.lat_a[0]) and xy[-1] == (links.lon_b[0], links.lat_b[0])
    assert len(xy) - 1 == int(-(-links.distance_km[0] // 1))  # one vertex per km or less
    # the styles are terrahop's palette (KML aabbggrr)
    style = doc.find("k:Document/k:Style[@id='verdict-viable']/k:LineStyle/k:color", NS)
    assert style.text == kml_colour(COLOURS[VERDICT_STYLE[Verdict.VIABLE][0]]) == "ff739e00"
    run = json.loads((tmp_path / "demo.kmz.run.json").read_text())
    assert run["command"][:2] == ["terrahop", "screen"] and "--out" in run["command"]


def test_link_kml_one_link_two_sites(cli, tmp_path):
    out = tmp_path / "one.kml"
    result = cli("link", str(EXAMPLES / "demo-3-blocked.toml"), "--json", "--kml", str(out))
    assert result.exit_code == 0, result.stderr
    record = json.loads(result.stdout)  # stdout stays one JSON object
    doc = parse_valid_kml(out)
    folders = _folders(doc)
    assert set(folders) == {"sites", "folder-obstructed"}
    (mark,) = folders["folder-obstructed"].findall("k:Placemark", NS)
    a, b = record["sites"]["a"], record["sites"]["b"]
    xy = _coords(mark)
    assert xy[0] == (a["lon"], a["lat"]) and xy[-1] == (b["lon"], b["lat"])
    data = {d.get("name"): d.findtext("k:value", namespaces=NS) for d in mark.iter(f"{{{NS['k']}}}Data")}
    assert float(data["distance_km"]) == round(record["distance_km"], 3)
    assert float(data["fade_margin_db"]) == round(record["budget"]["fade_margin_db"], 2)
    assert float(data["wc_fade_margin_db"]) == round(record["worst_case"]["budget"]["fade_margin_db"], 2)
    assert [p.findtext("k:name", namespaces=NS) for p in folders["sites"].findall("k:Placemark", NS)] == \
        [a["name"], b["name"]]
    run = json.loads((tmp_path / "one.kml.run.json").read_text())
    assert run["radio"] == record["inputs"]["radio"] and run["k"] == record["k"]
    assert run["terrain"][0]["role"] == "dem" and len(run["terrain"][0]["sha256"]) == 64
    assert run["link_files"][0]["path"].endswith("demo-3-blocked.toml")


@pytest.mark.parametrize("margin, verdict", [("10", "viable"), ("40", "marginal")])
def test_link_kml_min_margin_sets_the_verdict(cli, tmp_path, margin, verdict):
    out = tmp_path / "l.kmz"
    result = cli("link", str(EXAMPLES / "demo-1-clear.toml"), "--kml", str(out), "--min-margin-db", margin)
    assert result.exit_code == 0, result.stderr
    assert f"folder-{verdict}" in _folders(parse_valid_kml(out))
    assert json.loads((tmp_path / "l.kmz.run.json").read_text())["min_margin_db"] == float(margin)


def test_sheet_kml_all_links_of_the_sheets(cli, tmp_path):
    files = [str(EXAMPLES / f"demo-{n}.toml") for n in ("1-clear", "2-grazing", "4-ridge")]
    out = tmp_path / "sheets.kmz"
    result = cli("sheet", *files, "-o", str(tmp_path / "s.pdf"), "--kml", str(out))
    assert result.exit_code == 0, result.stderr
    doc = parse_valid_kml(out)
    links = [p for fid, f in _folders(doc).items() if fid != "sites" for p in f.findall("k:Placemark", NS)]
    assert len(links) == 3
    run = json.loads((tmp_path / "sheets.kmz.run.json").read_text())
    assert len(run["link_files"]) == 3 and run["command"][1] == "sheet"
