"""Error types shared by every layer.

An :class:`InputError` always names where the bad value came from: the file, the record (part
number or design name) and the field as a JSON pointer (RFC 6901), so that the command line can
print one clear line and exit with code 2.
"""

from __future__ import annotations

from dataclasses import dataclass, field


def json_pointer(*parts: str | int) -> str:
    """Build an RFC 6901 JSON pointer from path components (escaping ``~`` and ``/``)."""
    out = []
    for p in parts:
        s = str(p).replace("~", "~0").replace("/", "~1")
        out.append(s)
    return "/" + "/".join(out) if out else ""


@dataclass(frozen=True)
class Problem:
    """One thing wrong with an input: where it is and what is wrong."""

    message: str
    file: str | None = None
    record: str | None = None
    pointer: str = ""

    def __str__(self) -> str:
        where = []
        if self.file:
            where.append(self.file)
        if self.record:
            where.append(f"record {self.record}")
        if self.pointer:
            where.append(f"field {self.pointer}")
        prefix = ": ".join(where)
        return f"{prefix}: {self.message}" if prefix else self.message


class PartselError(Exception):
    """Base class of partsel's own errors."""


@dataclass
class InputError(PartselError):
    """Bad input: a malformed file, a wrong unit, an impossible value or design.

    Holds one or more :class:`Problem` entries; ``str()`` lists them one per line.
    """

    problems: list[Problem] = field(default_factory=list)

    def __init__(
        self,
        message: str | None = None,
        *,
        file: str | None = None,
        record: str | None = None,
        pointer: str = "",
        problems: list[Problem] | None = None,
    ) -> None:
        self.problems = list(problems or [])
        if message is not None:
            self.problems.insert(0, Problem(message, file, record, pointer))
        super().__init__(str(self))

    def __str__(self) -> str:
        return "\n".join(str(p) for p in self.problems)

    def with_context(
        self, *, file: str | None = None, record: str | None = None, prefix: str = ""
    ) -> InputError:
        """Return a copy whose problems carry ``file``/``record`` and a pointer ``prefix``."""
        probs = [
            Problem(
                p.message,
                p.file or file,
                p.record or record,
                prefix + p.pointer,
            )
            for p in self.problems
        ]
        return InputError(problems=probs)


#: Most characters of a given value quoted in a message (the rest is cut, with "…").
EXCERPT_CHARS = 40


def excerpt(value: object, limit: int = EXCERPT_CHARS) -> str:
    """A short rendering of ``value`` for messages, never the whole of a large value.

    Strings are quoted (``repr``) and cut to ``limit`` characters with "…" marking the cut;
    numbers are written out unless they are long (``"a 401-digit number"``); lists and
    objects are named by their kind and size, their contents are not rendered. Cheap for any
    size: nothing is walked or formatted beyond ``limit`` characters.
    """
    if isinstance(value, str):
        if len(value) <= limit:
            return repr(value)
        return repr(value[:limit])[:-1] + "…" + repr(value[:limit])[-1]
    if isinstance(value, bool) or value is None:
        return repr(value)
    if isinstance(value, int):
        if value.bit_length() <= 3 * limit:  # about limit decimal digits
            text = str(value)
            if len(text) <= limit:
                return text
        return f"a {_digit_count(value)}-digit number"
    if isinstance(value, float):
        return repr(value)
    if isinstance(value, list | tuple):
        return f"a list of {len(value)} item{'s' * (len(value) != 1)}"
    if isinstance(value, dict):
        return f"an object with {len(value)} field{'s' * (len(value) != 1)}"
    return f"a {type(value).__name__}"


def _digit_count(value: int) -> int:
    """Decimal digits of ``value`` without converting it to text (no 4300-digit limit)."""
    n = abs(value)
    digits = max(1, int(n.bit_length() * 0.30102999566398120) + 1)  # log10(2)
    # The estimate is exact or one too high: correct it with one comparison.
    return digits - 1 if digits > 1 and n < 10 ** (digits - 1) else digits
