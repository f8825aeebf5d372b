"""SPICE model files as data: read, check, and extract the subcircuit partsel tests.

A maker's model file is text partsel hands to ngspice, so it is treated as untrusted data:

* read with the bounded reader (:func:`partsel.io.textfile.read_text`), at most
  :data:`MAX_MODEL_BYTES` per file (a library of a few hundred op-amp macro-models is a few
  MB); UTF-8, or Latin-1 for older files (comments often hold a ``µ`` or ``©`` byte);
* only the cards a model needs are accepted: element lines inside a ``.subckt`` and the dot
  cards of :data:`ALLOWED_CARDS`; an ngspice ``.control`` block, a line that is an ngspice
  command (``shell``, ``exec``, ``source``... :data:`COMMAND_WORDS`), an element outside a
  subcircuit, analyses, options and ``.lib`` sections are refused with the file and line;
* ``.include`` may name only another of the files given (it is then dropped: every file given
  is inlined); models that read files (XSPICE ``filesource``, ``d_source``...) are refused;
* the deck partsel writes holds the *logical lines as checked* (continuations joined, comments
  removed), never the file's text as such, and only the subcircuit asked for, the subcircuits
  it instantiates and the files' ``.model``/``.param``/``.func`` cards: what was checked is
  what ngspice reads.

Nothing of the user's other text (part number, maker, file names) is ever written into a deck:
the subcircuit's name in the deck is the file's own spelling of a name checked here.
"""

from __future__ import annotations

import os
import re
from dataclasses import dataclass, field
from pathlib import Path

from partsel.errors import InputError, Problem, excerpt
from partsel.io.textfile import read_text

#: Largest model file read, bytes.
MAX_MODEL_BYTES = 8 * 2**20
#: Pin roles of an amplifier subcircuit, in partsel's default order.
PIN_ROLES: tuple[str, ...] = ("IN+", "IN-", "OUT", "V+", "V-")
#: Node names partsel's benches give the pins (V- is the bench's ground, node 0).
PIN_NODES: dict[str, str] = {"IN+": "inp", "IN-": "inn", "OUT": "out", "V+": "vp", "V-": "0"}
#: Every node name of partsel's benches (partsel.characterise.benches); a model may not
#: declare one of them global.
BENCH_NODES = frozenset({"inp", "inn", "out", "vp", "lref", "xs", "mref"})
#: Dot cards a model file may hold.
ALLOWED_CARDS = frozenset(
    {".subckt", ".ends", ".model", ".param", ".func", ".include", ".inc", ".global", ".end"}
)
#: ngspice commands (interactive / control-block words): a model line starting with one is
#: refused, whatever follows.
COMMAND_WORDS = frozenset(
    {
        "shell", "exec", "system", "source", "codemodel", "load", "write", "wrdata", "wrs2p",
        "cd", "set", "setcs", "unset", "alias", "unalias", "run", "quit", "exit", "bg",
        "echo", "listing", "print", "plot", "save", "alter", "altermod", "let", "compose",
    }
)  # fmt: skip
#: XSPICE model types that read a file.
FILE_READING_MODELS = frozenset({"filesource", "d_source", "d_state", "table2d", "table3d"})
#: Element letters SPICE knows (first character of an element line).
ELEMENT_LETTERS = frozenset("abcdefghijklmnopqrstuvwxyz")

_CONTROL = re.compile(r"(?i)(^|\s)\.(control|endc)\b")
_INLINE_COMMENT = re.compile(r"\s;|^;|\s\$\s|\s\$$|//")
_NAME = re.compile(r"[^\s=(),'\"]+")


@dataclass(frozen=True)
class Card:
    """One logical line of a model file: continuations joined, comments removed."""

    file: str
    line: int  #: number of its first physical line
    text: str

    @property
    def words(self) -> list[str]:
        return self.text.split()

    @property
    def where(self) -> str:
        return f"line {self.line}"


@dataclass(frozen=True)
class Subckt:
    """A top-level ``.subckt`` block (nested definitions belong to it)."""

    name: str  #: as the file spells it
    pins: tuple[str, ...]
    head: Card
    body: tuple[Card, ...]  #: cards between the head and its ``.ends``
    end: Card


