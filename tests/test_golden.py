"""Golden comparison: the demo links' JSON records, their sheet tables and a demo
screening stay exactly as recorded in tests/golden/ (regenerate deliberately with
``python -m tests.golden.make_golden`` when a change is meant to alter results)."""

from __future__ import annotations

import json

import pytest

from tests.golden import make_golden as golden


def test_demo_link_records_unchanged():
    expected = json.loads((golden.HERE / "links.json").read_text())
    assert json.loads(json.dumps(golden.link_records(), sort_keys=True)) == expected


def test_demo_sheet_tables_unchanged():
    expected = json.loads((golden.HERE / "sheet_rows.json").read_text())
    assert json.loads(json.dumps(golden.sheet_rows(), sort_keys=True)) == expected


@pytest.mark.slow
def test_demo_screening_unchanged(tmp_path):
    assert golden.screening_csv(tmp_path) == (golden.HERE / "screen.csv").read_text()
