"""Reading design files: text (TOML / YAML / JSON) to a :class:`~partsel.physics.circuit.Design`
in three stages (schema, quantities, physical sense), every problem with its pointer."""

from __future__ import annotations

import copy
import difflib
import os
from collections.abc import Mapping
from functools import lru_cache
from pathlib import Path
from typing import Any

from jsonschema import Draft202012Validator

from partsel.design.schema import (
    _ABSOLUTE_ZERO_C,
    EXTENSIONS,
    FORMAT,
    QUANTITY_FIELDS,
    design_schema,
)
from partsel.errors import InputError, Problem, json_pointer
from partsel.io.textfile import read_structured
from partsel.physics.circuit import ClosedLoop, Design, Load, Signal, Supply
from partsel.present import si as format_si
from partsel.solver import requirements as req_mod
from partsel.units import (
    Toleranced,
    has_tolerance,
    parse_quantity,
    parse_toleranced,
    plausibility,
)


def _requirements_key_problems(
    data: Mapping[str, Any], file: str | None, record: str | None
) -> list[Problem]:
    """Unknown fields directly under ``[requirements]`` (the schema leaves that table open)."""
    raw = data.get("requirements")
    if not isinstance(raw, Mapping):
        return []
    allowed = list(req_mod.TOP_KEYS)
    out = []
    for key in raw:
        if key not in allowed:
            close = difflib.get_close_matches(str(key), allowed, n=1)
            hint = f"did you mean {close[0]!r}?" if close else "allowed here: " + ", ".join(allowed)
            out.append(
                Problem(
                    f"unknown field {key!r}; {hint}",
                    file,
                    record,
                    json_pointer("requirements", key),
                )
            )
    return out


def _read_requirements(
    data: Mapping[str, Any], file: str | None, record: str | None
) -> tuple[dict[str, Any] | None, list[Problem]]:
    """The ``[requirements]`` table with quantities in SI (the canonical mapping of
    :meth:`partsel.solver.requirements.Requirements.from_mapping`), and its unit problems.

    Only the fields given are kept (defaults are the solver's), so that writing the design
    back gives the same table.
    """
    raw = data.get("requirements")
    if raw is None:
        return None, []
    problems: list[Problem] = []
    out = copy.deepcopy(dict(raw))
    if "fix_tolerance" in raw and raw["fix_tolerance"] is not None:
        try:
            out["fix_tolerance"] = parse_quantity(
                raw["fix_tolerance"],
                "dimensionless",
                field=json_pointer("requirements", "fix_tolerance"),
                file=file,
                record=record,
            )
        except InputError as exc:
            problems.extend(exc.problems)
    limits = raw.get("limits")
    if isinstance(limits, Mapping):
        parsed: dict[str, Any] = {}
        for key, value in limits.items():
            d = req_mod.LIMIT_BY_KEY.get(key)
            if d is None:
                parsed[key] = copy.deepcopy(value)
                continue
            try:
                parsed[key] = parse_quantity(
                    value,
                    d.dimension,
                    field=json_pointer("requirements", "limits", key),
                    file=file,
                    record=record,
                )
            except InputError as exc:
                problems.extend(exc.problems)
        out["limits"] = parsed
    return out, problems


# ---- reading ------------------------------------------------------------------------------


def parse_structured(text: str, syntax: str, file: str, record: str | None) -> Any:
    """Parse design-file text in ``syntax`` through the one bounded reader
    (:func:`partsel.io.textfile.read_structured`: size, depth, aliases, duplicate keys)."""
    return read_structured(text, syntax=syntax, file=file, record=record)  # type: ignore[arg-type]


def load_design(path: str | os.PathLike[str]) -> Design:
    """Read a design file (TOML, YAML or JSON by extension) into a :class:`Design`.

    Raises
    ------
    InputError
        Unknown extension, unreadable or malformed file, or any problem of
        :func:`design_from_mapping`; each names the file, the record and the field.
    """
    p = Path(path)
    file, record = str(p), p.stem
    syntax = EXTENSIONS.get(p.suffix.lower())
    if syntax is None:
        raise InputError(
            f"unknown design file type {p.suffix or '(none)'!r}; use " + ", ".join(EXTENSIONS),
            file=file,
        )
    if p.is_dir():
        raise InputError("is a folder, not a design file", file=file)
    if not p.exists():
        raise InputError("no such design file", file=file)
    data = read_structured(p, syntax=syntax, file=file, record=record)  # type: ignore[arg-type]
    if data is None:
        raise InputError("design file is empty", file=file, record=record)
    return design_from_mapping(data, source=file)


