"""Validation of catalogue documents: JSON Schema first, then units and physical sense.

Pure (no database). Every problem names the file, the record (part number, or ``#index`` when
the record has none) and the field as a JSON pointer into the file, e.g.
``/parts/3/dynamics/slew_rise/min``. All problems of a file are collected, not only the first.

A valid part record is also turned into its *canonical* form: the same structure with every
quantity parsed to an SI float and every spec written as an object ``{min?, typ?, max?, at?}``.
Two records with equal canonical forms mean the same ("50 uA" and 5e-05).

Besides the schema and the units, a document is refused when a part holds a value that cannot
be stored as given (a number not finite or beyond the float range, an integer beyond +/-2**53,
the range a JSON number and a float keep exactly, text with a lone surrogate): what ``check``
accepts, ``load`` can store. Part numbers and maker names must be
printable text (:func:`partsel.io.partnumber.name_problem`: no blank names, no control,
zero-width or bidirectional characters), and suffix rules must be in partsel's suffix language
(:mod:`partsel.io.suffix`). Values that parse but are implausible
(:func:`partsel.units.plausibility`) are *warnings*: the document is valid and carries them in
:attr:`CatalogueDocument.warnings`. Messages quote at most 40 characters of a value.
"""

from __future__ import annotations

import math
import re
from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass, field
from functools import lru_cache
from pathlib import Path
from typing import Any

from jsonschema import Draft202012Validator
from jsonschema.exceptions import ValidationError

from partsel.catalogue.files import find_files, read_document
from partsel.catalogue.schema import (
    DEFAULT_SPEC_TEMPERATURE_C,
    TEMPERATURE_POINTS,
    Schema,
    catalogue_schema,
)
from partsel.errors import InputError, Problem, excerpt, json_pointer
from partsel.io.partnumber import name_problem
from partsel.io.suffix import compile_rule
from partsel.params import SIDES, Topology
from partsel.units import is_plausible, parse_quantity, plausibility

Path_ = list[str | int]


@dataclass(frozen=True)
class CatalogueDocument:
    """One validated catalogue file.

    ``makers`` and ``parts`` are the records as given (for storing and dumping them back);
    ``canonical_parts`` are the same parts with SI floats (see module docstring);
    ``warnings`` the implausible values found (the document is valid all the same).
    """

    file: str
    makers: list[dict[str, Any]] = field(default_factory=list)
    parts: list[dict[str, Any]] = field(default_factory=list)
    canonical_parts: list[dict[str, Any]] = field(default_factory=list)
    warnings: list[Problem] = field(default_factory=list)


@lru_cache(maxsize=1)
def _validator() -> Draft202012Validator:
    return Draft202012Validator(catalogue_schema())


@lru_cache(maxsize=1)
def _fast_is_valid() -> Callable[[Any], bool] | None:
    """A fast validity check (jsonschema-rs) where installed; problems always come from
    jsonschema, so messages do not depend on it."""
    try:
        import jsonschema_rs
    except ImportError:
        return None
    return jsonschema_rs.Draft202012Validator(catalogue_schema()).is_valid


def _schema_errors(data: Any) -> list[ValidationError]:
    fast = _fast_is_valid()
    try:
        if fast is not None and fast(data):
            return []
    except (UnicodeEncodeError, ValueError, OverflowError):
        pass  # text or numbers the fast validator cannot take: jsonschema decides

    return sorted(_validator().iter_errors(data), key=lambda e: list(map(str, e.path)))


@lru_cache(maxsize=1)
def _resolved_defs() -> dict[str, Schema]:
    """The schema's definitions with every ``$ref`` replaced by its target (siblings win)."""
    defs = catalogue_schema()["$defs"]

    def inline(node: Any) -> Any:
        if isinstance(node, dict):
            if "$ref" in node:
                base = inline(defs[node["$ref"].rsplit("/", 1)[-1]])
                return {**base, **{k: inline(v) for k, v in node.items() if k != "$ref"}}
            return {k: inline(v) for k, v in node.items()}
        if isinstance(node, list):
            return [inline(v) for v in node]
        return node

    return {name: inline(node) for name, node in defs.items()}