@dataclass(frozen=True)
class ModelSet:
    """The checked model files and the subcircuit under test, ready for a bench.

    ``text`` is what every bench inlines; ``cards`` its lines in order (for mapping an
    ngspice message back to a file and line).
    """

    files: tuple[str, ...]
    subckt: Subckt
    pin_roles: tuple[str, ...]  #: role of each subcircuit pin, in the subcircuit's order
    cards: tuple[Card, ...]
    warnings: tuple[str, ...] = field(default=())

    @property
    def name(self) -> str:
        """The subcircuit's name as written in the file (safe: one checked token)."""
        return self.subckt.name

    @property
    def text(self) -> str:
        return "\n".join(c.text for c in self.cards) + "\n"

    def instance(self, label: str = "X1", nodes: dict[str, str] | None = None) -> str:
        """The instance line of the subcircuit with partsel's pin nodes (or ``nodes`` by role)."""
        use = {**PIN_NODES, **(nodes or {})}
        return " ".join([label, *(use[r] for r in self.pin_roles), self.subckt.name])

    def locate(self, log: str) -> Problem | None:
        """The model line an ngspice message most likely refers to (by its element or model
        name), as a problem naming file and line; None when nothing matches."""
        low = log.lower()
        for c in self.cards:
            w = c.words
            if not w or w[0].startswith("."):
                is_model = len(w) > 1 and w[0].lower() == ".model"
                if is_model and re.search(rf"\b{re.escape(w[1].lower())}\b", low):
                    return Problem(f"ngspice refers to model {w[1]!r} ({c.where})", c.file)
                continue
            name = w[0].lower()
            if re.search(rf"(^|[\s.:]){re.escape(name)}([\s#\[\]\"':),]|$)", low, re.MULTILINE):
                return Problem(f"ngspice refers to element {w[0]!r} ({c.where})", c.file)
        return None


def parse_pins(text: str | None) -> tuple[str, ...]:
    """The ``--pins`` option: the role of each subcircuit pin in order, e.g.
    ``IN+,IN-,OUT,V+,V-`` (default); every role once."""
    if text is None:
        return PIN_ROLES
    roles = tuple(p.strip().upper() for p in text.split(","))
    bad = [r for r in roles if r not in PIN_ROLES]
    if bad or sorted(roles) != sorted(PIN_ROLES):
        raise InputError(
            f"--pins names each of {', '.join(PIN_ROLES)} once, in the subcircuit's pin order "
            f"(got {excerpt(text, 60)})",
            pointer="/pins",
        )
    return roles


def _strip_comment(text: str) -> str:
    m = _INLINE_COMMENT.search(text)
    return (text[: m.start()] if m else text).rstrip()


def _cards(text: str, file: str) -> list[Card]:
    """Logical lines of a model file: comment lines skipped, ``+`` continuations joined,
    inline comments (``;``, `` $ ``, ``//``) removed."""
    out: list[Card] = []
    pending: tuple[int, list[str]] | None = None
    for k, raw in enumerate(text.splitlines(), start=1):
        s = raw.strip()
        if not s or s.startswith("*"):
            continue
        body = _strip_comment(s)
        if body.startswith("+"):
            if pending is None:
                raise InputError(
                    f"line {k}: a continuation line ('+') with no line before it to continue",
                    file=file,
                )
            pending[1].append(body[1:].strip())
            continue
        if pending is not None:
            out.append(Card(file, pending[0], " ".join(p for p in pending[1] if p)))
        pending = (k, [body])
    if pending is not None:
        out.append(Card(file, pending[0], " ".join(p for p in pending[1] if p)))
    return [c for c in out if c.text]


def _refuse_unsafe(text: str, file: str) -> None:
    """Refuse control blocks and ngspice commands anywhere in the file (comments aside)."""
    for k, raw in enumerate(text.splitlines(), start=1):
        s = raw.strip()
        if k == 1 and s.lower().startswith("*ng_script"):
            raise InputError(
                "line 1: '*ng_script' makes the file an ngspice script; model files are data "
                "and partsel runs no scripts",
                file=file,
            )
        if not s or s.startswith("*"):
            continue
        body = _strip_comment(s)
        if _CONTROL.search(body.lstrip("+ \t")):
            raise InputError(
                f"line {k}: a '.control' block holds ngspice commands; model files are data "
                "and partsel runs none of their commands (remove the block)",
                file=file,
            )
        first = body.lstrip("+").split()[:1]
        word = first[0].lower().lstrip(".") if first else ""
        if word in COMMAND_WORDS or body.startswith("!"):
            raise InputError(
                f"line {k}: {excerpt(first[0] if first else body)} is an ngspice command, not "
                "part of a model; model files are data and partsel runs none of their commands",
                file=file,
            )


