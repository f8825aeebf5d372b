"""Readable text report of a prediction (one writer, used by the command line and the UI).

The report formats the documented JSON of a prediction (:meth:`partsel.api.Prediction.part`):
the ranking's verdict, conduction verdict, glitch and THD estimate, the one fix decision and
its rule, every check in words, and the simulation. Values are formatted by
:mod:`partsel.present`.
"""

from __future__ import annotations

import math
from typing import Any

from partsel import present as P

_VERDICT = {
    "feasible": "FEASIBLE",
    "feasible-with-fix": "FEASIBLE WITH THE FIX RESISTOR",
    "rejected": "REJECTED",
}


#: What a limited output's figures describe, by ``limited_by``.
LIMIT_NOTE: dict[str, str] = {
    "clipping": "the output clips: THD from clipping",
    "slew": "slew-limited: the figures describe the slew limit, not the crossover",
    "bandwidth": "bandwidth-limited: the figures describe the loop's limit, not the crossover",
}


def _q(value: float | None, unit: str) -> str:
    return P.quantity(value, unit)


def _checks_line(rows: list[dict[str, Any]], name: str) -> dict[str, Any]:
    return next(r for r in rows if r["check"] == name)


def prediction_text(d: dict[str, Any]) -> str:
    """Format one prediction (:meth:`partsel.api.Prediction.part`) for people."""
    c, fx, sim, simf = d["prediction"], d["fix"], d.get("simulation"), d.get("simulation_fixed")
    opts = d["options"]
    rows = d.get("checks") or []
    lines = [
        f'{d["part_number"]} ({d["maker"]}, {d["topology"]}) in "{d["design"]["name"]}" — '
        f"basis: {opts['basis']} ({opts['basis_source']})"
    ]
    verdict = _VERDICT[d["verdict"]]
    if d["verdict"] == "rejected" and d.get("binding"):
        b = d["binding"]
        verdict += f" — binding: {P.check_label(b['check'])}: {b['message']}"
    lines.append(f"  Verdict     {verdict}")
    failing = [r for r in rows if r["status"] in ("fail", "unknown")]
    for r in failing:
        if d.get("binding") and r["check"] == d["binding"]["check"]:
            continue
        lines.append(f"              also fails {P.check_label(r['check'])}: {r['message']}")
    lines.append(f"  Conduction  {P.CONDUCTION_TEXT[c['conduction']].upper()}")
    lines.append(
        f"              output current {_q(c['i_out_min_a'], 'A')} … {_q(c['i_out_max_a'], 'A')},"
        f" stage current {_q(c['stage_current_a'], 'A')} ({c['stage_current_side']}),"
        f" least source-device current {_q(c['min_source_current_a'], 'A')}"
    )
    limited = c.get("limited_by")
    limit_note = f" ({LIMIT_NOTE[limited]})" if limited else ""
    if c["handover"]:
        phase = c["handover_phase_deg"]
        lines.append(
            f"              handover at {_q(c['handover_level_v'], 'V')} on the falling edge"
            + (f" (phase {phase:.0f}°)" if phase is not None else "")
            + f"; flat step at {_q(c['flat_level_v'], 'V')}"
        )
        if d["topology"] == "class-a":
            lines.append(
                f"  Clipping    the output cannot sink more than the bias current: it flattens "
                f"{_q(c['glitch_v'], 'V')} above the ideal trough, THD ≈ "
                f"{P.thd(c['thd_estimate'])} (estimate){limit_note}"
            )
        else:
            lines.append(
                f"  Glitch      dead-band crossing {_q(c['handover_time_s'], 's')} at slope "
                f"{P.si(c['slope_v_per_s'], 'V/s')}: glitch ≈ {_q(c['glitch_v'], 'V')} "
                f"(closed form), THD ≈ {P.thd(c['thd_estimate'])} (estimate){limit_note}"
            )
    elif c["conduction"] == "marginal":
        lines.append(
            f"  Distortion  at the boundary: THD ≈ {P.thd(c['thd_estimate'])} (estimate from "
            f"the device law, simulated over one period){limit_note}"
        )
    elif c["conduction"] == "one-mode" and (c["thd_estimate"] or 0) > 0:
        lines.append(
            f"  Distortion  one conduction mode: THD ≈ {P.thd(c['thd_estimate'])} (estimate "
            "from the follower's device law, the input stage and the loop gain"
            + (f"; below {P.percent(c['thd_bound'])} bounded" if c.get("thd_bound") else "")
            + f"){limit_note}"
        )
    elif c["conduction"] == "biased":
        lines.append(
            f"  Distortion  biased stage: THD {P.thd(c['thd_estimate'], bound=True)} (an upper "
            "bound: the output pair's gm variation and the input stage's slew-induced "
            f"distortion, reduced by the loop; not a prediction){limit_note}"
        )
    depth = c.get("clip_depth_v") or 0.0
    if depth > 0 and d["topology"] != "class-a":
        lines.append(
            f"  Clipping    the output clips by {_q(depth, 'V')}: the THD figure includes the "
            "clipping"
        )
    if sim and not sim.get("converged", True):
        lines.append(f"  Simulation  not quoted: {sim['note']}")
    elif sim:
        if c["conduction"] == "biased":
            shown = "not quoted for a biased stage (see the bound above)"
        else:
            shown = P.percent(sim["thd_f"], 3)
        lines.append(
            f"  Simulation  THD_F {shown}, peak residual {_q(sim['residual_peak_v'], 'V')}, "
            + (
                "both devices biased"
                if c["conduction"] == "biased"
                else f"handover {'yes' if sim['handover'] else 'no'}"
            )
            + (
                f" at {_q(sim['handover_level_v'], 'V')}"
                if sim["handover"] and c["conduction"] != "biased"
                else ""
            )
            + f" ({sim['steps_per_period']} steps/period)"
        )
    if rows:
        sw_hi, sw_lo = _checks_line(rows, "swing_high"), _checks_line(rows, "swing_low")
        lines.append(
            f"  Swing       margin {_q(sw_hi['margin'], 'V')} to V+, {_q(sw_lo['margin'], 'V')}"
            " to V− (at the current flowing" + (", with the fix)" if fx["applied"] else ")")
        )
        lo, hi = _checks_line(rows, "input_cm_low"), _checks_line(rows, "input_cm_high")
        lines.append(
            f"  Input CM    margin {_q(lo['margin'], 'V')} above the low limit, "
            f"{_q(hi['margin'], 'V')} below the high limit"
        )
        sl = _checks_line(rows, "slew")
        lines.append(
            f"  Slew        needs {_q(sl['limit'], 'V/s')}, has {_q(sl['value'], 'V/s')} "
            f"({P.ratio(sl['ratio'])})"
        )
        bw, ge = _checks_line(rows, "bandwidth"), _checks_line(rows, "gain_error")
        lines.append(
            f"  Bandwidth   closed loop {_q(bw['value'], 'Hz')}, gain error "
            f"{P.percent(ge['value'], 2)} at the signal frequency"
        )
        sc, tj = _checks_line(rows, "supply_current"), _checks_line(rows, "junction_temp")
        lines.append(
            f"  Power       supply {_q(sc['value'], 'A')}"
            + (f", T_j {_q(tj['value'], 'degC')}" if tj["value"] is not None else "")
            + (" (with the fix)" if fx["applied"] else "")
        )
    lines.extend(fix_lines(fx, simf))
    used = d.get("values_used") or {}
    if used:
        lines.append("  Values      " + ", ".join(f"{k}={v}" for k, v in sorted(used.items())))
    return "\n".join(lines)


