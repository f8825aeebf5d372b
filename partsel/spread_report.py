"""Readable text of the spread analysis (one writer, used by ``partsel corners``, ``partsel
yield`` and the terminal UI's Spread tab): the worst corner of every check, the Monte Carlo yield
with its interval, percentiles and the parameters most correlated with failure. Values are
formatted by :mod:`partsel.present`."""

from __future__ import annotations

from collections.abc import Sequence
from typing import TYPE_CHECKING

from partsel import present as P

if TYPE_CHECKING:
    from partsel.solver.spread import CornerAnalysis, YieldAnalysis


def param_label(key: str) -> str:
    """A spread parameter for people: a catalogue parameter's label, else its design path."""
    if key == "fix_resistor":
        return "fix resistor"
    if key == "environment/ambient_max":
        return "ambient"
    if "/" in key:
        return key.replace("/", ".")
    if key in ("swing_pos", "swing_neg"):
        return "swing to " + ("V+" if key == "swing_pos" else "V-")
    return P.param_label(key)


def _value(x: float, unit: str) -> str:
    if unit == "1":
        return P.percent(x, 3)
    return P.quantity(x, unit)


def design_units() -> dict[str, str]:
    """SI unit of every design quantity, by ``"section/key"`` (the spread parameters of a
    design's tolerances)."""
    from partsel.design.schema import QUANTITY_FIELDS
    from partsel.units import SI_UNIT

    return {"/".join(k): SI_UNIT[q.dimension] for k, q in QUANTITY_FIELDS.items()}


def _keys(keys: Sequence[str], most: int = 8) -> str:
    more = f" and {len(keys) - most} more" if len(keys) > most else ""
    return ", ".join(param_label(k) for k in keys[:most]) + more


def temperature_lines(known: Sequence[str], unknown: Sequence[str], indent: str) -> list[str]:
    """Which specs of a part move with the ambient (interpolated) and which have an unknown
    spread over temperature."""
    out = []
    if known:
        out.append(f"{indent}interpolated over temperature: {_keys(known)}")
    if unknown:
        out.append(
            f"{indent}spread over temperature unknown (given at one temperature, not "
            f"modelled): {_keys(unknown)}"
        )
    return out


def corners_text(a: CornerAnalysis, design_name: str) -> str:
    """The corners of one part for people."""
    from partsel.solver import checks as C

    lines = [
        f'Worst corners of {a.part_number} in "{design_name}" — {len(a.params)} parameter(s) '
        f"with a range, {a.evaluations:,} evaluations"
    ]
    units = design_units()
    for prm in a.params:
        unit = prm.unit or units.get(prm.key, "")
        lo = P.quantity(prm.low, unit) if unit else f"{prm.low:.4g}"
        hi = P.quantity(prm.high, unit) if unit else f"{prm.high:.4g}"
        moves = "; at its own temperature, moves with the ambient" if prm.over_temperature else ""
        lines.append(f"  {param_label(prm.key):<34} {lo} .. {hi}  ({prm.origin}{moves})")
    lines += temperature_lines(a.over_temperature, a.temperature_unknown, "  ")
    lines.append("")
    for c in a.corners:
        unit = C.CHECKS[C.IDX[c.check]].unit
        mark = {"fail": "FAIL", "unknown": "unknown", "warning": "warning"}.get(c.status, "ok")
        lines.append(
            f"  {P.check_label(c.check):<28} {mark:<7} worst {_value(c.value, unit)} "
            f"against {_value(c.limit, unit)} (margin {_value(c.margin, unit)}; {c.method})"
        )
        if c.setters:
            lines.append(
                "      set by: "
                + ", ".join(
                    f"{param_label(k)} {'high' if t >= 0.5 else 'low'}" for k, t, _ in c.setters[:4]
                )
            )
        if c.non_monotonic:
            lines.append(
                "      not monotonic in: " + ", ".join(param_label(k) for k in c.non_monotonic)
            )
    if a.fixed_failures:
        lines.append(
            "  fails whatever the spread: " + ", ".join(P.check_label(k) for k in a.fixed_failures)
        )
    lines.append("")
    lines.append(
        "  verdict: every check passes at its worst corner"
        if a.passes
        else "  verdict: fails at some corner: "
        + ", ".join(P.check_label(c.check) for c in a.failing)
        + (" (and " + ", ".join(a.fixed_failures) + ")" if a.fixed_failures else "")
    )
    return "\n".join(lines)