def _pins_of(head: Card) -> tuple[str, ...]:
    words = head.words[2:]
    pins: list[str] = []
    for w in words:
        if w.lower() == "params:" or "=" in w:
            break
        pins.append(w)
    return tuple(pins)


def _x_target(card: Card) -> str | None:
    """The subcircuit an ``X`` line instantiates (its last name before any parameters)."""
    words = card.words
    names: list[str] = []
    for w in words[1:]:
        if w.lower() == "params:" or "=" in w:
            break
        names.append(w)
    return names[-1] if names else None


@dataclass
class _FileScan:
    file: str
    top: list[Card] = field(default_factory=list)  #: top-level .model/.param/.func/.global
    subckts: list[Subckt] = field(default_factory=list)
    includes: list[tuple[Card, str]] = field(default_factory=list)


def _scan(cards: list[Card], file: str, given: set[str]) -> _FileScan:
    """Check the cards of one file; split them into top-level cards and subcircuit blocks."""
    scan = _FileScan(file)
    stack: list[tuple[Card, list[Card]]] = []
    ended = False
    for c in cards:
        word = c.words[0]
        low = word.lower()
        if ended:
            raise InputError(
                f"{c.where}: text after '.end' (SPICE ignores it; remove it or the '.end')",
                file=file,
            )
        if low.startswith("."):
            if low not in ALLOWED_CARDS:
                what = {
                    ".lib": "'.lib' sections are not read: give the file that holds the "
                    "subcircuit and its models",
                    ".options": "simulator options belong to partsel's test benches, not to a "
                    "model file",
                    ".option": "simulator options belong to partsel's test benches, not to a "
                    "model file",
                }.get(low, "a model file holds subcircuits, models and parameters only")
                raise InputError(f"{c.where}: {excerpt(word)} is not accepted: {what}", file=file)
            if low == ".end":
                if stack:
                    raise InputError(
                        f"{c.where}: '.end' inside subcircuit {stack[-1][0].words[1]!r} "
                        f"(opened at {stack[-1][0].where}); the file is cut short or its "
                        "'.ends' is missing",
                        file=file,
                    )
                ended = True
                continue
            if low in (".include", ".inc"):
                if len(c.words) < 2:
                    raise InputError(f"{c.where}: '.include' names no file", file=file)
                name = Path(c.text.split(None, 1)[1].strip().strip("'\"")).name
                if name.lower() not in given:
                    raise InputError(
                        f"{c.where}: includes {excerpt(name)}, which is not among the model "
                        "files given; name every file the model needs on the command line",
                        file=file,
                    )
                scan.includes.append((c, name))
                continue
            if low == ".model":
                if len(c.words) < 3:
                    raise InputError(f"{c.where}: '.model' needs a name and a type", file=file)
                kind = re.split(r"[\s(]", c.text.split(None, 2)[2], maxsplit=1)[0].lower()
                if kind in FILE_READING_MODELS:
                    raise InputError(
                        f"{c.where}: a {kind!r} model reads files; partsel runs no model "
                        "that reads files",
                        file=file,
                    )
            if low == ".subckt":
                if len(c.words) < 2:
                    raise InputError(f"{c.where}: '.subckt' without a name", file=file)
                stack.append((c, []))
                continue
            if low == ".ends":
                if not stack:
                    raise InputError(f"{c.where}: '.ends' without a '.subckt'", file=file)
                head, body = stack.pop()
                if stack:  # a nested definition stays part of its parent
                    stack[-1][1].extend([head, *body, c])
                else:
                    scan.subckts.append(Subckt(head.words[1], _pins_of(head), head, tuple(body), c))
                continue
            if stack:
                stack[-1][1].append(c)
            else:
                scan.top.append(c)
            continue
        if low[0] not in ELEMENT_LETTERS:
            raise InputError(
                f"{c.where}: {excerpt(word)} is not a SPICE element or dot card", file=file
            )
        if not stack:
            raise InputError(
                f"{c.where}: element {excerpt(word)} outside a '.subckt'; a model file holds "
                "subcircuits and models, not a circuit",
                file=file,
            )
        stack[-1][1].append(c)
    if stack:
        head = stack[-1][0]
        raise InputError(
            f"{head.where}: subcircuit {head.words[1]!r} has no '.ends' (the file is cut short "
            "or the line is missing)",
            file=file,
        )
    return scan