def fix_lines(fx: dict[str, Any], simf: dict[str, Any] | None = None) -> list[str]:
    """The fix of a part (its ``fix`` JSON) for people: value, rail, rule, costs."""
    if not fx["needed"]:
        return ["  Fix         not needed"]
    if not fx["works"]:
        return [f"  Fix         no resistor works: {fx['reason'] or 'none found'}"]
    rail = fx["rail"]
    r = fx[rail]
    out = [
        f"  Fix         {_q(fx['resistance_ohm'], 'ohm')} ({fx['series']}, "
        f"±{100 * fx['tolerance']:g} %) from the output to {P.rail(rail)} (largest that works "
        f"{_q(fx['max_resistance_ohm'], 'ohm')}); costs {_q(r['extra_supply_a'], 'A')} supply, "
        f"{_q(r['extra_dissipation_amp_w'], 'W')} in the amplifier; device peak "
        f"{_q(r['device_peak_a'], 'A')}",
        f"              rule: {fx['rule']}",
    ]
    thd = fx.get("thd_estimate_with_fix")
    if thd is not None and math.isfinite(thd):
        out.append(
            f"              with the fix: THD ≈ {P.thd(thd)} (estimate: the stage kept in one "
            "mode, as for a design with this resistor)"
        )
    if simf and not simf.get("converged", True):
        out.append(f"              with the fix, not simulated: {simf['note']}")
    elif simf:
        out.append(
            f"              with the fix, simulated: handover {'yes' if simf['handover'] else 'no'}"
        )
    if fx["applied"]:
        out.append("              the verdict is for the part with this resistor fitted")
    return out
