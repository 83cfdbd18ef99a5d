"""End-to-end: choosing the diffraction method on the real `terrahop link` command (demo data)."""

import json
import shutil

import pytest

from profiler.cli.options import DIFFRACTION_METHOD_NAMES
from profiler.losses.terrain_diffraction import DEFAULT_DIFFRACTION_METHOD, DIFFRACTION_METHODS
from tests.conftest import EXAMPLES, run_cli

BLOCKED = str(EXAMPLES / "demo-3-blocked.toml")


def test_cli_names_match_the_module():
    assert DIFFRACTION_METHOD_NAMES == DIFFRACTION_METHODS


def test_default_is_delta_bullington_with_every_method_listed(cli):
    r = json.loads(cli("link", BLOCKED, "--json").stdout)
    assert r["inputs"]["diffraction_method"] == DEFAULT_DIFFRACTION_METHOD == "delta-bullington"
    for part in (r, r["worst_case"]):
        by = part["loss_db"]["diffraction_by_method"]
        assert set(by) == set(DIFFRACTION_METHODS)
        assert part["loss_db"]["diffraction"] == by["delta-bullington"]
        assert by["delta-bullington"] >= by["bullington"] > 0
    assert r["inputs"]["polarisation"] == "horizontal" and r["inputs"]["ground"] == "land"
    assert r["warnings"] == []


@pytest.mark.parametrize("method", DIFFRACTION_METHODS)
def test_chosen_method_drives_the_total(cli, method):
    r = json.loads(cli("link", BLOCKED, "--diffraction", method, "--json").stdout)
    assert r["inputs"]["diffraction_method"] == method
    for part in (r, r["worst_case"]):
        loss = part["loss_db"]
        assert loss["diffraction"] == loss["diffraction_by_method"][method]
        assert loss["total"] == pytest.approx(loss["free_space"] + loss["diffraction"] + loss["gases"])


def test_link_file_key_and_flag_precedence(cli, tmp_path):
    text = open(BLOCKED, encoding="utf-8").read().replace(
        "[analysis]", '[analysis]\ndiffraction_method = "deygout"\npolarisation = "vertical"\nground = "sea"')
    shutil.copy(EXAMPLES.parent / "data" / "demo" / "terrain.tif", tmp_path / "terrain.tif")
    path = tmp_path / "link.toml"
    path.write_text(text.replace("../data/demo/terrain.tif", "terrain.tif"), encoding="utf-8")
    r = json.loads(cli("link", str(path), "--json").stdout)
    assert r["inputs"]["diffraction_method"] == "deygout"
    assert (r["inputs"]["polarisation"], r["inputs"]["ground"]) == ("vertical", "sea")
    assert r["inputs"]["ground_relative_permittivity"] == 80.0
    flag = json.loads(cli("link", str(path), "--diffraction", "bullington", "--json").stdout)
    assert flag["inputs"]["diffraction_method"] == "bullington"
    # One rounded ridge: Deygout keeps a single edge, Bullington adds its correction.
    assert flag["loss_db"]["diffraction"] > r["loss_db"]["diffraction"]


def test_unknown_method_is_one_line_listing_choices():
    proc = run_cli("link", BLOCKED, "--diffraction", "magic")
    assert proc.returncode != 0
    assert "Traceback" not in proc.stderr
    for name in DIFFRACTION_METHODS:
        assert name in proc.stderr


def test_unknown_method_in_link_file(tmp_path):
    text = open(BLOCKED, encoding="utf-8").read().replace("[analysis]", '[analysis]\ndiffraction_method = "magic"')
    path = tmp_path / "bad.toml"
    path.write_text(text.replace("../data/demo/terrain.tif", str(EXAMPLES.parent / "data" / "demo" / "terrain.tif")),
                    encoding="utf-8")
    proc = run_cli("link", str(path))
    assert proc.returncode == 1
    assert "Traceback" not in proc.stderr
    assert "unknown diffraction method 'magic'" in proc.stderr and "delta-bullington" in proc.stderr


def test_out_of_range_frequency_warns_in_json_and_summary(cli):
    r = json.loads(cli("link", BLOCKED, "--freq-ghz", "70", "--json").stdout)
    assert any("70 GHz" in w and "delta-bullington" in w for w in r["warnings"])
    text = cli("link", BLOCKED, "--freq-ghz", "70").output
    assert "warning: delta-bullington diffraction: frequency 70 GHz" in text
    assert "diffraction by" in text and "deygout" in text
    quiet = json.loads(cli("link", BLOCKED, "--freq-ghz", "70", "--diffraction", "knife-edge", "--json").stdout)
    assert quiet["warnings"] == []