@lru_cache(maxsize=1)
def _validator() -> Draft202012Validator:
    return Draft202012Validator(design_schema())


def _schema_problems(data: Any, file: str | None, record: str | None) -> list[Problem]:
    """JSON Schema problems of ``data``, one per offending field, in schema order."""
    validator = _validator()
    problems: list[Problem] = []
    for err in validator.iter_errors(data):
        path = list(err.absolute_path)
        kind = err.validator
        if kind == "additionalProperties" and isinstance(err.instance, Mapping):
            allowed = list(err.schema.get("properties", {}))
            for key in err.instance:
                if key in allowed:
                    continue
                close = difflib.get_close_matches(str(key), allowed, n=1)
                hint = (
                    f"did you mean {close[0]!r}?"
                    if close
                    else "allowed here: " + ", ".join(allowed)
                )
                problems.append(
                    Problem(
                        f"unknown field {key!r}; {hint}", file, record, json_pointer(*path, key)
                    )
                )
        elif kind == "required" and isinstance(err.instance, Mapping):
            for key in err.validator_value:
                if key not in err.instance:
                    problems.append(
                        Problem("required field is missing", file, record, json_pointer(*path, key))
                    )
        elif kind == "type" and err.validator_value == ["number", "string"]:
            unit = err.schema.get("x-unit", "")
            problems.append(
                Problem(
                    f"expected a number or a quantity string in {unit}, got "
                    f"{_json_type(err.instance)} {err.instance!r}",
                    file,
                    record,
                    json_pointer(*path),
                )
            )
        elif kind == "enum" and isinstance(err.instance, str) and has_tolerance(err.instance):
            allowed = ", ".join(repr(v) for v in err.validator_value)
            problems.append(
                Problem(
                    f"{err.instance!r} carries a tolerance, but this field is a keyword "
                    f"({allowed}): only quantities take a tolerance or a range",
                    file,
                    record,
                    json_pointer(*path),
                )
            )
        elif kind == "const":
            problems.append(
                Problem(
                    f"unsupported format {err.instance!r}; this version reads {FORMAT!r}",
                    file,
                    record,
                    json_pointer(*path),
                )
            )
        else:
            problems.append(Problem(err.message, file, record, json_pointer(*path)))
    return problems


def _json_type(value: Any) -> str:
    if isinstance(value, bool):
        return "a boolean"
    if isinstance(value, Mapping):
        return "a table"
    if isinstance(value, list):
        return "a list"
    return type(value).__name__


class _Reader:
    """Parses quantity fields of a schema-valid mapping, collecting problems."""

    def __init__(self, data: Mapping[str, Any], file: str | None, record: str | None) -> None:
        self.data = data
        self.file = file
        self.record = record
        self.problems: list[Problem] = []
        self.warnings: list[str] = []
        self.tolerances: dict[tuple[str, str], Toleranced] = {}

    def has(self, section: str, key: str) -> bool:
        return key in self.data.get(section, {})

    def get(self, section: str, key: str) -> float | None:
        """Value of a quantity field in SI (its default if absent; None if absent w/o default
        or unreadable)."""
        q = QUANTITY_FIELDS[(section, key)]
        raw = self.data.get(section, {}).get(key, q.default)
        if raw is None:
            return None
        try:
            tol = parse_toleranced(
                raw,
                q.dimension,
                field=json_pointer(section, key),
                file=self.file,
                record=self.record,
            )
        except InputError as exc:
            self.problems.extend(exc.problems)
            return None
        value = tol.nominal
        if tol.form != "exact":
            self.tolerances[(section, key)] = tol
        for v in (tol.low, tol.high) if tol.spread else (value,):
            warn = plausibility(
                v, q.dimension, field=json_pointer(section, key), file=self.file, record=self.record
            )
            if warn is not None:
                self.warnings.append(str(warn))
                break
        return value

    def ends(self, section: str, key: str, value: float | None) -> tuple[float, ...]:
        """The values a quantity field takes: its value, and the ends of its tolerance."""
        if value is None:
            return ()
        tol = self.tolerances.get((section, key))
        return (value,) if tol is None else (tol.low, value, tol.high)

    def lowest(self, section: str, key: str, value: float) -> float:
        """The lowest value a quantity field takes (its tolerance's low end)."""
        return min(self.ends(section, key, value))

    def highest(self, section: str, key: str, value: float) -> float:
        """The highest value a quantity field takes (its tolerance's high end)."""
        return max(self.ends(section, key, value))

    def problem(self, message: str, section: str, key: str) -> None:
        self.problems.append(Problem(message, self.file, self.record, json_pointer(section, key)))