#: Significant digits kept in canonical values: hides the float noise of unit scaling
#: ("50 uA" -> 4.9999999999999996e-05) so that equal values compare equal.
CANONICAL_DIGITS = 12


def canonical_float(value: float) -> float:
    """``value`` rounded to :data:`CANONICAL_DIGITS` significant digits."""
    return float(f"{value:.{CANONICAL_DIGITS}g}")


def part_label(record: Any, index: int) -> str:
    """Record label used in problems: the part number, or ``#index`` without one."""
    if isinstance(record, dict):
        pn = record.get("part_number")
        if isinstance(pn, str) and name_problem(pn) is None:
            return pn
    return f"#{index}"


def _maker_label(record: Any, index: int) -> str:
    name = record.get("name") if isinstance(record, dict) else None
    if isinstance(name, str) and name_problem(name, "maker name") is None:
        return name
    return f"#{index}"


def _given(value: Any) -> str:
    return excerpt(value) if not isinstance(value, float) else f"{value:g}"


_SURROGATE = re.compile("[\ud800-\udfff]")
#: Largest integer magnitude stored as given (a float and a JSON reader keep it exactly).
MAX_EXACT_INT = 2**53


class _Walker:
    """Walks a record along the schema: parses quantities, checks signs and spec order."""

    def __init__(
        self,
        problems: list[Problem],
        file: str | None,
        record: str | None,
        warnings: list[Problem] | None = None,
    ) -> None:
        self.problems = problems
        self.warnings = warnings if warnings is not None else []
        self.file = file
        self.record = record

    def problem(self, message: str, path: Path_) -> None:
        self.problems.append(Problem(message, self.file, self.record, json_pointer(*path)))

    def walk(self, schema: Schema, value: Any, path: Path_, nonneg: bool = False) -> Any:
        nonneg = nonneg or bool(schema.get("x-nonnegative", False))
        if schema.get("x-kind") == "spec":
            return self.spec(schema, value, path, nonneg)
        dim = schema.get("x-dimension")
        if dim is not None:
            if isinstance(value, str) and value in schema.get("x-words", ()):
                return value
            return self.quantity(dim, value, path, nonneg)
        props = schema.get("properties")
        if isinstance(value, dict) and props is not None:
            return {
                k: self.walk(props[k], v, [*path, k]) if k in props else v for k, v in value.items()
            }
        items = schema.get("items")
        if isinstance(value, list) and items is not None:
            return [self.walk(items, v, [*path, i]) for i, v in enumerate(value)]
        return self.leaf(value, path)

    def leaf(self, value: Any, path: Path_) -> Any:
        """A value stored as given: refuse what could not be stored (check and load agree)."""
        kind = type(value)
        if kind is str:
            if _SURROGATE.search(value):
                self.problem("text holds a lone surrogate code point; it cannot be stored", path)
        elif kind is float:
            if not math.isfinite(value):
                self.problem(f"value is not finite ({value!r})", path)
        elif kind is int and abs(value) > MAX_EXACT_INT:
            self.problem(
                f"{excerpt(value)} is out of range (integers are kept up to 2**53; write a "
                "large value in exponent form, e.g. 1e21)",
                path,
            )
        return value

    def quantity(self, dim: str, value: Any, path: Path_, nonneg: bool) -> float:
        if type(value) is float and dim != "temperature" and math.isfinite(value):
            out = value  # SI already: the common bulk case
        else:
            try:
                out = parse_quantity(value, dim)
            except InputError as exc:
                self.problems += [
                    Problem(p.message, self.file, self.record, json_pointer(*path))
                    for p in exc.problems
                ]
                return math.nan
        if nonneg and out < 0:
            self.problem(f"must not be negative (got {_given(value)})", path)
        warning = None if is_plausible(out, dim) else plausibility(out, dim)
        if warning is not None:
            pointer = json_pointer(*path)
            self.warnings.append(Problem(warning.message, self.file, self.record, pointer))
        return canonical_float(out)

    def spec(self, schema: Schema, value: Any, path: Path_, nonneg: bool) -> dict[str, Any]:
        if not isinstance(value, dict):
            return {"typ": self.quantity(schema["x-dimension"], value, path, nonneg)}
        props = schema["properties"]
        out: dict[str, Any] = {}
        for side in SIDES:
            if side in value:
                out[side] = self.walk(props[side], value[side], [*path, side], nonneg)
        if "at" in value:
            out["at"] = self.walk(props["at"], value["at"], [*path, "at"])
        if not self.ordered(value, out, path):
            return out
        points = value.get(TEMPERATURE_POINTS)
        if TEMPERATURE_POINTS in props and isinstance(points, list):
            out[TEMPERATURE_POINTS] = self.temperature_points(
                props, value, out, points, path, nonneg
            )
        return out

    def ordered(self, value: dict[str, Any], out: dict[str, Any], path: Path_) -> bool:
        """min <= typ <= max of a spec (or of one of its temperature points)."""
        present = [s for s in SIDES if s in out]
        for i, lo in enumerate(present):
            for hi in present[i + 1 :]:
                if out[lo] > out[hi]:
                    self.problem(
                        f"{lo} ({_given(value[lo])}) is greater than {hi} "
                        f"({_given(value[hi])}); min <= typ <= max must hold",
                        [*path, lo],
                    )
                    return False
        return True

    def temperature_points(
        self,
        props: Schema,
        value: dict[str, Any],
        out: dict[str, Any],
        points: list[Any],
        path: Path_,
        nonneg: bool,
    ) -> list[dict[str, Any]]:
        """The spec at other temperatures: each point a temperature and the spec's own sides
        (each interpolates between temperatures), ordered, at a plausible temperature distinct
        from the others and from the spec's own (its ``at.temperature``,
        :data:`DEFAULT_SPEC_TEMPERATURE_C` when not given)."""
        item = props[TEMPERATURE_POINTS]["items"]
        base_path = [*path, TEMPERATURE_POINTS]
        own = out.get("at", {}).get("temperature", DEFAULT_SPEC_TEMPERATURE_C)
        if not isinstance(own, float):
            self.problem(
                f"a spec with {TEMPERATURE_POINTS} needs its own temperature as a value "
                f"(at.temperature; got {_given(own)})",
                [*path, "at", "temperature"],
            )
            own = math.nan
        sides = [s for s in SIDES if s in out]
        seen = {own: "the spec's own temperature"}
        result = []
        for k, point in enumerate(points):
            if not isinstance(point, dict):
                continue  # the schema reports it
            here = [*base_path, k]
            p_out: dict[str, Any] = {}
            t = point.get("temperature")
            if t is not None:
                p_out["temperature"] = self.walk(item["properties"]["temperature"], t,
                                                 [*here, "temperature"])  # fmt: skip
            for side in SIDES:
                if side in point:
                    p_out[side] = self.walk(item["properties"][side], point[side],
                                            [*here, side], nonneg)  # fmt: skip
            result.append(p_out)
            given = [s for s in SIDES if s in point]
            if given and given != sides:
                self.problem(
                    f"gives {', '.join(given)} but the spec gives {', '.join(sides)}: a "
                    "temperature point gives the same sides as its spec",
                    here,
                )
            self.ordered(point, p_out, here)
            temp = p_out.get("temperature")
            if not isinstance(temp, float) or math.isnan(temp):
                continue
            if not is_plausible(temp, "temperature"):
                warning = plausibility(temp, "temperature")
                assert warning is not None
                self.problem(f"{warning.message} (an error for a temperature point: it is "
                             "interpolated between)", [*here, "temperature"])  # fmt: skip
            elif temp in seen:
                self.problem(
                    f"temperature {_given(point['temperature'])} is given twice (also "
                    f"{seen[temp]}); each temperature point needs its own temperature",
                    [*here, "temperature"],
                )
            else:
                seen[temp] = f"point {json_pointer(*here)}"
        return result


