"""The review page in a real browser (headless Chromium): load, counts, picking, filters, sort, CSV, screenshot.

Needs Playwright (the ``test`` extra) and Debian's chromium; skipped with the
reason otherwise.  Run alone: ``python -m pytest tests/review -k browser``.
"""

from __future__ import annotations

import csv
import io
import math
import shutil
import sqlite3

import pytest

from profiler.review import build_review_page
from profiler.review.page import COLUMN_INFO
from tests.review.browser import chromium, open_page, screen_xy, wait_for
from tests.conftest import DEMO_DEM
from tests.review.fixtures import links_rows


@pytest.fixture(scope="module")
def browser():
    with chromium() as b:
        yield b


@pytest.fixture(scope="module")
def demo_page(demo_result_with_run, tmp_path_factory):
    out = tmp_path_factory.mktemp("page") / "review.html"
    build_review_page(demo_result_with_run, out)
    return out


@pytest.fixture
def page(browser, demo_page):
    errors: list[str] = []
    pg = open_page(browser, demo_page, errors)
    yield pg, errors
    pg.close()
    assert not errors, errors


def shown(pg) -> int:
    return int(pg.get_attribute("#shown-count", "data-n"))


def test_loads_with_counts_of_the_file(page, demo_result):
    pg, errors = page
    n = len(links_rows(demo_result))
    assert int(pg.get_attribute("#total-count", "data-n")) == n == 66
    assert shown(pg) == n
    assert pg.evaluate("document.querySelectorAll('#verdicts input').length") == 6
    assert "How this result was made" in pg.inner_text("#side")
    assert "radio.freq_ghz5.8" in pg.text_content("#run")  # the run description's radio
    assert errors == []


def _clear_point(rows, i, view, min_gap_px=9.0):
    """A point on link i (CSS px) at least ``min_gap_px`` from every other link, or None."""
    ax, ay = screen_xy(view, rows[i]["lon_a"], rows[i]["lat_a"])
    bx, by = screen_xy(view, rows[i]["lon_b"], rows[i]["lat_b"])
    others = [(screen_xy(view, r["lon_a"], r["lat_a"]), screen_xy(view, r["lon_b"], r["lat_b"]))
              for j, r in enumerate(rows) if j != i]
    for t in [0.5, 0.4, 0.6, 0.3, 0.7, 0.25, 0.75, 0.35, 0.65]:
        px, py = ax + t * (bx - ax), ay + t * (by - ay)
        if not (5 < px < view["width"] - 50 and 5 < py < view["height"] - 5):
            continue
        gap = min(_dist(px, py, *p, *q) for p, q in others)
        if gap >= min_gap_px:
            return px, py
    return None


def _dist(px, py, ax, ay, bx, by):
    dx, dy = bx - ax, by - ay
    t = max(0.0, min(1.0, ((px - ax) * dx + (py - ay) * dy) / (dx * dx + dy * dy or 1.0)))
    return math.hypot(ax + t * dx - px, ay + t * dy - py)


