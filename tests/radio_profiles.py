"""Radio profiles written for the tests: the example's layout with one thing changed at a time."""

from __future__ import annotations

from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
EXAMPLE = ROOT / "examples" / "radio-18ghz.toml"
DEMO_18 = ROOT / "examples" / "demo-6-availability-18ghz.toml"

#: A small valid profile: two bands (one with an EIRP limit), two channel widths.
SMALL = """
name = "test radio"
noise_figure_db = 6
threshold_error_ratio = 1e-6
tx_power_dbm = 20

[[band]]
low_ghz = 17.7
high_ghz = 19.7
max_eirp_dbm = 50

[[band]]
low_ghz = 21.2
high_ghz = 23.6

[[channel]]
width_mhz = 28
steps = [
  { label = "QPSK", capacity_mbps = 40, rx_threshold_dbm = -87 },
  { label = "16QAM", capacity_mbps = 80, rx_threshold_dbm = -81 },
  { label = "64QAM", capacity_mbps = 120, required_snr_db = 19, tx_power_dbm = 18 },
]

[[channel]]
width_mhz = 56
noise_bandwidth_mhz = 50
steps = [
  { label = "QPSK", capacity_mbps = 80, required_snr_db = 9 },
]
"""


def write(tmp_path: Path, text: str = SMALL, name: str = "radio.toml") -> Path:
    path = tmp_path / name
    path.write_text(text)
    return path
