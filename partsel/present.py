"""Values, labels and verdict words for people: the one formatter every door uses.

The command line, the text reports, the vetting and BOM messages and the terminal UI all format
through this module (plain Python, no terminal library), so that a THD is always a percentage,
a temperature is in °C and a temperature *difference* in K, and an SI prefix comes from one
table. JSON and CSV outputs do not come through here: they keep plain SI numbers with the unit
in the key or the schema.

Unit codes understood by :func:`quantity` (the catalogue's unit labels, plus three for people):

* SI unit labels: ``V``, ``A``, ``ohm``, ``F``, ``Hz``, ``s``, ``W``, ``V/s`` (shown in V/µs),
  ``V/rtHz`` (nV/√Hz), ``K/W``, ``V/V``, ``1`` (a plain number), ``currency unit``;
* ``%``: a ratio shown as a percentage (THD, gain error): ``0.0012`` is "0.12 %";
* ``degC``: a temperature, "50.8 °C";
* ``K``: a temperature difference (a margin between two temperatures), "1.6 K".
"""

from __future__ import annotations

import math
from typing import Any

#: SI prefixes, largest first (one table for every formatter of partsel).
PREFIXES: tuple[tuple[float, str], ...] = (
    (1e12, "T"),
    (1e9, "G"),
    (1e6, "M"),
    (1e3, "k"),
    (1.0, ""),
    (1e-3, "m"),
    (1e-6, "u"),
    (1e-9, "n"),
    (1e-12, "p"),
    (1e-15, "f"),
)

MISSING = "—"

#: Said (command line and terminal UI) before the first simulation on a machine compiles the
#: stepper (numba, once per machine: 9 to 12 s in tests/bench/bench_physics.py).
COMPILE_NOTICE = (
    "first simulation on this machine: compiling partsel's simulation engine "
    "(once per machine; this takes a while)"
)


def finite(value: Any) -> bool:
    """True for a finite real number (False for None, NaN, text)."""
    try:
        return math.isfinite(float(value))
    except (TypeError, ValueError):
        return False


def si(value: Any, unit: str, digits: int = 3, *, symbols: bool = False) -> str:
    """An SI float with an engineering prefix: ``si(4.7e-6, "F") == "4.7 uF"``.

    ``symbols`` (screens) writes micro as µ and ohm as Ω. Missing values give '—'.
    """
    if value is None:
        return MISSING
    try:
        v = float(value)
    except (TypeError, ValueError):
        return str(value)
    if math.isnan(v):
        return MISSING
    if symbols and unit == "ohm":
        unit = "Ω"
    if math.isinf(v):
        return ("∞" if v > 0 else "-∞") + (f" {unit}" if unit else "")
    if v == 0:
        return f"0 {unit}".strip()
    mag = abs(v)
    if not PREFIXES[-1][0] * 1e-3 <= mag < PREFIXES[0][0] * 1e3:  # beyond the prefixes
        return f"{v:.{digits}g} {unit}".strip()
    scale, prefix = PREFIXES[-1]
    for s, p in PREFIXES:
        # 0.9995: a value that rounds up to the next prefix at `digits` digits takes it
        if mag >= s * (1 - 0.5 * 10.0 ** (-digits)):
            scale, prefix = s, p
            break
    if symbols and prefix == "u":
        prefix = "µ"
    return f"{v / scale:.{digits}g} {prefix}{unit}".strip()


def percent(ratio: Any, digits: int = 2) -> str:
    """A ratio as a percentage: ``percent(0.00123) == "0.12 %"`` ('—' when missing)."""
    if not finite(ratio):
        return MISSING
    return f"{100.0 * float(ratio):.{digits}g} %"


def thd(ratio: Any, *, bound: bool = False) -> str:
    """A THD (a ratio, IEC THD_F) for people: always a percentage; an upper bound (biased
    stages) reads "below 0.2 %"."""
    text = percent(ratio, 2)
    return f"below {text}" if bound and finite(ratio) else text