def _side(spec: Any, *sides: str) -> float:
    """First present side of a canonical spec (NaN when none)."""
    if isinstance(spec, dict):
        for s in sides:
            v = spec.get(s)
            if isinstance(v, float) and not math.isnan(v):
                return v
    return math.nan


def _dict(value: Any) -> dict[str, Any]:
    return value if isinstance(value, dict) else {}


def _num(value: Any) -> float:
    return value if isinstance(value, float) else math.nan


def _record_checks(canon: dict[str, Any], base: Path_, w: _Walker) -> None:
    """Checks across fields of one canonical part record (tolerates schema-invalid parts)."""
    supply = {k: _num(v) for k, v in _dict(_dict(canon.get("supply")).get("range")).items()}
    if supply.get("min", math.nan) >= supply.get("max", math.nan):
        w.problem("supply minimum must be below the maximum", [*base, "supply", "range", "min"])
    temp = {k: _num(v) for k, v in _dict(canon.get("temperature")).items()}
    if temp.get("min", math.nan) >= temp.get("max", math.nan):
        w.problem("temperature minimum must be below the maximum", [*base, "temperature", "min"])
    if _num(canon.get("junction_max")) < temp.get("max", math.nan):
        w.problem("junction_max is below the rated ambient maximum", [*base, "junction_max"])
    price = _dict(canon.get("price")).get("unit")
    storable = isinstance(price, float) or (
        isinstance(price, int) and not isinstance(price, bool) and abs(price) <= MAX_EXACT_INT
    )
    if storable and math.isfinite(price):
        warning = plausibility(float(price), "price", field=json_pointer(*base, "price", "unit"))
        if warning is not None:
            w.warnings.append(Problem(warning.message, w.file, w.record, warning.pointer))
    out = _dict(canon.get("output"))
    if out.get("topology") == Topology.CLASS_B_PULLDOWN and "dead_band" not in out:
        w.problem(
            "dead_band is required for topology class-b-pulldown", [*base, "output", "dead_band"]
        )
    for rail, limit in (("swing_pos", "source_limit"), ("swing_neg", "sink_limit")):
        curve = out.get(rail)
        if isinstance(curve, list):
            currents = [_num(_dict(p).get("current")) for p in curve]
            for k in range(1, len(currents)):
                if not currents[k] > currents[k - 1]:
                    w.problem(
                        "current must increase from point to point",
                        [*base, "output", rail, k, "current"],
                    )
        elif isinstance(curve, dict) and math.isnan(_side(out.get(limit), "typ", "min", "max")):
            w.problem(
                f"a saturation/resistance curve needs output/{limit} to place its second point",
                [*base, "output", rail],
            )


