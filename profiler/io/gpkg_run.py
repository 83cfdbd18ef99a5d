"""The run description inside a GeoPackage: a ``run`` attribute table and GeoPackage metadata.

Source: OGC GeoPackage Encoding Standard 1.3 (OGC 12-128r17, document number
from memory):

- clause 2.4 "Attributes": a non-spatial table registered in ``gpkg_contents``
  with ``data_type`` ``'attributes'``, whose first column is
  ``INTEGER PRIMARY KEY AUTOINCREMENT``.  Ours is ``run (id, run_json TEXT)``
  with exactly one row;
- the Metadata extension of Annex F (extension name ``gpkg_metadata``,
  definition ``http://www.geopackage.org/spec/#extension_metadata``): tables
  ``gpkg_metadata`` (the document: ``md_scope``, ``md_standard_uri``,
  ``mime_type``, ``metadata``) and ``gpkg_metadata_reference`` (what it
  describes: ``reference_scope`` ``'geopackage'`` for the whole file, and
  ``'table'`` for each layer), both registered in ``gpkg_extensions``.

The JSON text is the same in both places and in the ``.run.json`` sidecars.
"""

from __future__ import annotations

import os
import sqlite3
from contextlib import closing

from .run_description import RUN_DESCRIPTION_VERSION, run_json

__all__ = ["write_run_tables", "read_run_json", "RUN_TABLE", "MD_STANDARD_URI"]

#: The attribute table holding the run description.
RUN_TABLE = "run"
#: ``md_standard_uri`` of our metadata: the layout of the run description (our own, versioned).
MD_STANDARD_URI = f"urn:terrahop:run-description:{RUN_DESCRIPTION_VERSION}"
_EXTENSION = ("gpkg_metadata", "http://www.geopackage.org/spec/#extension_metadata", "read-write")

# Table definitions as the standard gives them (GeoPackage 1.3, Annex F metadata extension).
_METADATA_SQL = """
CREATE TABLE IF NOT EXISTS gpkg_metadata (
  id INTEGER CONSTRAINT m_pk PRIMARY KEY ASC NOT NULL,
  md_scope TEXT NOT NULL DEFAULT 'dataset',
  md_standard_uri TEXT NOT NULL,
  mime_type TEXT NOT NULL DEFAULT 'text/xml',
  metadata TEXT NOT NULL DEFAULT ''
);
CREATE TABLE IF NOT EXISTS gpkg_metadata_reference (
  reference_scope TEXT NOT NULL,
  table_name TEXT,
  column_name TEXT,
  row_id_value INTEGER,
  timestamp DATETIME NOT NULL DEFAULT (strftime('%Y-%m-%dT%H:%M:%fZ','now')),
  md_file_id INTEGER NOT NULL,
  md_parent_id INTEGER,
  CONSTRAINT crmr_mfi_fk FOREIGN KEY (md_file_id) REFERENCES gpkg_metadata(id),
  CONSTRAINT crmr_mpi_fk FOREIGN KEY (md_parent_id) REFERENCES gpkg_metadata(id)
);
CREATE TABLE IF NOT EXISTS gpkg_extensions (
  table_name TEXT,
  column_name TEXT,
  extension_name TEXT NOT NULL,
  definition TEXT NOT NULL,
  scope TEXT NOT NULL,
  CONSTRAINT ge_tce UNIQUE (table_name, column_name, extension_name)
);
"""


def write_run_tables(path: str | os.PathLike, description: dict, layers: tuple[str, ...] = ()) -> None:
    """Add the ``run`` table and the metadata describing ``layers`` to the GeoPackage at ``path``."""
    text = run_json(description)
    with closing(sqlite3.connect(str(path))) as db, db:
        db.execute(f'DROP TABLE IF EXISTS "{RUN_TABLE}"')
        db.execute(f'CREATE TABLE "{RUN_TABLE}" (id INTEGER PRIMARY KEY AUTOINCREMENT NOT NULL, '
                   "run_json TEXT NOT NULL)")
        db.execute(f'INSERT INTO "{RUN_TABLE}" (run_json) VALUES (?)', (text,))
        db.execute("DELETE FROM gpkg_contents WHERE table_name = ?", (RUN_TABLE,))
        db.execute(
            "INSERT INTO gpkg_contents (table_name, data_type, identifier, description, last_change) "
            "VALUES (?, 'attributes', ?, ?, strftime('%Y-%m-%dT%H:%M:%fZ','now'))",
            (RUN_TABLE, RUN_TABLE, "how this file was made: software, command, radio, settings, input files "
                                   "with SHA-256 (one row, JSON)"),
        )
        db.executescript(_METADATA_SQL)
        for table in ("gpkg_metadata", "gpkg_metadata_reference"):
            db.execute("INSERT OR IGNORE INTO gpkg_extensions VALUES (?, NULL, ?, ?, ?)", (table, *_EXTENSION))
        cur = db.execute(
            "INSERT INTO gpkg_metadata (md_scope, md_standard_uri, mime_type, metadata) "
            "VALUES ('dataset', ?, 'application/json', ?)", (MD_STANDARD_URI, text))
        md_id = cur.lastrowid
        refs = [("geopackage", None)] + [("table", name) for name in layers]
        for scope, table_name in refs:
            db.execute("INSERT INTO gpkg_metadata_reference (reference_scope, table_name, md_file_id) "
                       "VALUES (?, ?, ?)", (scope, table_name, md_id))


def read_run_json(path: str | os.PathLike) -> str | None:
    """The ``run_json`` of a GeoPackage, or None when it has no ``run`` table."""
    with closing(sqlite3.connect(f"file:{os.fspath(path)}?mode=ro", uri=True)) as db:
        try:
            row = db.execute(f'SELECT run_json FROM "{RUN_TABLE}" LIMIT 1').fetchone()
        except sqlite3.OperationalError:
            return None
    return None if row is None else row[0]
