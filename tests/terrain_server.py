"""A local HTTP server for terrain-fetch tests and the benchmark: stdlib, threaded, 127.0.0.1.

It serves a folder of generated tiles in each dataset's layout, answers
``Range: bytes=N-`` with 206, counts its hits, and injects faults asked for
per path: ``"500"`` (one HTTP 500), ``"404"``, ``"cut"`` (sends half the body
then closes), ``"slow"`` (waits ``slow_s`` before answering), ``"junk"`` (a
body that is not a raster).  Faults are consumed in order, one per request.
"""

from __future__ import annotations

import gzip
import threading
import time
from http.server import BaseHTTPRequestHandler, ThreadingHTTPServer
from pathlib import Path

import numpy as np


def surface(lat0: int, lon0: int, rows: int, cols: int, *, centred: bool) -> np.ndarray:
    """A smooth invented surface over one tile, m (hills of a few hundred metres; same formula on every tile)."""
    if centred:  # HGT: cell centres on whole degrees
        lats = lat0 + 1 - np.arange(rows) / (rows - 1)
        lons = lon0 + np.arange(cols) / (cols - 1)
    else:  # GeoTIFF filling the degree: cell centres half a cell in
        lats = lat0 + 1 - (np.arange(rows) + 0.5) / rows
        lons = lon0 + (np.arange(cols) + 0.5) / cols
    la, lo = np.meshgrid(lats, lons, indexing="ij")
    return 300 + 200 * np.sin(la * 37.0) * np.cos(lo * 23.0) + 50 * np.sin(lo * 91.0)


def write_cog_tile(path: Path, lat0: int, lon0: int, rows: int) -> Path:
    """A Copernicus-like 1 x 1 degree float32 GeoTIFF of ``rows`` x ``rows`` cells (WGS84)."""
    import rasterio
    from rasterio.transform import from_bounds

    path.parent.mkdir(parents=True, exist_ok=True)
    z = surface(lat0, lon0, rows, rows, centred=False).astype("float32")
    with rasterio.open(path, "w", driver="GTiff", width=rows, height=rows, count=1, dtype="float32",
                       crs="EPSG:4326", transform=from_bounds(lon0, lat0, lon0 + 1, lat0 + 1, rows, rows),
                       tiled=True, blockxsize=256, blockysize=256, compress="deflate") as dst:
        dst.write(z[None])
    return path


def write_hgt_tile(path: Path, lat0: int, lon0: int) -> Path:
    """An SRTM-1 tile as the format has it: 3601 x 3601 big-endian int16, gzip-compressed."""
    path.parent.mkdir(parents=True, exist_ok=True)
    z = np.round(surface(lat0, lon0, 3601, 3601, centred=True)).astype(">i2")
    with gzip.open(path, "wb", compresslevel=1) as fh:
        fh.write(z.tobytes())
    return path


class TileServer:
    """The server: ``root`` served at ``url``; ``hits`` lists (path, Range header) of every request."""

    def __init__(self, root: Path, slow_s: float = 3.0) -> None:
        self.root = Path(root)
        self.slow_s = slow_s
        self.hits: list[tuple[str, str | None]] = []
        self.faults: dict[str, list[str]] = {}
        self._lock = threading.Lock()
        server = self

        class Handler(BaseHTTPRequestHandler):
            protocol_version = "HTTP/1.1"

            def log_message(self, *args) -> None:  # quiet
                pass

            def do_GET(self) -> None:
                try:
                    self._get()
                except (BrokenPipeError, ConnectionResetError):  # the client gave up (a time-out test)
                    pass

            def _get(self) -> None:
                path = self.path.split("?", 1)[0].lstrip("/")
                rng = self.headers.get("Range")
                with server._lock:
                    server.hits.append((path, rng))
                    queue = server.faults.get(path) or []
                    fault = queue.pop(0) if queue else None
                if fault == "slow":
                    time.sleep(server.slow_s)
                if fault == "500":
                    return self._send(500, b"busy")
                if fault == "404":
                    return self._send(404, b"no such tile")
                if fault == "junk":
                    return self._send(200, b"<html>not a raster</html>" * 40)
                file = server.root / path
                if not file.is_file():
                    return self._send(404, b"no such tile")
                body = file.read_bytes()
                start = 0
                if rng and rng.startswith("bytes=") and rng.endswith("-"):
                    start = int(rng[6:-1])
                    if start >= len(body):
                        return self._send(416, b"")
                part = body[start:]
                self.send_response(206 if start else 200)
                if start:
                    self.send_header("Content-Range", f"bytes {start}-{len(body) - 1}/{len(body)}")
                self.send_header("Content-Length", str(len(part)))
                self.send_header("Accept-Ranges", "bytes")
                self.end_headers()
                if fault == "cut":
                    self.wfile.write(part[: len(part) // 2])
                    self.wfile.flush()
                    self.close_connection = True
                    return
                self.wfile.write(part)

            def _send(self, code: int, body: bytes) -> None:
                self.send_response(code)
                self.send_header("Content-Length", str(len(body)))
                self.end_headers()
                self.wfile.write(body)

        self.httpd = ThreadingHTTPServer(("127.0.0.1", 0), Handler)
        self.httpd.daemon_threads = True
        self.port = self.httpd.server_address[1]
        self.url = f"http://127.0.0.1:{self.port}"
        self.thread = threading.Thread(target=self.httpd.serve_forever, daemon=True)

    def start(self) -> "TileServer":
        self.thread.start()
        return self

    def stop(self) -> None:
        self.httpd.shutdown()
        self.httpd.server_close()

    def hits_of(self, path: str) -> list[str | None]:
        """Range headers of the requests for ``path``."""
        return [r for p, r in self.hits if p == path]


#: Rows of the small Copernicus-like tiles the tests serve (TERRAHOP_TILE_ROWS).
TEST_ROWS = 300


def copernicus_tiles(root: Path, origins, name: str = "copernicus-30", rows: int = TEST_ROWS) -> list[Path]:
    """Write Copernicus-like tiles for ``origins`` ((lat0, lon0) each) under ``root`` in the dataset's layout."""
    from profiler.terrain_sources import dataset

    d = dataset(name)
    return [write_cog_tile(root / d.tile_path(la, lo), la, lo, rows) for la, lo in origins]


try:
    import pytest
except ImportError:  # the benchmark runs without pytest
    pytest = None  # type: ignore[assignment]

if pytest is not None:
    @pytest.fixture
    def tile_server(tmp_path, monkeypatch):
        """A TileServer on 127.0.0.1 over ``tmp_path/www``; cache in ``tmp_path/cache``, small tiles,
        short time-out (1 s) and back-off (0.05 s)."""
        monkeypatch.setenv("TERRAHOP_CACHE", str(tmp_path / "cache"))
        monkeypatch.setenv("TERRAHOP_TILE_ROWS", str(TEST_ROWS))
        monkeypatch.setenv("TERRAHOP_FETCH_TIMEOUT_S", "1")
        monkeypatch.setenv("TERRAHOP_FETCH_BACKOFF_S", "0.05")
        monkeypatch.delenv("TERRAHOP_TERRAIN_URL", raising=False)
        server = TileServer(tmp_path / "www", slow_s=2.0).start()
        try:
            yield server
        finally:
            server.stop()