def canonical_part(
    record: dict[str, Any],
    *,
    file: str | None = None,
    record_label: str | None = None,
    pointer: Path_ | None = None,
    warnings: list[Problem] | None = None,
) -> tuple[dict[str, Any], list[Problem]]:
    """Canonical form of one schema-valid part record, and the problems found on the way.

    ``pointer`` is the record's location in its file (default ``[]``), prefixed to every
    problem's field pointer. Implausible values are appended to ``warnings`` when given.
    """
    base: Path_ = list(pointer or [])
    problems: list[Problem] = []
    w = _Walker(problems, file, record_label, warnings)
    canon = w.walk(_resolved_defs()["part"], record, base)
    _record_checks(canon, base, w)
    return canon, problems


def _record_of(data: Any, path: Path_) -> str | None:
    """The record label of a path into a catalogue document (None above the records)."""
    if len(path) >= 2 and path[0] in ("parts", "makers") and isinstance(path[1], int):
        items = data.get(path[0]) if isinstance(data, dict) else None
        if isinstance(items, list) and path[1] < len(items):
            item = items[path[1]]
            return part_label(item, path[1]) if path[0] == "parts" else _maker_label(item, path[1])
    return None


_TYPE_WORDS = {
    "string": "text",
    "number": "a number",
    "integer": "a whole number",
    "boolean": "true or false",
    "array": "a list",
    "object": "an object (mapping)",
    "null": "null",
}