def quantity(value: Any, unit: str, digits: int = 3, *, symbols: bool = False) -> str:
    """A value with its unit for people (see the module docstring for the unit codes)."""
    if value is None:
        return MISSING
    try:
        v = float(value)
    except (TypeError, ValueError):
        return str(value)
    if math.isnan(v):
        return MISSING
    if unit == "%":
        return percent(v, digits)
    if math.isinf(v) and unit in ("1", "", "V/V"):
        return "∞" if v > 0 else "-∞"
    if unit in ("1", ""):
        return f"{v:.{digits}g}"
    if unit == "degC":
        return f"{v:.1f} °C"
    if unit == "K":
        return f"{v:.{min(digits, 2)}g} K" if abs(v) < 10 else f"{v:.0f} K"
    if unit == "V/s":
        return f"{v * 1e-6:.{digits}g} " + ("V/µs" if symbols else "V/us")
    if unit == "currency unit":
        return f"{v:.2f}"
    if unit == "V/V":
        return f"{v:.{digits}g} V/V"
    if unit == "V/rtHz":
        return si(v, "V/√Hz" if symbols else "V/rtHz", digits, symbols=symbols)
    if unit == "K/W":
        return f"{v:.{digits}g} K/W"
    return si(v, unit, digits, symbols=symbols)


def difference_unit(unit: str) -> str:
    """The unit of a difference of two values in ``unit`` (°C values differ by K)."""
    return "K" if unit == "degC" else unit


def ratio(value: Any) -> str:
    """A margin ratio: ``×1.23`` ('×∞' for an unbounded pass, '' when missing)."""
    if value is None:
        return ""
    try:
        v = float(value)
    except (TypeError, ValueError):
        return ""
    if math.isnan(v):
        return ""
    if math.isinf(v):
        return "×∞"
    return f"×{v:.3g}"


def rail(name: str) -> str:
    """``negative`` -> ``V−``, ``positive`` -> ``V+``."""
    return {"negative": "V−", "positive": "V+"}.get(name, name)


# ---- labels -----------------------------------------------------------------------------------

#: Output-stage topologies, for people.
TOPOLOGY_LABEL: dict[str, str] = {
    "class-a": "class A",
    "class-b-pulldown": "class B with pull-down",
    "class-ab": "class AB",
    "cmos-rail-to-rail": "CMOS rail-to-rail",
}
#: Short topology labels for narrow table columns.
TOPOLOGY_SHORT: dict[str, str] = {
    "class-a": "A",
    "class-b-pulldown": "B+pd",
    "class-ab": "AB",
    "cmos-rail-to-rail": "CMOS",
}

#: The checks of :mod:`partsel.solver.checks`, as engineers name them.
CHECK_LABEL: dict[str, str] = {
    "supply_min": "supply range, min",
    "supply_max": "supply range, max",
    "temp_min": "rated ambient, min",
    "temp_max": "rated ambient, max",
    "input_cm_low": "input range, bottom",
    "input_cm_high": "input range, top",
    "swing_high": "swing to V+",
    "swing_low": "swing to V−",
    "source_current": "source current",
    "sink_current": "sink current",
    "slew": "slew rate",
    "bandwidth": "closed-loop bandwidth",
    "gain_error": "gain error",
    "stability": "stability (noise gain)",
    "cap_load": "capacitive load",
    "junction_temp": "junction temperature",
    "conduction": "conduction mode",
    "fix_resistor": "fix resistor",
    "thd": "THD estimate",
    "glitch": "crossover glitch",
    "supply_current": "supply current",
    "price": "price",
    "offset": "offset voltage",
    "noise": "noise density",
    "bias_current": "input bias current",
    "yield": "yield (Monte Carlo)",
    "lifecycle": "lifecycle",
    "package": "package",
    "channels": "channels",
}

#: Catalogue parameters and part fields, as engineers read them (compare and vetting rows).
PARAM_LABEL: dict[str, str] = {
    "supply_current": "supply current per channel",
    "cm_headroom_neg": "input range: headroom to V−",
    "cm_headroom_pos": "input range: headroom to V+",
    "offset_voltage": "offset voltage",
    "bias_current": "input bias current",
    "noise_density": "noise density",
    "gbw": "gain-bandwidth",
    "slew_rise": "slew rate, rising",
    "slew_fall": "slew rate, falling",
    "cap_load_limit": "capacitive-load limit",
    "dead_band": "dead band",
    "stage_current": "stage current (pull-down / bias)",
    "source_limit": "source current limit",
    "sink_limit": "sink current limit",
    "swing_pos": "headroom to V+",
    "swing_neg": "headroom to V−",
    "junction_max_c": "junction temperature, max",
    "theta_ja_k_per_w": "θJA",
    "min_stable_gain": "minimum stable gain",
    "supply_min_v": "supply range, min",
    "supply_max_v": "supply range, max",
    "temp_min_c": "rated ambient, min",
    "temp_max_c": "rated ambient, max",
    "maker": "maker",
    "lifecycle": "lifecycle",
    "topology": "output stage",
    "channels": "channels",
    "packages": "packages",
    "price": "price",
}

