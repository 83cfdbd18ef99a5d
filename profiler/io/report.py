"""Plain-text summary of a link result (the JSON record of profiler.link)."""

from __future__ import annotations

from ..vertical import datum_of_record

__all__ = ["format_link_summary"]


def _verdict(ok: bool) -> str:
    return "MEETS" if ok else "FAILS"


def _at_k_lines(r: dict) -> list[str]:
    c, loss, b = r["clearance"], r["loss_db"], r["budget"]
    los = "yes" if c["line_of_sight"] else "NO (line of sight obstructed)"
    by_method = loss.get("diffraction_by_method") or {}
    compare = (
        ["  diffraction by     " + ", ".join(f"{m} {v:.1f}" for m, v in by_method.items()) + " dB"]
        if len(by_method) > 1 else []
    )
    return [
        f"  worst point        {c['worst_distance_km']:.3f} km from site a: clearance "
        f"{c['worst_clearance_m']:+.1f} m = {c['worst_f1_fraction']:+.2f} F1",
        f"  line of sight      {los}",
        f"  losses (dB)        free space {loss['free_space']:.1f} + diffraction "
        f"{loss['diffraction']:.1f} + gases {loss['gases']:.1f} = total {loss['total']:.1f}",
        *compare,
        f"  received level     {b['rx_level_dbm']:.1f} dBm   noise floor {b['noise_floor_dbm']:.1f} dBm",
        f"  SNR                {b['snr_db']:.1f} dB   fade margin {b['fade_margin_db']:+.1f} dB",
    ]


def _mount_lines(s: dict) -> list[str]:
    """How the antenna height was given, when not plainly above ground (rooftop sites)."""
    out = []
    b = s.get("building")
    if s.get("antenna_reference") == "roof" and b:
        out.append(f"                   on the roof of {b['feature']}: roof {s['roof_m']:.1f} m "
                   f"({b['height_m']:.1f} m above ground) + {s['antenna_above_roof_m']:g} m above the roof")
    elif b:
        out.append(f"                   stands in building {b['feature']} (roof {s['roof_m']:.1f} m)")
    if s.get("antenna_reference") == "elevation":
        out.append(f"                   antenna given as {s['antenna_given_m']:g} m above the datum")
    if s.get("antenna_reference") == "ellipsoid":
        out.append(f"                   antenna given {s['antenna_ellipsoidal_m']:g} m above the WGS84 ellipsoid; "
                   f"geoid undulation {s['geoid_undulation_m']:.2f} m ({s['geoid_vertical_crs']})")
    return out


def _clutter_lines(r: dict) -> list[str]:
    """Buildings and trees the path crosses, and the clutter at the worst point."""
    c = r.get("clutter")
    if not c:
        return []
    out = [f"clutter            {len(c['crossed'])} obstruction(s) crossed; at the worst point "
           f"{c['at_worst_point_m']:.1f} m ({c['at_worst_point_kind']})"]
    for x in c["crossed"][:12]:
        h = f"{x['height_m']:.1f} m high" if x["height_m"] is not None else f"top {x['top_m']:.1f} m"
        extra = f" + {x['allowance_m']:g} m allowance" if x["allowance_m"] else ""
        out.append(f"  {x['kind']:<8}  {x['from_km']:.3f}-{x['to_km']:.3f} km  {h}{extra}  {x['feature']}")
    if len(c["crossed"]) > 12:
        out.append(f"  ... and {len(c['crossed']) - 12} more (see --json)")
    return out

def _minutes(value: float) -> str:
    return f"{value:.1f} min" if value >= 0.1 else f"{value * 60:.1f} s"


def _pct(value: float) -> str:
    return f"{value:.3g} %"