def _schema_message(err: ValidationError) -> str:
    """A message for one schema violation that quotes at most 40 characters of the value."""
    v, value = err.validator, err.validator_value
    got = excerpt(err.instance)
    if v == "type":
        kinds = value if isinstance(value, list) else [value]
        return f"must be {' or '.join(_TYPE_WORDS.get(k, k) for k in kinds)}, got {got}"
    if v == "enum":
        return f"{got} is not one of {', '.join(map(repr, value))}"
    if v == "const":
        return f"must be {value!r}, got {got}"
    if v == "minLength":
        return "must not be empty" if value == 1 else f"must be at least {value} characters long"
    if v == "maxLength":
        return f"must be at most {value} characters long"
    if v == "pattern":
        return f"{got} does not have the required form (pattern {value})"
    if v in ("minimum", "maximum", "exclusiveMinimum", "exclusiveMaximum"):
        op = {"minimum": ">=", "maximum": "<=", "exclusiveMinimum": ">", "exclusiveMaximum": "<"}
        return f"must be {op[v]} {value}, got {got}"
    if v == "minItems":
        return f"needs at least {value} item{'s' * (value != 1)}, got {got}"
    if v == "maxItems":
        return f"takes at most {value} item{'s' * (value != 1)}, got {got}"
    text = err.message
    return text if len(text) <= 200 else text[:200] + "…"


def _schema_problems(err: ValidationError, file: str, data: Any) -> list[Problem]:
    path: Path_ = list(err.absolute_path)
    record = _record_of(data, path)
    if err.validator == "required" and isinstance(err.instance, dict):
        return [
            Problem("required field is missing", file, record, json_pointer(*path, name))
            for name in err.validator_value
            if name not in err.instance
        ]
    if err.validator == "additionalProperties" and isinstance(err.instance, dict):
        known = err.schema.get("properties", {})
        return [
            Problem(f"unknown field {excerpt(str(name))}", file, record, json_pointer(*path, name))
            for name in err.instance
            if name not in known
        ]
    message = err.schema.get("x-message") if err.validator in ("anyOf", "oneOf") else None
    return [Problem(message or _schema_message(err), file, record, json_pointer(*path))]


def _text_problems(data: dict[str, Any], file: str) -> list[Problem]:
    """Part numbers, makers of parts and maker names that are not printable names; suffix
    rules outside the suffix language."""
    problems: list[Problem] = []
    parts = data.get("parts") if isinstance(data.get("parts"), list) else []
    makers = data.get("makers") if isinstance(data.get("makers"), list) else []
    for i, part in enumerate(parts):
        if not isinstance(part, dict):
            continue
        for key, what in (("part_number", "part number"), ("maker", "maker name")):
            value = part.get(key)
            why = name_problem(value, what) if isinstance(value, str) else None
            if why:
                problems.append(
                    Problem(why, file, part_label(part, i), json_pointer("parts", i, key))
                )
    for i, maker in enumerate(makers):
        if not isinstance(maker, dict):
            continue
        name = maker.get("name")
        why = name_problem(name, "maker name") if isinstance(name, str) else None
        label = _maker_label(maker, i)
        if why:
            problems.append(Problem(why, file, label, json_pointer("makers", i, "name")))
        rules = maker.get("suffix_rules")
        for k, rule in enumerate(rules if isinstance(rules, list) else []):
            if not isinstance(rule, str):
                continue  # the schema reports it
            try:
                compile_rule(rule)
            except InputError as exc:
                problems.append(
                    Problem(
                        exc.problems[0].message,
                        file,
                        label,
                        json_pointer("makers", i, "suffix_rules", k),
                    )
                )
    return problems


def _under(pointer: str, reported: Iterable[str]) -> bool:
    return any(pointer == r or pointer.startswith(r + "/") for r in reported)