def yield_text(y: YieldAnalysis, design_name: str, target: float | None) -> str:
    """The yields for people."""
    conf = f"{100 * y.confidence:g} %"
    method = "Wilson" if y.interval == "wilson" else "Clopper-Pearson"
    lines = [
        f'Monte Carlo yield in "{design_name}": {y.samples:,} boards per part, seed {y.seed}, '
        f"{conf} {method} interval"
        + (f"; target {P.percent(target, 4)}" if target is not None else "")
    ]
    if not y.parts:
        lines.append("  no part to analyse (the ranking finds none feasible; name parts to see)")
    for p in y.parts:
        iv = p.interval
        lines.append("")
        lines.append(
            f"  {p.part_number:<12} yield {P.percent(p.value, 4)} "
            f"({P.percent(iv.low, 4)} .. {P.percent(iv.high, 4)}), {p.passed:,} of {p.samples:,}"
        )
        if p.one_mode is not None:
            lines.append(
                f"      one conduction mode: {P.percent(p.one_mode, 3)} of boards; handover on "
                f"{P.percent(p.handover, 3)}"
            )
        if p.check_pass:
            lines.append(
                "      meeting each limit: "
                + ", ".join(
                    f"{P.check_label(k)} {P.percent(v, 3)}"
                    for k, v in sorted(p.check_pass.items(), key=lambda kv: kv[1])
                )
            )
        lines.append(f"      every board meets {p.checks_always_met} other check(s)")
        if p.thd_percentiles:
            kind = "bound" if p.thd_bound else "estimate"
            lines.append(
                f"      THD {kind}: "
                + ", ".join(f"p{k:g} {P.percent(v, 3)}" for k, v in p.thd_percentiles.items())
            )
        if p.handover_level_percentiles:
            lines.append(
                "      handover level: "
                + ", ".join(
                    f"p{k:g} {P.quantity(v, 'V')}" for k, v in p.handover_level_percentiles.items()
                )
            )
        if p.correlated:
            lines.append(
                "      most correlated with failure: "
                + ", ".join(f"{param_label(k)} ({r:+.2f})" for k, r in p.correlated)
            )
        if p.fix is not None:
            f = p.fix
            text = (
                f"      fix {P.quantity(f.r_ohm, 'ohm')} to the {P.rail(f.rail)} rail "
                f"(±{100 * f.tolerance:g} %): yield {P.percent(f.yield_fraction, 4)}"
            )
            if f.target is not None:
                text += f"; largest {f.series} value reaching {P.percent(f.target, 4)}: " + (
                    f"{P.quantity(f.largest_ohm, 'ohm')} ({P.percent(f.largest_yield, 4)})"
                    if f.largest_ohm is not None
                    else "none of those tried"
                )
            lines.append(text)
        if p.over_temperature:
            lines.append(
                "      judged at ambients "
                + ", ".join(P.quantity(t, "degC") for t in p.ambients_c)
                + " (passes only if at all)"
            )
        lines += temperature_lines(p.over_temperature, p.temperature_unknown, "      ")
        if p.fixed_params:
            lines.append(
                "      no spread known (fixed at the value given): "
                + ", ".join(param_label(k) for k in p.fixed_params[:8])
                + (f" and {len(p.fixed_params) - 8} more" if len(p.fixed_params) > 8 else "")
            )
    return "\n".join(lines)
