"""Validate KML against the OGC KML 2.2 schema, offline.

The schema files come from the registry package pykml (``pykml/schemas``:
ogckml22.xsd, kml22gx.xsd, atom-author-link.xsd, xAL.xsd, imported by local
file name), checked with lxml; nothing is fetched.
"""

from __future__ import annotations

import functools
import zipfile
from pathlib import Path

KML_NS = "http://www.opengis.net/kml/2.2"
NS = {"k": KML_NS}


@functools.lru_cache(maxsize=1)
def kml_schema():
    """The OGC KML 2.2 schema (lxml.etree.XMLSchema) from pykml's copy."""
    import importlib.resources

    from lxml import etree

    folder = Path(str(importlib.resources.files("pykml") / "schemas"))
    parser = etree.XMLParser(no_network=True)
    return etree.XMLSchema(etree.parse(str(folder / "ogckml22.xsd"), parser))


def kml_bytes(path: Path) -> bytes:
    """The KML text of a .kml file, or of doc.kml in a .kmz."""
    path = Path(path)
    if path.suffix.lower() == ".kmz":
        with zipfile.ZipFile(path) as zf:
            assert zf.namelist()[0] == "doc.kml", zf.namelist()
            return zf.read("doc.kml")
    return path.read_bytes()


def parse_valid_kml(path: Path):
    """Parse a .kml/.kmz and assert it is valid KML 2.2; return the lxml root."""
    from lxml import etree

    root = etree.fromstring(kml_bytes(path), etree.XMLParser(no_network=True))
    schema = kml_schema()
    if not schema.validate(root):
        raise AssertionError(f"{path} is not valid KML 2.2: {schema.error_log}")
    return root
