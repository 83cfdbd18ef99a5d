"""The review page at 100,000 links: build time, page size, first drawn map and pan frames in headless Chromium.

Makes a synthetic screening result (100,000 random pairs among 450 invented
sites over the demo terrain; figures invented but consistent: geodesic
distances, P.525 free-space loss at 5.8 GHz), builds the page with the
default profile budget, loads it from disk in headless Chromium and measures
with the browser's own clock (performance.now and requestAnimationFrame):

  * time to the first drawn map (from navigation start);
  * frame intervals while panning 4 px per frame for 180 frames (the page
    moves its drawn picture and redraws fully when the pan leaves it);
  * a full redraw of every link (a zoom step forces it), and picking the link
    under a point (the linear pass of a click);

against the targets (first map under 3 s, pan frames under 50 ms) and a
baseline page measured in the same run: an empty canvas filled once per frame.

Run:  python benchmarks/review_page.py [--links N] [--profiles N]
"""

from __future__ import annotations

import argparse
import math
import sqlite3
import statistics
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

REPO = Path(__file__).resolve().parents[1]
DEM = REPO / "data" / "demo" / "terrain.tif"
VERDICTS = ("viable", "marginal", "budget-short", "clearance-short", "obstructed", "error")

BASELINE = """<!DOCTYPE html><html><body style="margin:0"><canvas id="c" style="width:100vw;height:100vh"></canvas>
<script>
const c = document.getElementById("c"), x = c.getContext("2d");
c.width = innerWidth; c.height = innerHeight;
let k = 0;
function frame() { x.fillStyle = k++ % 2 ? "#eee" : "#ddd"; x.fillRect(0, 0, c.width, c.height); }
requestAnimationFrame(() => { frame(); window.__reviewFirstMap = performance.now(); document.body.dataset.ready = "1"; });
window.terrahopReview = { pan: () => requestAnimationFrame(frame) };
</script></body></html>"""


def synthetic_result(path: Path, n_links: int, n_sites: int = 450, seed: int = 7) -> None:
    """A GeoPackage with the tables the review page reads: gpkg_contents, links and sites."""
    import rasterio
    from pyproj import Geod, Transformer

    rng = np.random.default_rng(seed)
    with rasterio.open(DEM) as ds:
        b, crs = ds.bounds, ds.crs
    to_ll = Transformer.from_crs(crs, "EPSG:4326", always_xy=True)
    ex = rng.uniform(b.left + 500, b.right - 500, n_sites)
    ny = rng.uniform(b.bottom + 500, b.top - 500, n_sites)
    lon, lat = to_ll.transform(ex, ny)
    a = rng.integers(0, n_sites, n_links)
    bb = (a + rng.integers(1, n_sites, n_links)) % n_sites
    _, _, dist = Geod(ellps="WGS84").inv(lon[a], lat[a], lon[bb], lat[bb])
    fsl = 20 * np.log10(4 * np.pi * dist / (0.299792458 / 5.8))  # ITU-R P.525-4 eq. 4
    margin = rng.normal(12, 15, n_links)
    verdict = rng.choice(len(VERDICTS), n_links, p=[0.35, 0.15, 0.1, 0.15, 0.24, 0.01])
    rank = np.argsort(np.argsort(-margin, kind="stable"), kind="stable") + 1
    con = sqlite3.connect(path)
    with con:
        con.execute("CREATE TABLE gpkg_contents (table_name TEXT, data_type TEXT, identifier TEXT)")
        con.executemany("INSERT INTO gpkg_contents VALUES (?, 'features', ?)", [("links", "links"), ("sites", "sites")])
        con.execute("CREATE TABLE sites (fid INTEGER PRIMARY KEY, name TEXT, lat REAL, lon REAL)")
        con.executemany("INSERT INTO sites (name, lat, lon) VALUES (?, ?, ?)",
                        [(f"Site {i:03d}", float(lat[i]), float(lon[i])) for i in range(n_sites)])
        con.execute("CREATE TABLE links (fid INTEGER PRIMARY KEY, rank INTEGER, site_a TEXT, site_b TEXT, verdict TEXT, "
                    "fade_margin_db REAL, distance_km REAL, lat_a REAL, lon_a REAL, lat_b REAL, lon_b REAL, "
                    "antenna_a_amsl_m REAL, antenna_b_amsl_m REAL, worst_f1_fraction REAL, worst_clearance_m REAL, "
                    "worst_point_km REAL, free_space_db REAL, rx_level_dbm REAL, k REAL, k_worst REAL, spacing_m REAL)")
        rows = [(int(rank[i]), f"Site {a[i]:03d}", f"Site {bb[i]:03d}", VERDICTS[verdict[i]], float(margin[i]),
                 float(dist[i] / 1000), float(lat[a[i]]), float(lon[a[i]]), float(lat[bb[i]]), float(lon[bb[i]]),
                 200.0, 210.0, 0.4, 5.0, float(dist[i] / 2000), float(fsl[i]), float(-40 - fsl[i] / 3), 4 / 3, 2 / 3,
                 12.5) for i in range(n_links)]
        con.executemany("INSERT INTO links (rank, site_a, site_b, verdict, fade_margin_db, distance_km, lat_a, lon_a, "
                        "lat_b, lon_b, antenna_a_amsl_m, antenna_b_amsl_m, worst_f1_fraction, worst_clearance_m, "
                        "worst_point_km, free_space_db, rx_level_dbm, k, k_worst, spacing_m) "
                        "VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)", rows)
    con.close()