def _v(value: float) -> str:
    return format_si(value, "V", digits=4)


def design_from_mapping(data: Mapping[str, Any], source: str | None = None) -> Design:
    """Build a :class:`Design` from a parsed design file (a mapping of sections).

    Parameters
    ----------
    data : the file's content, e.g. from ``tomllib.load``.
    source : file name, used in error messages and kept as ``Design.source``.

    Raises
    ------
    InputError
        Listing every schema, unit and physical-sense problem found (see the module docstring).
    """
    stem = Path(source).stem if source else None
    if not isinstance(data, Mapping):
        raise InputError(
            f"the top level must be a table of sections, got {_json_type(data)}",
            file=source,
            record=stem,
        )
    raw_name = data.get("name")
    name = raw_name if isinstance(raw_name, str) and raw_name.strip() else (stem or "design")
    record = name
    problems = _schema_problems(data, source, record)
    problems += _requirements_key_problems(data, source, record)
    if problems:
        raise InputError(problems=problems)

    r = _Reader(data, source, record)
    v_pos = r.get("supply", "positive")
    v_neg = r.get("supply", "negative")
    bias = r.get("signal", "bias")
    amplitude = r.get("signal", "amplitude")
    freq = r.get("signal", "frequency")
    gain = r.get("amplifier", "gain")
    ref = r.get("amplifier", "reference")
    r_f = r.get("amplifier", "feedback_resistor")
    r_load = r.get("load", "resistance")
    load_ref = r.get("load", "reference")
    c_couple = r.get("load", "coupling_capacitor")
    c_load = r.get("load", "capacitance")
    r_neg = r.get("load", "to_negative_rail")
    r_pos = r.get("load", "to_positive_rail")
    t_min = r.get("environment", "ambient_min")
    t_max = r.get("environment", "ambient_max")
    requirements, req_problems = _read_requirements(data, source, record)
    r.problems.extend(req_problems)
    if r.problems:
        raise InputError(problems=r.problems)

    amp_sec = data.get("amplifier", {})
    load_sec = data.get("load", {})
    configuration = amp_sec.get("configuration", "non-inverting")
    coupling = load_sec.get("coupling", "dc")
    assert v_pos is not None and v_neg is not None and bias is not None  # required / defaulted
    assert amplitude is not None and freq is not None and gain is not None
    assert load_ref is not None and c_load is not None and t_min is not None
    assert t_max is not None

    # ---- physical sense (at both ends of a tolerance) ------------------------------------
    def end_word(section: str, key: str, value: float, bad: float) -> str:
        if bad == value or (section, key) not in r.tolerances:
            return ""
        return (
            " at the low end of its tolerance"
            if bad < value
            else (" at the high end of its tolerance")
        )

    v_pos_lo = r.lowest("supply", "positive", v_pos)
    v_neg_hi = r.highest("supply", "negative", v_neg)
    if not v_pos_lo > v_neg_hi:
        spread = " (with their tolerances)" if (v_pos_lo, v_neg_hi) != (v_pos, v_neg) else ""
        r.problem(
            f"positive rail {_v(v_pos_lo)} must be above the negative rail {_v(v_neg_hi)}" + spread,
            "supply",
            "positive",
        )
    f_lo = r.lowest("signal", "frequency", freq)
    if not f_lo > 0:
        r.problem(
            f"frequency must be > 0, got {format_si(f_lo, 'Hz')}"
            + end_word("signal", "frequency", freq, f_lo),
            "signal",
            "frequency",
        )
    a_lo = r.lowest("signal", "amplitude", amplitude)
    if not a_lo >= 0:
        r.problem(
            f"amplitude is a peak value and must be >= 0, got {_v(a_lo)}"
            + end_word("signal", "amplitude", amplitude, a_lo),
            "signal",
            "amplitude",
        )
    g_lo = r.lowest("amplifier", "gain", gain)
    if not g_lo > 0:
        r.problem(
            f"gain is a magnitude and must be > 0, got {g_lo:g} V/V"
            + end_word("amplifier", "gain", gain, g_lo),
            "amplifier",
            "gain",
        )
    elif configuration == "non-inverting" and g_lo < 1:
        r.problem(
            f"a non-inverting stage has gain 1 + R_f/R_g >= 1, got {g_lo:g} V/V"
            + end_word("amplifier", "gain", gain, g_lo)
            + "; use the inverting configuration or an input divider for attenuation",
            "amplifier",
            "gain",
        )
    for section, key, value in (
        ("amplifier", "feedback_resistor", r_f),
        ("load", "resistance", r_load),
        ("load", "to_negative_rail", r_neg),
        ("load", "to_positive_rail", r_pos),
    ):
        if value is None:
            continue
        lo = r.lowest(section, key, value)
        if not lo > 0:
            r.problem(
                f"resistance must be > 0, got {format_si(lo, 'ohm')}"
                + end_word(section, key, value, lo),
                section,
                key,
            )
    c_lo = r.lowest("load", "capacitance", c_load)
    if not c_lo >= 0:
        r.problem(
            f"capacitance must be >= 0, got {format_si(c_lo, 'F')}"
            + end_word("load", "capacitance", c_load, c_lo),
            "load",
            "capacitance",
        )
    if coupling == "ac":
        if c_couple is None:
            r.problem("coupling = 'ac' needs coupling_capacitor", "load", "coupling_capacitor")
        elif not (cc_lo := r.lowest("load", "coupling_capacitor", c_couple)) > 0:
            r.problem(
                f"coupling capacitor must be > 0, got {format_si(cc_lo, 'F')}"
                + end_word("load", "coupling_capacitor", c_couple, cc_lo),
                "load",
                "coupling_capacitor",
            )
        if r_load is None:
            r.problem(
                "coupling = 'ac' needs the load resistance it couples into", "load", "resistance"
            )
    elif c_couple is not None:
        r.problem(
            "coupling_capacitor is used only with coupling = 'ac'; set coupling = 'ac' "
            "or remove it",
            "load",
            "coupling_capacitor",
        )
    if t_min < _ABSOLUTE_ZERO_C:
        r.problem(f"{t_min:g} degC is below absolute zero", "environment", "ambient_min")
    if t_min > t_max:
        r.problem(
            f"ambient_min {t_min:g} degC is above ambient_max {t_max:g} degC",
            "environment",
            "ambient_min",
        )
    try:
        req_mod.Requirements.from_mapping(requirements, file=source, record=record)
    except InputError as exc:
        r.problems.extend(exc.problems)

    design = Design(
        name=name,
        supply=Supply(v_pos_v=v_pos, v_neg_v=v_neg),
        signal=Signal(
            bias_v=bias,
            amplitude_v=amplitude,
            frequency_hz=freq,
            waveform=data["signal"].get("waveform", "sine"),
        ),
        closed_loop=ClosedLoop(
            configuration=configuration, gain=gain, reference_v=ref, feedback_ohm=r_f
        ),
        load=Load(
            r_load_ohm=r_load,
            reference_v=load_ref,
            coupling=coupling,
            c_couple_f=c_couple,
            c_load_f=c_load,
            r_to_neg_ohm=r_neg,
            r_to_pos_ohm=r_pos,
        ),
        t_ambient_min_c=t_min,
        t_ambient_max_c=t_max,
        channels_used=int(data.get("environment", {}).get("channels_used", 1)),
        requirements=requirements,
        source=source,
        warnings=tuple(r.warnings),
        tolerances=dict(r.tolerances),
    )

    # ---- levels against the rails (only when the values they depend on are sane) -----------
    levels_ok = v_pos > v_neg and amplitude >= 0 and gain > 0
    levels_ok = levels_ok and (configuration == "inverting" or gain >= 1)
    if v_pos > v_neg:
        rails = f"the rails {_v(v_neg)} … {_v(v_pos)}"
        if not v_neg <= bias <= v_pos:
            r.problem(f"signal bias {_v(bias)} lies outside {rails}", "signal", "bias")
            levels_ok = False
        if ref is not None and not v_neg <= ref <= v_pos:
            r.problem(f"reference {_v(ref)} lies outside {rails}", "amplifier", "reference")
            levels_ok = False
        if levels_ok:
            out_dc, out_pk = design.out_bias_v, design.out_amplitude_v
            if not v_neg <= out_dc <= v_pos:
                r.problem(
                    f"ideal DC output {_v(out_dc)} (= reference + signal gain × (bias − "
                    f"reference)) lies outside {rails}",
                    "amplifier",
                    "reference",
                )
            elif out_dc - out_pk < v_neg or out_dc + out_pk > v_pos:
                r.problem(
                    f"ideal output {_v(out_dc - out_pk)} … {_v(out_dc + out_pk)} "
                    f"({_v(out_dc)} ± {_v(out_pk)} peak, gain {abs(design.signal_gain):g} V/V) "
                    f"goes outside {rails}; lower the amplitude or the gain, or move the bias",
                    "signal",
                    "amplitude",
                )
    if r.problems:
        raise InputError(problems=r.problems)
    return design
