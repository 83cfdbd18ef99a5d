"""``terrahop heights``: the lowest antenna heights that meet the clearance criterion."""

from __future__ import annotations

import json

import click

from .options import analyse_resolved, date_option, friendly_errors, link_input_options, opened_link_data

__all__ = ["heights", "run_heights", "format_heights"]


def run_heights(resolved, *, solve: str, max_mast_a_m: float | None, max_mast_b_m: float | None,
                step_m: float, confidence: float | None = None) -> dict:
    """Solve the heights of a resolved link; the result, then the link re-analysed at the chosen heights.

    With ``confidence`` the heights meet the criterion with at least that probability (profiler.confidence).
    """
    # The engine is imported when the command runs, so that `terrahop --help` starts fast.
    from ..heights import DEFAULT_MAX_MAST_M, solve_heights
    from ..mounts import Mount
    from ..vertical import apply_datum_name

    max_a = max_mast_a_m if max_mast_a_m is not None else (resolved.max_mast_a_m if resolved.max_mast_a_m is not None else DEFAULT_MAX_MAST_M)
    max_b = max_mast_b_m if max_mast_b_m is not None else (resolved.max_mast_b_m if resolved.max_mast_b_m is not None else DEFAULT_MAX_MAST_M)
    with opened_link_data(resolved) as (model, surroundings):
        batch = analyse_resolved(resolved, model, surroundings)
        if confidence is not None:
            from ..heights import solve_heights_with_confidence

            solution = solve_heights_with_confidence(batch, confidence, resolved.confidence, solve=solve,
                                                     max_mast_a_m=max_a, max_mast_b_m=max_b, step_m=step_m)
        else:
            solution = solve_heights(batch, solve=solve, max_mast_a_m=max_a, max_mast_b_m=max_b, step_m=step_m)
        vertical_crs = getattr(resolved.mount_a, "vertical_crs", None)
        given = batch.record(0)
        if "error" not in given:
            apply_datum_name(given, vertical_crs)
        out = {"name": resolved.title, **solution.record(),
               "vertical_datum": given.get("inputs", {}).get("vertical_datum", ""),
               "given": given}
        if solution.chosen is not None:
            again = analyse_resolved(
                resolved, model, surroundings,
                mount_a=Mount(solution.reference_a, solution.chosen.antenna_a_m),
                mount_b=Mount(solution.reference_b, solution.chosen.antenna_b_m),
            )
            out["link"] = again.record(0)
            if "error" not in out["link"]:
                apply_datum_name(out["link"], vertical_crs)
    return out


def _ref(tag: str, r: dict) -> str:
    s = r["sites"][tag]
    where = "its roof" if s["reference"] == "roof" else "ground"
    return f"site {tag} above {where} ({s['reference_m']:.1f} m), mast up to {s['max_mast_m']:g} m"


def _given(record: dict, tag: str) -> str:
    s = record["sites"][tag]
    return f"{s.get('antenna_given_m', s['antenna_agl_m']):g} m {s.get('antenna_reference', 'ground')} (antenna at {s['antenna_amsl_m']:.1f} m)"