def validate_document(data: Any, *, file: str) -> tuple[CatalogueDocument | None, list[Problem]]:
    """Validate one parsed catalogue file; return the document (None if invalid) and problems.

    A valid document carries the warnings (implausible values) in ``warnings``.
    """
    if data is None:
        return None, [Problem("file is empty", file)]
    if not isinstance(data, dict):
        return None, [Problem("the top level must be an object with 'parts' and/or 'makers'", file)]
    problems: list[Problem] = []
    for err in _schema_errors(data):
        problems.extend(_schema_problems(err, file, data))
    # Names and rules, then semantic checks, run on schema-invalid records too (all problems of
    # a file at once), minus those at or below a field already reported.
    reported = {p.pointer for p in problems}
    problems.extend(p for p in _text_problems(data, file) if not _under(p.pointer, reported))
    reported = {p.pointer for p in problems}
    parts = data.get("parts") if isinstance(data.get("parts"), list) else []
    makers = data.get("makers") if isinstance(data.get("makers"), list) else []
    canon_parts: list[dict[str, Any]] = []
    warnings: list[Problem] = []
    for i, part in enumerate(parts):
        if not isinstance(part, dict):
            continue
        canon, probs = canonical_part(
            part,
            file=file,
            record_label=part_label(part, i),
            pointer=["parts", i],
            warnings=warnings,
        )
        problems.extend(p for p in probs if not _under(p.pointer, reported))
        canon_parts.append(canon)
    if problems:
        return None, problems
    return CatalogueDocument(file, list(makers), list(parts), canon_parts, warnings), []


def _cross_file_problems(docs: Sequence[CatalogueDocument]) -> list[Problem]:
    """Duplicate part numbers (case-insensitive) and conflicting maker records across files."""
    problems: list[Problem] = []
    seen: dict[str, tuple[str, int]] = {}
    makers: dict[str, tuple[str, int, dict[str, Any]]] = {}
    for doc in docs:
        for i, part in enumerate(doc.parts):
            key = part["part_number"].strip().casefold()
            if key in seen:
                f0, i0 = seen[key]
                problems.append(
                    Problem(
                        f"duplicate part number {excerpt(part['part_number'])} (part numbers are "
                        f"case-insensitive; first at {f0} /parts/{i0})",
                        doc.file,
                        part["part_number"],
                        json_pointer("parts", i, "part_number"),
                    )
                )
            else:
                seen[key] = (doc.file, i)
        for i, maker in enumerate(doc.makers):
            key = maker["name"].strip().casefold()
            prev = makers.get(key)
            if prev is None:
                makers[key] = (doc.file, i, maker)
            elif prev[2].get("suffix_rules", []) != maker.get("suffix_rules", []):
                problems.append(
                    Problem(
                        f"maker {excerpt(maker['name'])} is given again with other suffix_rules "
                        f"(first at {prev[0]} /makers/{prev[1]})",
                        doc.file,
                        maker["name"],
                        json_pointer("makers", i, "suffix_rules"),
                    )
                )
    return problems


def validate_documents(items: Iterable[tuple[str, Any]]) -> list[CatalogueDocument]:
    """Validate parsed documents ``(file, data)`` together; raise InputError with every problem.

    Besides each file's own checks, part numbers must be unique across all files.
    """
    problems: list[Problem] = []
    docs: list[CatalogueDocument] = []
    for file, data in items:
        doc, probs = validate_document(data, file=file)
        problems.extend(probs)
        if doc is not None:
            docs.append(doc)
    problems.extend(_cross_file_problems(docs))
    if problems:
        raise InputError(problems=problems)
    return docs


def read_and_validate(
    paths: Iterable[str | Path], *, progress: Callable[[int], None] | None = None
) -> list[CatalogueDocument]:
    """Read catalogue files and folders, validate them all; raise InputError with every problem.

    ``progress(1)`` is called as each file has been read (a progress bar)."""
    files, problems = find_files(paths)
    items: list[tuple[str, Any]] = []
    for f in files:
        try:
            items.append((str(f), read_document(f)))
        except InputError as exc:
            problems.extend(exc.problems)
        if progress is not None:
            progress(1)
    try:
        docs = validate_documents(items)
    except InputError as exc:
        problems.extend(exc.problems)
    if problems:
        raise InputError(problems=problems)
    return docs
