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