def read_models(
    paths: list[Path] | list[str],
    subckt: str,
    pins: tuple[str, ...] = PIN_ROLES,
    *,
    max_bytes: int = MAX_MODEL_BYTES,
) -> ModelSet:
    """Read and check ``paths``; the subcircuit ``subckt`` (any case) with its pin ``pins``
    roles, and everything it needs. Raises InputError naming file and line."""
    if not paths:
        raise InputError("no model file given")
    labels = [str(p) for p in paths]
    given = {Path(p).name.lower() for p in paths}
    scans: list[_FileScan] = []
    for path, label in zip(paths, labels, strict=True):
        text = read_text(
            Path(path), file=label, max_bytes=max_bytes, fallback="latin-1", what="a SPICE model"
        )
        _refuse_unsafe(text, label)
        cards = _cards(text, label)
        scans.append(_scan(cards, label, given))
    blocks: dict[str, Subckt] = {}
    for s in scans:
        for b in s.subckts:
            key = b.name.lower()
            if key in blocks:
                first = blocks[key]
                raise InputError(
                    f"{b.head.where}: subcircuit {b.name!r} is defined twice (first in "
                    f"{first.head.file}, {first.head.where})",
                    file=b.head.file,
                )
            blocks[key] = b
    want = subckt.strip().lower()
    target = blocks.get(want)
    if target is None:
        names = ", ".join(sorted(b.name for b in blocks.values())) or "none"
        raise InputError(
            f"no subcircuit {excerpt(subckt)} in the model files; they define: {names}",
            file=labels[0] if len(labels) == 1 else None,
            pointer="/subckt",
        )
    if len(target.pins) != len(PIN_ROLES):
        raise InputError(
            f"{target.head.where}: subcircuit {target.name!r} has {len(target.pins)} pins "
            f"({' '.join(target.pins) or 'none'}); partsel tests amplifiers with the five pins "
            f"{', '.join(PIN_ROLES)} (--pins gives their order)",
            file=target.head.file,
        )
    globals_ = {w.lower() for s in scans for c in s.top if c.words[0].lower() == ".global"
                for w in c.words[1:]}  # fmt: skip
    clash = sorted(globals_ & BENCH_NODES)
    if clash:
        raise InputError(
            f"the model declares global node(s) {', '.join(clash)}, which partsel's test "
            "benches use",
            file=labels[0],
        )
    # the subcircuit and every subcircuit it instantiates (depth first)
    used: list[Subckt] = []
    seen: set[str] = set()
    todo = [target]
    while todo:
        b = todo.pop()
        if b.name.lower() in seen:
            continue
        seen.add(b.name.lower())
        used.append(b)
        local = {c.words[1].lower() for c in b.body if c.words[0].lower() == ".subckt"}
        for c in b.body:
            if c.words[0][0].lower() != "x":
                continue
            name = _x_target(c)
            if name is None:
                raise InputError(f"{c.where}: instance {c.words[0]!r} names no subcircuit",
                                 file=c.file)  # fmt: skip
            if name.lower() in local:
                continue
            if name.lower() not in blocks:
                raise InputError(
                    f"{c.where}: instance {c.words[0]!r} uses subcircuit {name!r}, which the "
                    "model files given do not define",
                    file=c.file,
                )
            todo.append(blocks[name.lower()])
    cards: list[Card] = [c for s in scans for c in s.top]
    for b in reversed(used):
        cards.extend([b.head, *b.body, b.end])
    return ModelSet(
        files=tuple(labels),
        subckt=target,
        pin_roles=pins,
        cards=tuple(cards),
    )


def file_label(path: str | os.PathLike[str]) -> str:
    """A file name for messages and records (the name only, on one line)."""
    return " ".join(Path(path).name.split())