#: A part's verdict in a design (:data:`partsel.solver.solve.VERDICTS`), for people.
VERDICT_TEXT: dict[str, str] = {
    "feasible": "feasible",
    "feasible-with-fix": "feasible with the fix resistor fitted",
    "rejected": "rejected",
}

#: The conduction verdict of the output stage, for people.
CONDUCTION_TEXT: dict[str, str] = {
    "changes-mode": "changes conduction mode",
    "marginal": "marginal: barely in one mode (THD from the device law)",
    "biased": "biased stage: both output devices stay on (a bound is quoted, not a figure)",
    "one-mode": "stays in one conduction mode",
}
#: The same, short (table cells).
CONDUCTION_SHORT: dict[str, str] = {
    "changes-mode": "hands over",
    "marginal": "marginal",
    "biased": "biased (AB)",
    "one-mode": "one mode",
}

#: Substitute verdicts (:data:`partsel.solver.substitute.VERDICTS`), for people.
SUBSTITUTE_TEXT: dict[str, str] = {
    "drop-in": "drop-in",
    "fits-this-circuit": "fits this circuit",
    "review": "review",
    "unsuitable": "unsuitable",
}


def check_label(name: str) -> str:
    """A check's name for people (:data:`CHECK_LABEL`; the identifier if unknown)."""
    return CHECK_LABEL.get(name, name.replace("_", " "))


def param_label(key: str) -> str:
    """A catalogue parameter's name for people (:data:`PARAM_LABEL`)."""
    return PARAM_LABEL.get(key, key.replace("_", " "))


# ---- the fix -----------------------------------------------------------------------------------


def fix_rule(fix: Any, i: int) -> str:
    """Why the recommended rail was chosen for part ``i`` of a
    :class:`partsel.solver.solve.FixInfo` (the rule of :func:`partsel.physics.fix.size_fix`:
    the pull-down to V− unless only the pull-up works, or both work and the pull-up draws less
    extra supply current), in words with the figures behind it."""
    rail_i = str(fix.rail[i])
    neg, pos = fix.negative, fix.positive
    n_ok, p_ok = bool(neg.ok[i]), bool(pos.ok[i])
    if rail_i not in ("negative", "positive"):
        return ""
    if n_ok and p_ok:
        dn, dp = float(neg.extra_supply_a[i]), float(pos.extra_supply_a[i])
        if rail_i == "positive":
            return (
                f"pull-up: {si(dn - dp, 'A')} less supply current than the "
                f"{si(float(neg.r_ohm[i]), 'ohm')} pull-down"
            )
        return (
            f"pull-down: {si(dp - dn, 'A')} less supply current than the "
            f"{si(float(pos.r_ohm[i]), 'ohm')} pull-up"
            if dp > dn
            else "pull-down: preferred when both rails work and draw the same current"
        )
    other = pos if rail_i == "negative" else neg
    why = str(other.reason[i]) or "it does not work here"
    side = "pull-up" if rail_i == "negative" else "pull-down"
    mine = "pull-down" if rail_i == "negative" else "pull-up"
    return f"{mine}: the only rail that works (a {side}: {why})"


def fix_phrase(fix: Any, *, symbols: bool = False) -> str:
    """A fix in one phrase, from its JSON form (``fix`` of a part's evaluation): "2.7 kohm
    (E24) to V−", "not needed", or why no resistor works."""
    if not fix["needed"]:
        return "not needed"
    if not fix["works"]:
        return "no resistor works: " + (str(fix.get("reason") or "") or "none found")
    r = si(float(fix["resistance_ohm"]), "ohm", symbols=symbols)
    return f"{r} ({fix['series']}) to {rail(str(fix['rail']))}"


def fix_summary(fix: Any, i: int, *, symbols: bool = False) -> str:
    """:func:`fix_phrase` of part ``i`` of a :class:`partsel.solver.solve.FixInfo`."""
    return fix_phrase(
        {
            "needed": bool(fix.needed[i]),
            "works": bool(fix.works[i]),
            "reason": str(fix.reason[i]),
            "resistance_ohm": float(fix.r_ohm[i]),
            "series": fix.series,
            "rail": str(fix.rail[i]),
        },
        symbols=symbols,
    )


#: Lifecycle states for people: a risk is flagged wherever a part appears.
LIFECYCLE_TEXT: dict[str, str] = {
    "active": "active",
    "not-for-new-designs": "⚠ not for new designs",
    "obsolete": "⚠ OBSOLETE",
}


def lifecycle(state: str) -> str:
    """A lifecycle state for people, flagged when it is a risk (obsolete, not for new
    designs)."""
    return LIFECYCLE_TEXT.get(str(state), str(state) or "unknown")