def _availability_lines(av: dict | None) -> list[str]:
    """Availability block of the summary: rain (availability) and multipath (performance) apart (ITU-R P.530)."""
    if not av:
        return []
    if not av.get("estimated"):
        return [f"availability       not estimated: {av.get('reason')}"]
    rain, mp = av["rain"], av["multipath"]
    target = av["target_availability_pct"]
    verdict = "MEETS" if av["meets_target"] else "FAILS"
    if av.get("availability_pct") is not None:
        figure = f"{av['availability_pct']:.4f} %"
        rain_text = f"{_pct(rain['outage_pct'])} of the year ({_minutes(rain['outage_min_per_year'])}/yr)"
    elif av.get("availability_above_pct") is not None:
        figure = f"above {av['availability_above_pct']:g} %"
        rain_text = f"< {rain['outage_below_pct']:g} % of the year (below the range of ITU-R P.530-17 2.4.1)"
    else:
        figure = f"below {av['availability_below_pct']:g} %"
        rain_text = f"> {rain['outage_above_pct']:g} % of the year (above the range of ITU-R P.530-17 2.4.1)"
    if mp["estimated"]:
        mp_lines = [
            f"  multipath        worst month {_pct(mp['worst_month_pct'])} ({_minutes(mp['worst_month_min'])} in that month), "
            f"average year {_pct(mp['average_year_pct'])} ({_minutes(mp['average_year_min'])}/yr); "
            "counts against error performance, not availability",
        ]
    else:
        mp_lines = [f"  multipath        not estimated: {mp.get('reason')}"]
    need = av["required_fade_margin_db"]
    if need is None:
        need_text = "not reachable within the method's range"
    else:
        need_text = f"{need:.1f} dB (rain + multipath, average year)"
        if av.get("required_fade_margin_rain_below_range"):
            need_text += "; rain share there below 0.001 %, outside P.530-17, counted as 0.001 %"
    lines = [
        f"availability       {figure} of an average year (rain only) with fade margin "
        f"{av['fade_margin_db']:+.1f} dB: {verdict} target {target:g} %",
        f"  rain outage      {rain_text}",
        *mp_lines,
        f"  margin needed    {av['required_fade_margin_rain_only_db']:.1f} dB for {target:g} % (rain only); {need_text}",
    ]
    for n, a in enumerate(av.get("assumptions", [])):
        lines.append(f"  {'assumes' if n == 0 else '':<17}{a}")
    return lines


def _eirp_limit_lines(e: dict | None) -> list[str]:
    """The EIRP limit and whether either end exceeds it (--max-eirp-dbm or the radio profile's band)."""
    if not e:
        return []
    verdict = (f"EXCEEDED by {e['excess_db']:.1f} dB" if e["exceeds"] else "within")
    return [f"  EIRP limit       {e['max_eirp_dbm']:g} dBm ({e['source']}): {verdict}; site a "
            f"{e['eirp_a_dbm']:.1f} dBm, site b {e['eirp_b_dbm']:.1f} dBm"]


def _share_text(s: dict) -> str:
    """A step's share of the year at or above it: a figure, a bound, or why there is none."""
    if s["share_of_year_pct"] is not None:
        return f"{s['share_of_year_pct']:.4f} %"
    if s["share_of_year_above_pct"] is not None:
        return f"> {s['share_of_year_above_pct']:g} %"
    if s["share_of_year_below_pct"] is not None:
        return f"< {s['share_of_year_below_pct']:g} %"
    return "-"


