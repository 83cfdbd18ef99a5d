"""Summary lines of the ``reflection`` block of a link record (profiler.reflection), for io/report.py."""

from __future__ import annotations

__all__ = ["reflection_lines"]


def _k(value) -> str:
    return "infinity" if value == "infinity" else f"{float(value):.3g}"


def reflection_lines(block: dict | None) -> list[str]:
    """A few lines: the point at the design k, its strength, the swing with k, the diversity spacing."""
    if not block:
        return []
    if not block.get("found"):
        return [f"reflection         none: {block.get('reason')}"]
    lines = []
    at = block.get("at_design_k")
    if at:
        surface = "water" if at["over_water"] else "flat ground"
        lines.append(
            f"reflection         from {surface} {at['point_km']:.3f} km from site a at the design k "
            f"(first Fresnel zone {at['first_fresnel_zone_km'][0]:.2f}-{at['first_fresnel_zone_km'][1]:.2f} km), "
            f"grazing {at['grazing_angle_deg']:.2f} deg, |coefficient| {at['reflection_coefficient_magnitude']:.2f}")
        lines.append(
            f"  two rays         path difference {at['path_difference_m'] * 1000:.1f} mm "
            f"({at['path_difference_wavelengths']:.2f} wavelengths), phase {at['phase_deg']:.0f} deg, "
            f"level {at['level_change_db']:+.1f} dB against the direct ray alone")
    else:
        lines.append(f"reflection         none at the design k; the curve follows the reflection at k={_k(block['curve_k'])}")
    k_min = block["inputs"]["k_min"]
    lines.append(
        f"  with k           level {block['deepest_null_db']:+.1f} .. {block['highest_level_db']:+.1f} dB for k "
        f"{k_min:g} .. infinity (swing {block['swing_db']:.1f} dB; deepest null at k={_k(block['deepest_null_k'])})")
    div = block["diversity"]
    if div.get("spacing_b_m") is not None:
        improvement = div.get("improvement_factor")
        lines.append(
            f"  space diversity  antennas {div['spacing_b_m']:.2f} m apart at site b ({div['spacing_a_m']:.2f} m "
            f"at site a) move the pattern half a period"
            + (f"; improvement factor {improvement:.1f} (ITU-R P.530-17 s. 6.2.1)" if improvement is not None else ""))
    return lines