def test_clicking_a_link_shows_its_profile_and_numbers(page, demo_result):
    pg, _ = page
    rows = links_rows(demo_result)
    view = pg.evaluate("terrahopReview.view()")
    box = pg.locator("#map").bounding_box()
    picked = 0
    for i in range(len(rows)):
        point = _clear_point(rows, i, view)
        if point is None:
            continue
        pg.mouse.click(box["x"] + point[0], box["y"] + point[1])
        wait_for(pg, f"document.getElementById('detail').dataset.link === '{i}'")
        assert pg.inner_text("#detail h2") == f"{rows[i]['site_a']} \u2192 {rows[i]['site_b']}"
        for col, (_, _, unit, digits) in COLUMN_INFO.items():
            if col not in rows[i]:
                continue
            text = pg.inner_text(f'#detail tr[data-col="{col}"] td.v')
            value = rows[i][col]
            if value is None:
                assert text == "\u2014", (col, text)
            else:
                shown_value = float(text.split()[0])
                assert abs(shown_value - value) <= 0.5 * 10 ** -digits + 1e-6 * abs(value), (col, text, value)
                if unit:
                    assert text.endswith(" " + unit)
        if rows[i]["verdict"] != "error":
            wait_for(pg, "document.getElementById('profile') && document.getElementById('profile').dataset.drawn")
            inked = pg.evaluate("""() => { const c = document.getElementById('profile');
                const d = c.getContext('2d').getImageData(0, 0, c.width, c.height).data; let n = 0;
                for (let k = 0; k < d.length; k += 4) if (d[k] < 200 || d[k+1] < 200 || d[k+2] < 200) n++; return n; }""")
            assert inked > 2000  # ground, line and zone are drawn
        picked += 1
        if picked == 3:
            break
    assert picked == 3, "no link of the demo could be clicked clear of the others"


def test_clicking_empty_map_selects_nothing(page):
    pg, _ = page
    box = pg.locator("#map").bounding_box()
    pg.mouse.click(box["x"] + 3, box["y"] + box["height"] - 3)
    assert pg.evaluate("terrahopReview.selected()") == -1


@pytest.mark.parametrize("action, expect", [
    ("uncheck obstructed", lambda r: r["verdict"] != "obstructed"),
    ("only viable", lambda r: r["verdict"] == "viable"),
    ("margin from 20", lambda r: r["fade_margin_db"] is not None and r["fade_margin_db"] >= 20),
    ("margin to 0", lambda r: r["fade_margin_db"] is not None and r["fade_margin_db"] <= 0),
    ("distance 3 to 6", lambda r: 3 <= r["distance_km"] <= 6),
    ("site tallis", lambda r: "tallis" in r["site_a"].lower() or "tallis" in r["site_b"].lower()),
    ("site tallis, margin from 20", lambda r: ("tallis" in r["site_a"].lower() or "tallis" in r["site_b"].lower())
     and r["fade_margin_db"] is not None and r["fade_margin_db"] >= 20),
])
def test_each_filter_gives_the_right_count(page, demo_result, action, expect):
    pg, _ = page
    rows = links_rows(demo_result)
    want = sum(1 for r in rows if expect(r))
    assert 0 < want < len(rows), "the case must filter something"
    if action == "uncheck obstructed":
        pg.uncheck('#verdicts input[data-verdict="obstructed"]')
    elif action == "only viable":
        for v in ("marginal", "budget-short", "clearance-short", "obstructed", "error"):
            pg.uncheck(f'#verdicts input[data-verdict="{v}"]')
    for part in action.split(", "):
        if part.startswith("margin from"):
            pg.fill("#margin-min", part.split()[-1])
        elif part.startswith("margin to"):
            pg.fill("#margin-max", part.split()[-1])
        elif part.startswith("distance"):
            pg.fill("#dist-min", "3")
            pg.fill("#dist-max", "6")
        elif part.startswith("site"):
            pg.fill("#site-filter", part.split()[-1])
    wait_for(pg, f"document.getElementById('shown-count').dataset.n === '{want}'")
    assert shown(pg) == want
    assert pg.evaluate("terrahopReview.shown()") == want
    pg.click("#reset-filters")
    wait_for(pg, f"document.getElementById('shown-count').dataset.n === '{len(rows)}'")


def _table_ranks(pg) -> list[int]:
    return [int(r) for r in pg.eval_on_selector_all("#trows .trow", "rs => rs.map(r => r.children[0].textContent)")]