PAN_JS = """async (frames) => {
  const out = []; let last = performance.now();
  await new Promise((done) => {
    let n = 0;
    function step(t) { out.push(t - last); last = t; if (++n > frames) return done(); terrahopReview.pan(4, 3); requestAnimationFrame(step); }
    requestAnimationFrame(step);
  });
  return out.slice(1);
}"""


def measure(browser, url: str, full: bool) -> dict:
    page = browser.new_page(viewport={"width": 1400, "height": 850})
    errors: list[str] = []
    page.on("pageerror", lambda e: errors.append(str(e)))
    page.goto(url)
    while not page.evaluate("document.body.dataset.ready === '1'"):
        page.wait_for_timeout(10)
    first = page.evaluate("window.__reviewFirstMap")
    page.wait_for_timeout(300)
    frames = page.evaluate(PAN_JS, 180)
    out = {"first_ms": first, "frames": frames, "errors": errors}
    if full:
        page.wait_for_timeout(300)
        # A full redraw (a small zoom step): wall time until the new picture is complete, and its longest frame.
        redraw = page.evaluate("""async () => { const v = terrahopReview.view(); const out = [];
            for (let k = 0; k < 4; k++) {
              const t0 = performance.now(); let longest = 0;
              terrahopReview.setView(v.cx, v.cy, v.z + (k % 2 ? 0 : 0.01));
              do { await new Promise(r => requestAnimationFrame(r)); longest = Math.max(longest, terrahopReview.lastDrawMs()); }
              while (terrahopReview.drawing());
              out.push([performance.now() - t0, longest]); }
            return out; }""")
        pick = page.evaluate("""() => { const v = terrahopReview.view(); const t0 = performance.now(); let hit = -1;
            for (let k = 0; k < 20; k++) hit = terrahopReview.pickAt(v.width / 2 + k, v.height / 2);
            return [(performance.now() - t0) / 20, hit]; }""")
        out.update(redraw=redraw, pick_ms=pick[0])
    page.close()
    return out


def describe(name: str, m: dict) -> None:
    f = sorted(m["frames"])
    p95 = f[int(0.95 * (len(f) - 1))]
    print(f"{name:<22} first map {m['first_ms']:7.0f} ms   pan frames: median {statistics.median(f):5.1f} ms, "
          f"p95 {p95:5.1f} ms, max {f[-1]:5.1f} ms ({len(f)} frames)")


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--links", type=int, default=100_000)
    ap.add_argument("--profiles", type=int, default=None, help="profiles stored [default: the page's default]")
    args = ap.parse_args()
    from playwright.sync_api import sync_playwright

    from profiler.review import DEFAULT_MAX_PROFILES, build_review_page

    with tempfile.TemporaryDirectory() as tmp:
        gpkg, page = Path(tmp) / "synthetic.gpkg", Path(tmp) / "review.html"
        t0 = time.perf_counter()
        synthetic_result(gpkg, args.links)
        t1 = time.perf_counter()
        s = build_review_page(gpkg, page, dem=[DEM], max_profiles=args.profiles or DEFAULT_MAX_PROFILES)
        t2 = time.perf_counter()
        base = Path(tmp) / "baseline.html"
        base.write_text(BASELINE)
        print(f"synthetic result: {args.links:,} links in {t1 - t0:.1f} s")
        print(f"page built in {t2 - t1:.1f} s: {s.size_bytes / 1e6:.1f} MB, {s.n_profiles:,} profiles "
              f"({s.size_bytes / 1e6 / args.links * 1000:.3f} MB per 1,000 links all told)")
        with sync_playwright() as pw:
            browser = pw.chromium.launch(executable_path="/usr/bin/chromium", args=["--no-sandbox"])
            baseline = measure(browser, base.as_uri(), full=False)
            review = measure(browser, page.as_uri(), full=True)
            browser.close()
        describe("baseline (empty canvas)", baseline)
        describe(f"review, {args.links:,} links", review)
        print("full redraw of every link (spread over frames): "
              + ", ".join(f"{t:.0f} ms (longest frame's drawing {m:.0f} ms)" for t, m in review["redraw"])
              + f"; pick under a point (linear pass): {review['pick_ms']:.2f} ms")
        print(
              "")
        f = review["frames"]
        print(f"targets: first map under 3000 ms: {'met' if review['first_ms'] < 3000 else 'NOT met'}; "
              f"pan frames under 50 ms: {'met' if max(f) < 50 else 'p95 ' + ('met' if sorted(f)[int(0.95 * (len(f) - 1))] < 50 else 'NOT met') + ', max not'}")
        if review["errors"] or baseline["errors"]:
            print("page errors:", review["errors"] + baseline["errors"])


if __name__ == "__main__":
    main()
