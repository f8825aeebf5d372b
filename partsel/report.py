"""Readable text reports of predictions (one writer, used by the command line and the UI)."""

from __future__ import annotations

import math
from typing import Any

from partsel.units import format_si


def _q(value: float | None, unit: str, digits: int = 3) -> str:
    if value is None or (isinstance(value, float) and not math.isfinite(value)):
        return "—"
    return format_si(value, unit, digits)


def _pct(value: float | None, digits: int = 3) -> str:
    if value is None:
        return "—"
    return f"{100 * value:.{digits}g} %"


def _ok(flag: bool) -> str:
    return "ok" if flag else "FAIL"


def prediction_text(d: dict[str, Any]) -> str:
    """Format one prediction (``PartPrediction.to_dict()``) for people."""
    c, ch, fx, sim, simf = (
        d["crossover"],
        d["checks"],
        d["fix"],
        d.get("simulation"),
        d.get("simulation_fixed"),
    )
    lines = [
        f'{d["part_number"]} ({d["maker"]}, {d["topology"]}) in "{d["design"]}" — '
        f"basis: {d['basis']}"
    ]
    verdict = {
        "changes-mode": "CHANGES CONDUCTION MODE",
        "marginal": "MARGINAL: stays in source mode with little current",
        "biased-crossover": "biased crossover (class-AB stage shares the current)",
        "one-mode": "stays in one conduction mode",
    }[c["verdict"]]
    lines.append(f"  Conduction  {verdict}")
    lines.append(
        f"              output current {_q(c['i_out_min_a'], 'A')} … {_q(c['i_out_max_a'], 'A')},"
        f" stage current {_q(c['stage_current_a'], 'A')},"
        f" least source-device current {_q(c['min_source_a'], 'A')}"
    )
    if c["handover"]:
        lines.append(
            f"              handover at {_q(c['handover_out_v'], 'V')} on the falling edge "
            f"(phase {c['handover_phase_deg']:.0f}°); flat step at {_q(c['flat_level_v'], 'V')}"
        )
        if d["topology"] == "class-a":
            lines.append(
                f"  Clipping    the output cannot sink more than the bias current: it flattens "
                f"{_q(c['glitch_v'], 'V')} above the ideal trough, THD ≈ "
                f"{_pct(c['thd_estimate'], 2)} (estimate)"
            )
        else:
            lines.append(
                f"  Glitch      dead-band crossing {_q(c['handover_time_s'], 's')} at slope "
                f"{_q(c['slope_v_per_s'], 'V/s')}: glitch ≈ {_q(c['glitch_v'], 'V')} "
                f"(closed form), THD ≈ {_pct(c['thd_estimate'], 2)} (estimate)"
            )
    elif d["topology"] in ("class-a", "class-b-pulldown") and c["thd_estimate"] > 0:
        lines.append(
            f"  Distortion  one conduction mode: THD ≈ {_pct(c['thd_estimate'], 2)} (estimate "
            "from the follower's device law and the loop gain"
            + ("; low for a marginal stage" if c["verdict"] == "marginal" else "")
            + ")"
        )
    if c["biased_crossover"]:
        lines.append(
            f"  Residual    biased stage: crossover THD_F at most about "
            f"{_pct(c['thd_estimate'], 2)} (a bound from the loop gain, not a prediction)"
        )
    if sim:
        lines.append(
            f"  Simulation  THD_F {_pct(sim['thd_f'])}, peak residual "
            f"{_q(sim['residual_peak_v'], 'V')}, "
            + (
                "output current changes sign"
                if c["biased_crossover"]
                else f"handover {'yes' if sim['handover'] else 'no'}"
            )
            + (
                f" at {_q(sim['handover_level_v'], 'V')}"
                if sim["handover"] and not c["biased_crossover"]
                else ""
            )
            + f" ({sim['steps_per_period']} steps/period)"
        )
    lines.append(
        f"  Swing       headroom margin {_q(ch['swing_pos_margin_v'], 'V')} to V+, "
        f"{_q(ch['swing_neg_margin_v'], 'V')} to V- (at the current flowing)"
    )
    lines.append(
        f"  Input CM    margin {_q(ch['cm_low_margin_v'], 'V')} above the low limit, "
        f"{_q(ch['cm_high_margin_v'], 'V')} below the high limit"
    )
    lines.append(
        f"  Slew        needs {_q(ch['slew_required_v_per_s'], 'V/s')}, has "
        f"{ch['slew_margin_ratio']:.3g}× that; full-power bandwidth "
        f"{_q(ch['full_power_bw_hz'], 'Hz')}"
        if ch["slew_margin_ratio"] is not None
        else "  Slew        —"
    )
    ge = ch["gain_error"]
    lines.append(
        f"  Bandwidth   closed loop {_q(ch['closed_loop_bw_hz'], 'Hz')}, gain error "
        f"{_pct(ge, 2) if ge is not None else '—'} at the signal frequency"
    )
    extra = []
    if not ch["cap_load_ok"]:
        extra.append(f"load capacitance {ch['cap_load_ratio']:.3g}× the stated limit")
    if not ch["stable_at_gain"]:
        extra.append("not stable at this noise gain")
    if not ch["supply_in_range"]:
        extra.append("supply outside the part's range")
    if not ch["source_limit_ok"]:
        extra.append("source current limit exceeded")
    if not ch["sink_limit_ok"]:
        extra.append("sink current limit exceeded")
    lines.append("  Flags       " + ("; ".join(extra) if extra else "none"))
    lines.append(
        f"  Power       supply {_q(ch['supply_current_a'], 'A')}, dissipation "
        f"{_q(ch['dissipation_w'], 'W')}, T_j {ch['t_junction_c']:.1f} °C"
        if ch["t_junction_c"] is not None
        else f"  Power       supply {_q(ch['supply_current_a'], 'A')}, dissipation "
        f"{_q(ch['dissipation_w'], 'W')}"
    )
    rec = fx["recommended"]
    if rec == "not-needed":
        lines.append("  Fix         not needed")
    elif rec == "none":
        reasons = "; ".join(r for r in (fx["negative"]["reason"], fx["positive"]["reason"]) if r)
        lines.append(f"  Fix         no resistor works: {reasons}")
    else:
        r = fx[rec]
        lines.append(
            f"  Fix         {_q(r['r_ohm'], 'ohm')} ({fx['series']}, ±{100 * fx['tolerance']:g} %)"
            f" from the output to the {rec} rail (largest that works "
            f"{_q(r['r_max_ohm'], 'ohm')}); costs {_q(r['extra_supply_a'], 'A')} supply, "
            f"{_q(r['extra_dissipation_amp_w'], 'W')} in the amplifier; device peak "
            f"{_q(r['device_peak_a'], 'A')} ({_ok(r['limit_ok'])}), swing {_ok(r['swing_ok'])}"
        )
        if simf:
            lines.append(
                f"              with the fix: THD_F {_pct(simf['thd_f'])}, handover "
                f"{'yes' if simf['handover'] else 'no'}"
            )
    used = d["values_used"]
    lines.append("  Values      " + ", ".join(f"{k}={v}" for k, v in sorted(used.items())))
    return "\n".join(lines)