def _modulation_lines(m: dict | None) -> list[str]:
    """The modulation table of a link with a radio profile: every step, the chosen one, capacities."""
    if not m:
        return []
    lines = [
        f"modulation         {m['radio']}, {m['channel_mhz']:g} MHz channel (noise bandwidth "
        f"{m['noise_bandwidth_mhz']:g} MHz, NF {m['noise_figure_db']:g} dB, noise floor {m['noise_floor_dbm']:.1f} dBm)",
        f"  {'step':<4} {'label':<14} {'Mbit/s':>7} {'thr dBm':>8} {'SNR dB':>7} {'tx dBm':>6} "
        f"{'margin':>7} {'worst k':>7}  {'share of year':>13}",
    ]
    for s in m["steps"]:
        mark = "*" if s["step"] == m["chosen_step"] else " "
        lines.append(
            f" {mark}{s['step']:<4} {s['label'][:14]:<14} {s['capacity_mbps']:>7.1f} {s['rx_threshold_dbm']:>8.1f} "
            f"{s['required_snr_db']:>7.1f} {s['tx_power_dbm']:>6.1f} {s['fade_margin_db']:>+7.1f} "
            f"{s['fade_margin_worst_db']:>+7.1f}  {_share_text(s):>13}")
    chosen = (f"step {m['chosen_step']} {m['chosen_label']}, {m['capacity_mbps']:g} Mbit/s"
              if m["chosen_step"] is not None else "none (no step has the margin)")
    lines.append(f"  chosen (*)       {chosen}: highest step with >= {m['min_margin_db']:g} dB margin at the design k")
    if m["shares_estimated"]:
        at = (f"{m['capacity_at_target_mbps']:g} Mbit/s (step {m['capacity_at_target_step']})"
              if m["capacity_at_target_mbps"] is not None else "none (no step meets it)")
        mean = (f"{m['mean_capacity_mbps']:.1f} Mbit/s" if m["mean_capacity_mbps"] is not None
                else f"{m['mean_capacity_min_mbps']:.1f}-{m['mean_capacity_max_mbps']:.1f} Mbit/s (shares are bounds)")
        lines += [f"  at target        {at} for {m['target_availability_pct']:g} % of the year (rain only)",
                  f"  mean capacity    {mean}, time-weighted over the year"]
    else:
        lines.append(f"  share of year    not estimated: {m['shares_reason']}")
    lines += [f"  Shannon ceiling  {m['shannon_capacity_mbps']:.1f} Mbit/s at SNR {m['shannon_snr_db']:.1f} dB "
              "(B log2(1 + SNR), Shannon 1948)",
              f"  budget above     describes step 1 ({m['budget_step']}): whether the link is up at all"]
    return lines


def _terrain_source_lines(r: dict) -> list[str]:
    """The open dataset the heights came from (--terrain), and a caution when it is a surface model."""
    ts = (r.get("provenance") or {}).get("terrain_source")
    if not ts:
        return []
    sea = sum(t.get("file") is None for t in ts.get("tiles", []))
    line = (f"terrain            {ts['source']} ({ts['title']}), {len(ts.get('tiles', []))} tile(s)"
            + (f", {sea} open sea read as 0 m" if sea else "") + f", heights above {ts['vertical_datum']}")
    out = [line]
    if ts.get("surface_model"):
        out.append("                   a surface model: roofs and tree canopy are in the heights where the "
                   "data has them, so ground and clearance may read high or low there")
    return out


def _antenna_lines(r: dict) -> list[str]:
    """The antenna files used and the gain each gives at the link frequency."""
    out = []
    for tag, a in sorted((r["inputs"].get("antennas") or {}).items()):
        beam = f", beamwidth {a['beamwidth_deg']:.2f} deg ({a['beamwidth_from']})" if a.get("beamwidth_deg") else ""
        out.append(f"antenna {tag}          {a['name']} ({a['file']}): {a['gain_dbi']:.1f} dBi from "
                   f"{a['gain_from']}{beam}")
    return out


#: Said under the installer figures in the summary (the full caution: README, Cautions).
INSTALL_CAUTION = ("tower and rooftop work and RF exposure near antennas: follow local codes, the regulator "
                   "and licensed professionals")