def format_heights(r: dict) -> str:
    """Text table of feasible height pairs and the chosen one."""
    datum = r.get("vertical_datum") or "that of the elevation raster"
    given = r["given"]
    lines = [
        f"== {r['name']}: lowest antenna heights ==",
        f"heights          metres; {_ref('a', r)}; {_ref('b', r)}",
        f"vertical datum   {datum}",
        f"criterion        {r['criterion']}; step {r['step_m']:g} m; solving "
        + {"a": "site a (site b fixed)", "b": "site b (site a fixed)", "both": "both ends, least sum"}[r["solve"]],
        f"as given         a {_given(given, 'a')}, b {_given(given, 'b')}: "
        f"{'MEETS' if given['meets_criterion'] else 'FAILS'} "
        f"({given['clearance']['worst_f1_fraction']:+.2f} F1 design, "
        f"{given['worst_case']['clearance']['worst_f1_fraction']:+.2f} F1 worst case)",
        "",
    ]
    if not r["feasible"]:
        lim = r["at_limits"]
        sure = r.get("confidence")
        lines.append(
            "NO height pair within the mast limits meets the criterion"
            + (f" with probability {100 * sure:g} %" if sure is not None else "")
            + f": at a {lim['antenna_a_m']:g} m, "
            f"b {lim['antenna_b_m']:g} m the clearance is {lim['f1_fraction']:+.2f} F1 design, "
            f"{lim['f1_fraction_worst']:+.2f} F1 worst case"
            + (f", P(meets) {100 * lim['p_meets']:.1f} %" if sure is not None else "")
        )
        return "\n".join(lines)
    conf = r.get("confidence")
    lines.append("   a (m)    b (m)  sum (m)  F1 design  F1 worst" + ("  P(meets)" if conf is not None else ""))
    chosen = r["chosen"]
    for p in r["pairs"]:
        mark = "  <- chosen" if (p["antenna_a_m"], p["antenna_b_m"]) == (chosen["antenna_a_m"], chosen["antenna_b_m"]) else ""
        lines.append(
            f"  {p['antenna_a_m']:6.1f}   {p['antenna_b_m']:6.1f}   {p['sum_m']:6.1f}     "
            f"{p['f1_fraction']:+6.2f}    {p['f1_fraction_worst']:+6.2f}"
            + (f"    {100 * p['p_meets']:5.1f} %" if conf is not None else "") + mark
        )
    lines.append("")
    for p in r["one_step_lower"]:
        if conf is not None:
            lines.append(
                f"one step lower   a {p['antenna_a_m']:g} m, b {p['antenna_b_m']:g} m: P(meets) "
                f"{100 * p['p_meets']:.1f} % {'>=' if p['p_meets'] >= conf else '<'} {100 * conf:g} %")
            continue
        lines.append(
            f"one step lower   a {p['antenna_a_m']:g} m, b {p['antenna_b_m']:g} m: "
            f"{'MEETS' if p['meets_criterion'] else 'FAILS'} ({p['f1_fraction']:+.2f} F1 design, "
            f"{p['f1_fraction_worst']:+.2f} F1 worst case)"
        )
    link = r.get("link")
    if link:
        lines.append(
            f"link check       terrahop link at a {chosen['antenna_a_m']:g} m, b {chosen['antenna_b_m']:g} m: "
            f"{'MEETS' if link['meets_criterion'] else 'FAILS'}; fade margin "
            f"{link['budget']['fade_margin_db']:+.1f} dB"
            + (f"; P(meets) {100 * link['confidence']['p_meets_criterion']:.1f} %" if "confidence" in link else "")
        )
    return "\n".join(lines)


@click.command()
@click.argument("link_file", required=False, type=click.Path(dir_okay=False))
@link_input_options
@date_option
@click.option("--solve", type=click.Choice(["a", "b", "both"]), default="both", show_default=True,
              help="Which antenna heights to find: a (b as given), b (a as given), or both (least sum).")
@click.option("--max-mast-a", "max_mast_a", type=float, default=None, metavar="M",
              help="Highest antenna at site a above its reference (ground or roof), m [default: link file "
                   "max_mast_m, else 30].")
@click.option("--max-mast-b", "max_mast_b", type=float, default=None, metavar="M",
              help="As --max-mast-a, for site b.")
@click.option("--step-m", type=float, default=1.0, show_default=True,
              help="Height step of the answer, m (heights are multiples of it).")
@click.option("--confidence", "confidence", default=None, metavar="P",
              help="Find the lowest heights that meet the criterion with at least this probability, above 0 "
                   "and at most 0.999 (Monte Carlo over the data's errors: --dem-error-m and the other "
                   "confidence options).")
@click.option("--json", "as_json", is_flag=True, help="Print the result as one JSON object.")
@friendly_errors
def heights(link_file: str | None, solve: str, max_mast_a: float | None, max_mast_b: float | None,
            step_m: float, as_json: bool, confidence: str | None = None, **opts) -> None:
    """Lowest antenna heights that meet the clearance criterion.

    Solves one end with the other as given, or both ends for the least sum,
    within the mast limits; prints the feasible height pairs, the chosen one,
    and the check that one step lower fails.  LINK_FILE as for `terrahop link`.
    """
    from .options import resolve_link

    resolved = resolve_link(link_file, opts)
    level = None
    if confidence is not None:
        import dataclasses

        from ..confidence import confidence_level, resolve_confidence

        level = confidence_level(confidence)
        if resolved.confidence is None:  # the default model
            resolved = dataclasses.replace(resolved, confidence=resolve_confidence({}, always=True))
    result = run_heights(resolved, solve=solve, max_mast_a_m=max_mast_a, max_mast_b_m=max_mast_b,
                         step_m=step_m, confidence=level)
    if as_json:
        click.echo(json.dumps(result, indent=2))
    else:
        click.echo(format_heights(result))
