"""Every check of a ranked part in words, with the figures that matter: the one wording of each
check that the command line, the vetting and BOM reports and the terminal UI use.

A message quotes the part's value, the limit it is held to, and for a failure the shortfall
against the right reference (a bias point outside the input range is "short" by its distance to
that range, not by the distance of the input's peak). Values are formatted by
:mod:`partsel.present` (THD as a percentage, temperature differences in K).
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING

from partsel import present as P
from partsel.solver import checks as C

if TYPE_CHECKING:
    from partsel.solver.solve import Ranking


def _q(value: float, unit: str) -> str:
    return P.quantity(value, unit)


def bias_point_v(r: Ranking) -> float:
    """DC level at the non-inverting input, V (the bias point the input range must cover)."""
    d = r.design
    if d.closed_loop.configuration == "non-inverting":
        return d.signal.bias_v
    return d.reference_v


def input_range_v(r: Ranking, i: int) -> tuple[float, float]:
    """Part ``i``'s input common-mode range on the ranking's basis, V (low, high)."""
    st = r.table.stage(r.requirements.basis)
    sup = r.design.supply
    return (
        sup.v_neg_v + float(st.cm_headroom_neg_v[i]),
        sup.v_pos_v - float(st.cm_headroom_pos_v[i]),
    )


def check_message(r: Ranking, i: int, name: str) -> str:
    """Check ``name`` of part ``i`` in words (pass or fail), with value, limit and shortfall."""
    j = C.IDX[name]
    c = C.CHECKS[j]
    ch = r.checks
    st = int(ch.status[i, j])
    value, limit, margin = float(ch.value[i, j]), float(ch.limit[i, j]), float(ch.margin[i, j])
    unit = c.display_unit
    d = r.design
    label = P.check_label(name)
    if st == C.UNKNOWN:
        return f"{label}: the catalogue lacks the values this check needs"
    if st == C.NA:
        return f"{label}: does not apply here"
    short = P.quantity(-margin, P.difference_unit(unit)) if margin < 0 else ""
    if name in ("supply_min", "supply_max"):
        stage = r.table.stage(r.requirements.basis)
        lo, hi = float(stage.supply_min_v[i]), float(stage.supply_max_v[i])
        ok = "covers" if st == C.PASS else "does not cover"
        return (
            f"supply range {_q(lo, 'V')} .. {_q(hi, 'V')} {ok} the design's "
            f"{_q(d.supply.total_v, 'V')}"
        )
    if name in ("temp_min", "temp_max"):
        t = r.table
        lo, hi = float(t.number("temp_min_c")[i]), float(t.number("temp_max_c")[i])
        rated = f"rated ambient {_q(lo, 'degC')} .. {_q(hi, 'degC')}"
        if st == C.PASS:
            return (
                f"{rated} covers the design's {_q(d.t_ambient_min_c, 'degC')} .. "
                f"{_q(d.t_ambient_max_c, 'degC')}"
            )
        if name == "temp_min":
            return (
                f"{rated} does not reach down to the design's lowest ambient "
                f"{_q(d.t_ambient_min_c, 'degC')} (short by {short})"
            )
        return (
            f"{rated} does not reach up to the design's highest ambient "
            f"{_q(d.t_ambient_max_c, 'degC')} (short by {short})"
        )
    if name in ("input_cm_low", "input_cm_high"):
        lo, hi = input_range_v(r, i)
        rng = f"input range {_q(lo, 'V')} .. {_q(hi, 'V')}"
        if st == C.PASS:
            return f"{rng} covers the input swing (margin {_q(margin, 'V')})"
        bias = bias_point_v(r)
        if name == "input_cm_low" and bias < lo:
            return f"{rng} does not reach down to the bias point {_q(bias, 'V')} (short by " + (
                f"{_q(lo - bias, 'V')})"
            )
        if name == "input_cm_high" and bias > hi:
            return f"{rng} does not reach up to the bias point {_q(bias, 'V')} (short by " + (
                f"{_q(bias - hi, 'V')})"
            )
        sup = d.supply
        if name == "input_cm_low":
            level = sup.v_neg_v + value
            return (
                f"{rng} covers the bias point {_q(bias, 'V')} but not the input's trough "
                f"{_q(level, 'V')} (short by {short})"
            )
        level = sup.v_pos_v - value
        return (
            f"{rng} covers the bias point {_q(bias, 'V')} but not the input's peak "
            f"{_q(level, 'V')} (short by {short})"
        )
    if name == "swing_high":
        i_src = float(ch.limit[i, C.IDX["source_current"]])
        need = limit - (r.requirements.limit("min_swing_margin") or 0.0)
        peak = d.supply.v_pos_v - value
        text = (
            f"output peak {_q(peak, 'V')} leaves {_q(value, 'V')} to V+; the part needs "
            f"{_q(need, 'V')} there at {_q(i_src, 'A')} of source current"
        )
        return text + (f": short by {short}" if st == C.FAIL else f" (margin {_q(margin, 'V')})")
    if name == "swing_low":
        i_snk = float(ch.limit[i, C.IDX["sink_current"]])
        need = limit - (r.requirements.limit("min_swing_margin") or 0.0)
        trough = d.supply.v_neg_v + value
        text = (
            f"output trough {_q(trough, 'V')} leaves {_q(value, 'V')} to V−; the part needs "
            f"{_q(need, 'V')} there while sinking {_q(i_snk, 'A')}"
        )
        return text + (f": short by {short}" if st == C.FAIL else f" (margin {_q(margin, 'V')})")
    if name in ("source_current", "sink_current"):
        what = "source" if name == "source_current" else "sink"
        verb = "within" if st == C.PASS else "exceeds"
        return f"peak {what} current {_q(limit, 'A')} {verb} the part's limit {_q(value, 'A')}"
    if name == "slew":
        need = float(r.checks.limit[i, j])
        ratio = float(ch.ratio[i, j])
        return (
            f"slew rate {_q(value, 'V/s')} against {_q(need, 'V/s')} required "
            f"(2π·f·A times min_slew_ratio): {P.ratio(ratio)}"
        )
    if name == "bandwidth":
        return (
            f"closed-loop bandwidth {_q(value, 'Hz')} (GBW / noise gain) against "
            f"{_q(limit, 'Hz')} required"
        )
    if name == "stability":
        verb = "stable" if st == C.PASS else "not stable"
        return f"{verb} at the design's noise gain {value:g} (minimum stable gain {limit:g})"
    if name == "cap_load":
        stage = r.table.stage(r.requirements.basis)
        lim_f = float(stage.cap_load_limit_f[i])
        times = value / lim_f if lim_f > 0 else math.inf
        return (
            f"load capacitance {_q(value, 'F')} is {times:.3g}× the part's stated limit "
            f"{_q(lim_f, 'F')}"
        )
    if name == "junction_temp":
        verb = "within" if st == C.PASS else "exceeds"
        return (
            f"junction temperature {_q(value, 'degC')} at the highest ambient {verb} its "
            f"maximum {_q(limit, 'degC')}" + (f" (short by {short})" if short else "")
        )
    if name == "conduction":
        p = r.prediction
        fx = r.fix
        stage_i = float(p.stage_current_a[i])
        verdict = str(p.conduction[i])
        if verdict == "changes-mode":
            text = (
                f"changes conduction mode: the load sinks up to {_q(-float(p.i_out_min_a[i]), 'A')}"
                f" but the stage current is {_q(stage_i, 'A')}"
            )
        else:
            # the device held on: the source device, or the sink device where a pull-up (the
            # fix fitted, or the design's own) keeps a class-B stage in sink mode
            sink = fx.rail[i] == "positive" if fx.applied[i] else bool(p.held_sink[i])
            text = (
                f"least {'sink' if sink else 'source'}-device current {_q(value, 'A')} of a "
                f"stage current of {_q(stage_i, 'A')} (at least {_q(limit, 'A')} required)"
            )
        if fx.needed[i]:
            text += "; fix: " + P.fix_summary(fx, i)
        return text
    if name == "fix_resistor":
        fx = r.fix
        if not fx.needed[i]:
            return "no fix resistor needed"
        if not fx.works[i]:
            return "no fix resistor works: " + (str(fx.reason[i]) or "none found")
        verb = "at least" if st == C.PASS else "below"
        return f"fix resistor {_q(value, 'ohm')} is {verb} the smallest accepted {_q(limit, 'ohm')}"
    if name == "yield":
        y = r.yields
        if y is None or not y.evaluated[i]:
            return f"{label}: not evaluated (computed for the parts that pass every other check)"
        from partsel.solver.spread.stats import wilson

        ci = wilson(int(y.passed[i]), y.samples)
        text = (
            f"{label} {P.percent(value, 4)} of {y.samples:,} boards (95 % Wilson interval "
            f"{P.percent(ci.low, 4)} .. {P.percent(ci.high, 4)}; seed {y.seed})"
        )
        if st == C.IGNORED:
            return text + " (no limit set)"
        cmp = "≥" if st == C.PASS else "<"
        return text + f" {cmp} {P.percent(limit, 4)}"
    if name in ("lifecycle", "package", "channels"):
        t = r.table
        accepted = r.requirements.choice(c.requirement or "")
        acc = "any" if accepted is None else ", ".join(str(a) for a in accepted)
        have = {
            "lifecycle": str(t.lifecycle[i]),
            "package": str(t.text("packages")[i]).replace(";", ",") or "none",
            "channels": "?" if not math.isfinite(t.channels[i]) else f"{t.channels[i]:g}",
        }[name]
        verb = "accepted" if st in (C.PASS, C.IGNORED) else "not accepted"
        return f"{label} {have} {verb} (accepted: {acc})"
    # value against a limit in one unit
    if st == C.IGNORED:
        return f"{label} {_q(value, unit)} (no limit set)"
    cmp = ("≥" if st == C.PASS else "<") if c.sense == "min" else ("≤" if st == C.PASS else ">")
    text = f"{label} {_q(value, unit)} {cmp} {_q(limit, unit)}"
    return text + (f" (short by {short})" if st == C.FAIL else "")


def failing_messages(r: Ranking, i: int) -> list[tuple[str, str]]:
    """(check name, message) of every check part ``i`` fails, binding check first."""
    fail = r.checks.failing[i]
    names = [C.CHECKS[j].name for j in range(C.N_CHECKS) if fail[j]]
    b = int(r.binding[i])
    if b >= 0 and C.CHECKS[b].name in names:
        names.remove(C.CHECKS[b].name)
        names.insert(0, C.CHECKS[b].name)
    return [(n, check_message(r, i, n)) for n in names]