def _installation_lines(r: dict) -> list[str]:
    """Installer figures: tilt at both k, true and magnetic azimuth, the level to align to, heights."""
    inst = r.get("installation")
    if not inst:
        return []
    datum = datum_of_record(r).short()
    out = [f"installation       declination {inst['magnetic_model']} (epoch {inst['magnetic_model_epoch']:.1f}) "
           f"for {inst['date']}; level to align to: clear-air, design k, same power both ways"]
    for tag in ("a", "b"):
        e = inst[tag]
        unc = e.get("declination_uncertainty_deg")
        unc_text = f" +-{unc:.1f}" if unc is not None else ""
        out += [
            f"  site {tag}           tilt {e['tilt_deg']:+.2f} deg (k={inst['k']:.4g}), {e['tilt_worst_deg']:+.2f} deg "
            f"(k={inst['k_worst']:.4g}); align to {e['rx_level_dbm']:.1f} dBm",
            f"                   azimuth {e['azimuth_true_deg']:.2f} deg true, {e['azimuth_magnetic_deg']:.2f} deg "
            f"magnetic (declination {e['declination_deg']:+.2f}{unc_text} deg); antenna "
            f"{e['antenna_agl_m']:.1f} m above ground, {e['antenna_amsl_m']:.1f} m {datum}",
        ]
        if e.get("declination_note"):
            out.append(f"                   {e['declination_note']}")
    out.append(f"  caution          {INSTALL_CAUTION}")
    return out


def _confidence_lines(block: dict | None) -> list[str]:
    """The confidence summary line (profiler.confidence), when the record has the block."""
    if not block:
        return []
    from ..confidence import summary_lines

    figures, model = summary_lines(block)
    return [f"confidence         {figures}", f"  model            {model}"]


from .reflection_text import reflection_lines  # noqa: E402  (kept apart from the shared lines above)


def format_link_summary(r: dict) -> str:
    """Text a planner reads in a terminal; one block per link."""
    if "error" in r:
        return f"{r['name']}: cannot analyse: {r['error']}"
    a, b = r["sites"]["a"], r["sites"]["b"]
    radio = r["inputs"]["radio"]
    datum = datum_of_record(r)
    lines = [
        f"== {r['name']} ==",
        f"path               {r['distance_km']:.3f} km   azimuth a->b {r['azimuth_a_to_b_deg']:.2f} deg, "
        f"b->a {r['azimuth_b_to_a_deg']:.2f} deg (true)",
    ]
    for tag, s in (("a", a), ("b", b)):
        lines.append(
            f"site {tag}             {s['name']}  ({s['lat']:.6f}, {s['lon']:.6f})  ground "
            f"{s['ground_m']:.1f} m {datum.short()}; antenna {s['antenna_agl_m']:.1f} m above ground, "
            f"{s['antenna_amsl_m']:.1f} m {datum.short()}"
        )
        lines += _mount_lines(s)
    lines += [
        f"heights            metres {datum.phrase()}"
        + ("" if datum.known else "; name it with --vertical-crs"),
        *_terrain_source_lines(r),
        f"radio              {radio['freq_ghz']:g} GHz, {radio['tx_power_dbm']:g} dBm, gains "
        f"{radio['gain_a_dbi']:g}/{radio['gain_b_dbi']:g} dBi, line losses {radio['loss_a_db']:g}/"
        f"{radio['loss_b_db']:g} dB, {radio['bandwidth_mhz']:g} MHz, NF {radio['noise_figure_db']:g} dB, "
        f"needs SNR {radio['required_snr_db']:g} dB",
        *_antenna_lines(r),
        f"EIRP               {r['budget']['eirp_dbm']:.1f} dBm",
        *_eirp_limit_lines(r.get("eirp_limit")),
        f"design k = {r['k']:.4g} ({r['inputs'].get('diffraction_method', 'knife-edge')} diffraction)",
        *_at_k_lines(r),
        f"worst case k = {r['worst_case']['k']:.4g}",
        *_at_k_lines(r["worst_case"]),
        f"clearance criterion {_verdict(r['meets_criterion'])}: {r['criterion']}",
        *_confidence_lines(r.get("confidence")),
        *_availability_lines(r.get("availability")),
        *_modulation_lines(r.get("modulation")),
        *_installation_lines(r),
        *reflection_lines(r.get("reflection")),
    ]
    lines += _clutter_lines(r)
    for w in r.get("warnings", []):
        lines.append(f"warning: {w}")
    return "\n".join(lines)
