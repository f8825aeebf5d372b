"""Matching BOM part numbers to the catalogue: exact, normalised, then per-maker suffix rules."""

from __future__ import annotations

import difflib
import re
from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from typing import Any, Literal

import pandas as pd

from partsel.errors import json_pointer
from partsel.io.bom import DASHES
from partsel.io.partnumber import clean_cell
from partsel.io.suffix import Rule, compile_rule

MatchRule = Literal["exact", "normalised", "suffix", "none"]
#: Matching rules, in the order they are tried.
MATCH_RULES: tuple[MatchRule, ...] = ("exact", "normalised", "suffix")
#: Most suffixes removed from one part number (a package code then a packing code, say).
MAX_SUFFIX_STRIPS = 3
#: Whitespace and dashes (:data:`partsel.io.bom.DASHES`), ignored by the normalised match.
_NORMALISE = re.compile(f"[\\s{re.escape(DASHES)}]+")


def normalise(part_number: str) -> str:
    """Part number with case, whitespace, dashes and byte-order marks ignored (the
    'normalised' rule)."""
    return _NORMALISE.sub("", clean_cell(part_number)).casefold()


def _maker_words(name: str) -> list[str]:
    return re.findall(r"[0-9a-z]+", str(name).replace("\ufeff", "").casefold())


def maker_matches(cell: str, maker: str) -> bool:
    """A BOM's maker cell names ``maker``: the same name (case, punctuation ignored), or its
    first words, each word possibly cut short ("Brindle" and "Brindle Semi" name "Brindle
    Semiconductor"; "Brind" does not: a cut word needs three letters and the first word must
    be whole). The rule is partsel's own, stated in the BOM check's output."""
    a, b = _maker_words(cell), _maker_words(maker)
    if not a or len(a) > len(b):
        return False
    if a[0] != b[0]:
        return False
    rest = zip(a[1:], b[1 : len(a)], strict=True)
    return all(x == y or (len(x) >= 3 and y.startswith(x)) for x, y in rest)


#: The maker rule, in words (shown with the BOM check).
MAKER_RULE = (
    "a maker cell matches the catalogue's maker by the same name or its first words, "
    "a later word possibly cut short ('Brindle', 'Brindle Semi')"
)


# ---- matching ----------------------------------------------------------------------------------


@dataclass(frozen=True)
class Match:
    """How a BOM part number matched the catalogue."""

    rule: MatchRule
    index: int | None = None  #: row in the catalogue frame (None: no match)
    part_number: str | None = None
    maker: str | None = None
    stripped: tuple[str, ...] = ()  #: suffixes removed (rule 'suffix')
    candidates: tuple[str, ...] = ()  #: the part numbers matched when ambiguous

    def to_dict(self) -> dict[str, Any]:
        return {
            "rule": self.rule,
            "part_number": self.part_number,
            "maker": self.maker,
            "stripped_suffixes": list(self.stripped),
            "ambiguous": list(self.candidates),
        }


class PartMatcher:
    """Match BOM part numbers to catalogue rows: exact, normalised, per-maker suffix rules.

    ``makers`` is a list of ``{"name": ..., "suffix_rules": [rule, ...]}`` (the suffix-rule
    language of :mod:`partsel.io.suffix`, linear-time) as returned by
    :func:`partsel.catalogue.makers`; the rules are applied case-insensitively.
    """

    def __init__(self, frame: pd.DataFrame, makers: Iterable[Mapping[str, Any]] = ()) -> None:
        pns = [str(p) for p in frame["part_number"].tolist()]
        mk = (
            [str(m) for m in frame["maker"].tolist()]
            if "maker" in frame.columns
            else [""] * len(pns)
        )
        self._pns, self._makers = pns, mk
        self._exact: dict[str, int] = {p.strip(): k for k, p in enumerate(pns)}
        self._norm: dict[str, list[int]] = {}
        for k, p in enumerate(pns):
            self._norm.setdefault(normalise(p), []).append(k)
        self._rules: list[tuple[str, list[Rule]]] = []
        for m_i, m in enumerate(makers):
            name = str(m.get("name", ""))
            rules = [
                compile_rule(
                    str(rule),
                    record=name,
                    pointer=json_pointer("makers", m_i, "suffix_rules", r_i),
                )
                for r_i, rule in enumerate(m.get("suffix_rules") or [])
            ]
            if rules:
                self._rules.append((name.strip().casefold(), rules))

    def _result(self, rule: MatchRule, hits: list[int], stripped: tuple[str, ...]) -> Match:
        hits = sorted(set(hits))
        if len(hits) == 1:
            k = hits[0]
            return Match(rule, k, self._pns[k], self._makers[k], stripped)
        return Match(rule, None, None, None, stripped, tuple(self._pns[k] for k in hits))

    def match(self, text: str, maker: str | None = None) -> Match:
        """Match one BOM part number (``maker``: the BOM's maker cell, narrows ties)."""
        t = clean_cell(text)
        if not t:
            return Match("none")
        if t in self._exact:
            return self._result("exact", [self._exact[t]], ())
        hits = self._norm.get(normalise(t), [])
        if hits:
            return self._narrow(self._result("normalised", hits, ()), maker, hits, "normalised")
        # Suffix rules of each maker: strip, then look among that maker's parts.
        found: dict[int, tuple[str, ...]] = {}
        compact = re.sub(r"\s+", "", t)
        for mkey, rules in self._rules:
            cur, stripped = compact, ()
            for _ in range(MAX_SUFFIX_STRIPS):
                for rule in rules:
                    split = rule.split(cur)  # linear in the rule's length
                    if split is not None:
                        cur, suffix = split
                        stripped = (*stripped, suffix)
                        break
                else:
                    break
                ks = [
                    k
                    for k in self._norm.get(normalise(cur), [])
                    if self._makers[k].strip().casefold() == mkey
                ]
                if ks:
                    for k in ks:
                        found.setdefault(k, stripped)
                    break
        if found:
            ks = list(found)
            res = self._result("suffix", ks, found[ks[0]] if len(ks) == 1 else ())
            return self._narrow(res, maker, ks, "suffix")
        return Match("none")

    def _narrow(self, res: Match, maker: str | None, hits: list[int], rule: MatchRule) -> Match:
        if res.index is not None or not maker:
            return res
        mine = [k for k in hits if maker_matches(maker, self._makers[k])]
        return self._result(rule, mine, res.stripped) if len(mine) == 1 else res

    def close_matches(self, text: str, n: int = 3) -> list[str]:
        """Catalogue part numbers that look like ``text`` (a hint for unknown parts)."""
        key = normalise(text)
        if not key:
            return []
        pool = [k for k in self._norm if k[:2] == key[:2]] or list(self._norm)
        hits = difflib.get_close_matches(key, pool, n=n, cutoff=0.75)
        return [self._pns[self._norm[h][0]] for h in hits]
