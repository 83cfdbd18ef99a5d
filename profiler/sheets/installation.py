"""The installer figures on a profile sheet: tilt at both k, true and magnetic azimuth, the level to align to.

Compact, to leave the page's columns alone: one line under each site's
heading above the profile (tilt at the design and worst k, azimuth true and
magnetic), and one sentence after the curvature note
naming the magnetic model, its epoch, the date, the level to align to and
how the figures are meant.  Nothing when the record has no ``installation`` block.  Work at
height and RF exposure: the sheet's caution.
"""

from __future__ import annotations

__all__ = ["HEADING_SHIFT_MM", "site_line", "installation_note"]

#: How far the site headings move up to make room for the installer line, mm on the reference page.
HEADING_SHIFT_MM = 1.6


def _k(value: float) -> str:
    from .table import format_k

    return format_k(value)


def site_line(record: dict, tag: str) -> str | None:
    """The installer line of site ``tag`` ("a" or "b"), or None without installer figures."""
    inst = record.get("installation")
    if not inst:
        return None
    e = inst[tag]
    return (f"tilt {e['tilt_deg']:+.2f}° (k {_k(inst['k'])}), {e['tilt_worst_deg']:+.2f}° (k {_k(inst['k_worst'])})"
            f" · azimuth {e['azimuth_true_deg']:.2f}° true, {e['azimuth_magnetic_deg']:.2f}° magnetic")


def installation_note(record: dict) -> str:
    """The sentence after the curvature note; empty without installer figures."""
    inst = record.get("installation")
    if not inst:
        return ""
    a, b = inst["a"], inst["b"]
    level = (f"align both ends to {a['rx_level_dbm']:.1f} dBm" if round(a["rx_level_dbm"], 1) == round(b["rx_level_dbm"], 1)
             else f"align a to {a['rx_level_dbm']:.1f} dBm, b to {b['rx_level_dbm']:.1f} dBm")
    return (f" Installation: tilt + up; declination {a['declination_deg']:+.2f}° a, {b['declination_deg']:+.2f}° b "
            f"(east +, {inst['magnetic_model']} epoch {inst['magnetic_model_epoch']:.1f}, {inst['date']}); "
            f"{level} (clear air, design k).")
