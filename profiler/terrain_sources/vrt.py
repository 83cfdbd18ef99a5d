"""A GDAL VRT joining the tiles of an area, open-sea tiles as 0 m, in WGS84 plus the dataset's geoid."""

from __future__ import annotations

import os
from pathlib import Path
from xml.sax.saxutils import escape

from .datasets import Dataset
from .fetch import FetchedTile

__all__ = ["write_vrt", "sea_tile"]

#: Cells of the constant 0 m raster standing in for an open-sea tile (scaled to the tile in the VRT).
_SEA_CELLS = 4


def _grid(d: Dataset, lat0: int, lon0: int) -> tuple[float, float, float, float, int, int]:
    """(left, top, cell_x, cell_y, width, height) of a tile as the dataset lays it out, degrees.

    HGT cells are centred on whole degrees (the tile overhangs by half a cell); GeoTIFF tiles
    are taken as filling the degree exactly.
    """
    width, height = d.expected_size(lat0)
    if d.kind == "hgt":
        cell = 1 / (height - 1)
        return lon0 - cell / 2, lat0 + 1 + cell / 2, cell, cell, width, height
    return float(lon0), float(lat0 + 1), 1 / width, 1 / height, width, height


def sea_tile(folder: Path, d: Dataset, lat0: int, lon0: int) -> Path:
    """A small GeoTIFF of 0 m over an open-sea tile (made once, kept in the cache)."""
    import numpy as np
    import rasterio
    from rasterio.transform import from_bounds

    path = folder / "no-tile" / f"{d.tile_key(lat0, lon0)}-0m.tif"
    if path.exists():
        return path
    left, top, cell_x, cell_y, width, height = _grid(d, lat0, lon0)
    right, bottom = left + width * cell_x, top - height * cell_y
    tmp = path.with_name(f".{os.getpid()}-{path.name}")
    with rasterio.open(tmp, "w", driver="GTiff", width=_SEA_CELLS, height=_SEA_CELLS, count=1, dtype="int16",
                       crs="EPSG:4326", transform=from_bounds(left, bottom, right, top, _SEA_CELLS, _SEA_CELLS)) as dst:
        dst.write(np.zeros((1, _SEA_CELLS, _SEA_CELLS), dtype="int16"))
    os.replace(tmp, path)
    return path


def write_vrt(path: Path, folder: Path, d: Dataset, tiles: list[tuple[int, int, FetchedTile]]) -> Path:
    """Write a VRT of ``tiles`` ((lat0, lon0, tile) each) to ``path``, atomically; return it.

    The VRT grid takes the finest cell of the tiles; a tile of coarser columns
    (Copernicus above 50 degrees) is resampled to it by GDAL (nearest cell).
    """
    import rasterio
    from rasterio.crs import CRS

    parts = []
    for lat0, lon0, tile in tiles:
        if tile.path is None:
            left, top, cell_x, cell_y, width, height = _grid(d, lat0, lon0)
            parts.append((str(sea_tile(folder, d, lat0, lon0)), left, top, cell_x, cell_y, width, height,
                          _SEA_CELLS, _SEA_CELLS, "Int16"))
        else:
            with rasterio.open(tile.path) as src:
                t = src.transform
                parts.append((tile.path, t.c, t.f, t.a, -t.e, src.width, src.height, src.width, src.height,
                              {"float32": "Float32", "int16": "Int16", "float64": "Float64"}.get(src.dtypes[0],
                                                                                                "Float32")))
    cell_x, cell_y = min(p[3] for p in parts), min(p[4] for p in parts)
    left = min(p[1] for p in parts)
    top = max(p[2] for p in parts)
    right = max(p[1] + p[3] * p[5] for p in parts)
    bottom = min(p[2] - p[4] * p[6] for p in parts)
    xsize, ysize = round((right - left) / cell_x), round((top - bottom) / cell_y)
    data_type = "Int16" if d.kind == "hgt" else "Float32"
    wkt = CRS.from_string(d.compound_crs()).to_wkt()
    lines = [f'<VRTDataset rasterXSize="{xsize}" rasterYSize="{ysize}">',
             f"  <SRS>{escape(wkt)}</SRS>",
             f"  <GeoTransform>{left!r}, {cell_x!r}, 0.0, {top!r}, 0.0, {-cell_y!r}</GeoTransform>",
             f'  <VRTRasterBand dataType="{data_type}" band="1">']
    if d.nodata is not None:
        lines.append(f"    <NoDataValue>{d.nodata:g}</NoDataValue>")
    lines.append("    <UnitType>m</UnitType>")
    for src_path, sl, st, scx, scy, w, h, sw, sh, dtype in parts:
        xoff, yoff = round((sl - left) / cell_x), round((top - st) / cell_y)
        dw, dh = round(w * scx / cell_x), round(h * scy / cell_y)
        lines += ["    <SimpleSource>",
                  f'      <SourceFilename relativeToVRT="0">{escape(os.path.abspath(src_path))}</SourceFilename>',
                  "      <SourceBand>1</SourceBand>",
                  f'      <SourceProperties RasterXSize="{sw}" RasterYSize="{sh}" DataType="{dtype}"/>',
                  f'      <SrcRect xOff="0" yOff="0" xSize="{sw}" ySize="{sh}"/>',
                  f'      <DstRect xOff="{xoff}" yOff="{yoff}" xSize="{dw}" ySize="{dh}"/>',
                  "    </SimpleSource>"]
    lines += ["  </VRTRasterBand>", "</VRTDataset>", ""]
    path.parent.mkdir(parents=True, exist_ok=True)
    tmp = path.with_name(f".{os.getpid()}-{path.name}")
    tmp.write_text("\n".join(lines))
    os.replace(tmp, path)
    return path