def test_sort_by_a_column_both_ways(page, demo_result):
    pg, _ = page
    rows = links_rows(demo_result)
    by_margin = sorted(rows, key=lambda r: (r["fade_margin_db"] is None, r["fade_margin_db"] or 0, r["rank"]))
    pg.click('#thead span[data-key="fade_margin_db"]')
    assert pg.get_attribute('#thead span[data-key="fade_margin_db"]', "aria-sort") == "ascending"
    ranks = _table_ranks(pg)
    assert ranks[:10] == [r["rank"] for r in by_margin[:10]]
    pg.click('#thead span[data-key="fade_margin_db"]')
    assert pg.get_attribute('#thead span[data-key="fade_margin_db"]', "aria-sort") == "descending"
    down = sorted(rows, key=lambda r: (r["fade_margin_db"] is None, -(r["fade_margin_db"] or 0), r["rank"]))
    assert _table_ranks(pg)[:10] == [r["rank"] for r in down[:10]]
    pg.click('#thead span[data-key="site_a"]')
    names = pg.eval_on_selector_all("#trows .trow", "rs => rs.map(r => r.children[1].textContent)")
    assert names[:10] == sorted((r["site_a"] for r in rows), key=str.lower)[:10]


def test_csv_download_holds_the_shown_rows(page, demo_result):
    pg, _ = page
    rows = links_rows(demo_result)
    pg.fill("#site-filter", "tallis")
    want = [r for r in rows if "tallis" in r["site_a"].lower() or "tallis" in r["site_b"].lower()]
    wait_for(pg, f"document.getElementById('shown-count').dataset.n === '{len(want)}'")
    with pg.expect_download() as info:
        pg.click("#save-csv")
    download = info.value
    assert download.suggested_filename == "review-selection.csv"
    text = open(download.path(), encoding="utf-8").read()
    got = list(csv.DictReader(io.StringIO(text)))
    assert [int(g["rank"]) for g in got] == [r["rank"] for r in want]
    for g, r in zip(got, want):
        assert (g["site_a"], g["site_b"], g["verdict"]) == (r["site_a"], r["site_b"], r["verdict"])
        assert float(g["fade_margin_db"]) == pytest.approx(r["fade_margin_db"], abs=0.051)
        assert float(g["distance_km"]) == pytest.approx(r["distance_km"], abs=0.00051)


def test_screenshot_has_a_sane_size(page, tmp_path, request):
    pg, _ = page
    pg.click("#trows .trow >> nth=0")
    wait_for(pg, "document.getElementById('profile') && document.getElementById('profile').dataset.drawn")
    shot = tmp_path / "review.png"
    pg.screenshot(path=str(shot))
    data = shot.read_bytes()
    assert data[:8] == b"\x89PNG\r\n\x1a\n"
    width, height = int.from_bytes(data[16:20], "big"), int.from_bytes(data[20:24], "big")
    assert (width, height) == (1400, 850)
    assert 30_000 < len(data) < 5_000_000  # a drawn page, not a blank one nor a runaway
    print(f"screenshot: {shot}")


def test_many_rows_stay_virtual(browser, demo_result, tmp_path):
    """5,000+ links: only the rows in sight are in the document, and the last rank is reachable by scrolling."""
    big = tmp_path / "big.gpkg"
    shutil.copyfile(demo_result, big)
    con = sqlite3.connect(big)
    cols = [r[1] for r in con.execute("PRAGMA table_info(links)") if r[1] not in ("fid", "rank")]
    names = ", ".join(f'"{c}"' for c in cols)
    with con:
        # The GeoPackage's spatial-index triggers need SpatiaLite functions; the page reads no index.
        for (trigger,) in con.execute("SELECT name FROM sqlite_master WHERE type = 'trigger'").fetchall():
            con.execute(f'DROP TRIGGER "{trigger}"')
        for k in range(1, 80):
            con.execute(f'INSERT INTO links ("rank", {names}) SELECT "rank" + {66 * k}, {names} FROM links '
                        f'WHERE "rank" <= 66')
    n = con.execute("SELECT count(*) FROM links").fetchone()[0]
    con.close()
    out = tmp_path / "big.html"
    build_review_page(big, out, dem=[DEMO_DEM], max_profiles=100)
    errors: list[str] = []
    pg = open_page(browser, out, errors)
    assert int(pg.get_attribute("#total-count", "data-n")) == n == 5280
    assert pg.evaluate("document.querySelectorAll('#trows .trow').length") < 80
    pg.evaluate("document.getElementById('tbody').scrollTop = 1e9")
    pg.wait_for_timeout(200)
    assert _table_ranks(pg)[-1] == n
    pg.click("#trows .trow >> nth=-1")  # beyond the stored profiles: figures and a note, no profile
    assert "best-ranked links" in pg.inner_text("#detail .note")
    pg.close()
    assert not errors, errors


def _tile_server():
    """A local XYZ tile server answering every path with one grey PNG; returns it and the paths asked for."""
    import threading
    from http.server import BaseHTTPRequestHandler, ThreadingHTTPServer

    import numpy as np

    from profiler.review.basemap import png_grey_alpha

    png = png_grey_alpha(np.full((256, 256), 200, np.uint8), np.full((256, 256), 255, np.uint8))
    asked: list[str] = []

    class Handler(BaseHTTPRequestHandler):
        def do_GET(self):  # noqa: N802 - the http.server name
            asked.append(self.path)
            self.send_response(200)
            self.send_header("Content-Type", "image/png")
            self.send_header("Content-Length", str(len(png)))
            self.end_headers()
            self.wfile.write(png)

        def log_message(self, *args):
            pass

    server = ThreadingHTTPServer(("127.0.0.1", 0), Handler)
    threading.Thread(target=server.serve_forever, daemon=True).start()
    return server, asked


def test_tiles_and_an_error_row(browser, demo_result, tmp_path):
    """--tiles: the browser asks the tile server for the tiles under the view (allowed by the page's CSP);
    a row that could not be profiled shows its problem instead of a profile."""
    gpkg = tmp_path / "with-error.gpkg"
    shutil.copyfile(demo_result, gpkg)
    con = sqlite3.connect(gpkg)
    with con:
        for (trigger,) in con.execute("SELECT name FROM sqlite_master WHERE type = 'trigger'").fetchall():
            con.execute(f'DROP TRIGGER "{trigger}"')
        con.execute("UPDATE links SET verdict = 'error', problem = 'test: the path crosses nodata at 1.2 km', "
                    "fade_margin_db = NULL WHERE rank = 3")
    con.close()
    server, asked = _tile_server()
    try:
        out = tmp_path / "tiles.html"
        port = server.server_address[1]
        build_review_page(gpkg, out, dem=[DEMO_DEM], tiles=f"http://127.0.0.1:{port}/{{z}}/{{x}}/{{y}}.png")
        errors: list[str] = []
        pg = open_page(browser, out, errors)
        pg.wait_for_timeout(500)  # the tiles load after the first picture
        view = pg.evaluate("terrahopReview.view()")
        z = max(0, min(19, round(view["z"])))
        assert asked, "no tile was asked for"
        zs = {int(p.split("/")[1]) for p in asked}
        assert z in zs
        rows = links_rows(gpkg)
        # The tile under site a of the first link was asked for (XYZ scheme, Web Mercator).
        from tests.review.browser import world

        x, y = world(rows[0]["lon_a"], rows[0]["lat_a"])
        assert f"/{z}/{int(x * 2 ** z)}/{int(y * 2 ** z)}.png" in asked
        assert f"127.0.0.1:{port}" in pg.inner_text("#attribution")
        pg.evaluate("terrahopReview.select(2)")  # rank 3
        wait_for(pg, "document.getElementById('detail').dataset.link === '2'")
        assert "Not profiled: test: the path crosses nodata at 1.2 km" in pg.inner_text("#detail .note")
        assert pg.inner_text('#detail tr[data-col="fade_margin_db"] td.v') == "\u2014"
        pg.close()
        assert not errors, errors
    finally:
        server.shutdown()
