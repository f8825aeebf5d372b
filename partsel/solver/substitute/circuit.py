"""Substitutes in the circuit: the incumbent and every candidate judged by the ranking itself.

There is one set of in-circuit checks in partsel, the ranking's (:mod:`partsel.solver.checks`,
run by :func:`partsel.solver.solve.rank` with the design's own limits and conduction mode), so a
candidate is judged here exactly as ``partsel rank`` judges it: the same verdict, the same fix
resistor, the same THD estimate. Vetting then compares check by check:

* the candidate fails a check the incumbent passes: ``fail`` (unsuitable), unless it passes on
  the like-with-like values (the incumbent gives only typicals there): ``review``;
* both fail a check: ``review``, worded "fails ... like the incumbent" (a part that fails the
  circuit is never a drop-in);
* it passes where the incumbent fails: ``info``;
* both pass, but the candidate's margin is smaller by more than the tolerance
  (:data:`~partsel.solver.substitute.model.CIRCUIT_RTOL`, ``CIRCUIT_ATOL``): ``circuit-ok``
  (fits this circuit); for a figure the design sets no limit on, a higher THD estimate or
  glitch is a ``review``;
* it needs the fix resistor where the incumbent needs none: ``review`` (a change to the board),
  as is a stage left marginal where the incumbent's was not.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

import numpy as np
import pandas as pd

from partsel import present as P
from partsel.physics.circuit import Design
from partsel.physics.stage import Basis
from partsel.solver import checks as C
from partsel.solver.export import fix_dict, part_checks, prediction_fields, thd_is_bound
from partsel.solver.messages import check_message
from partsel.solver.requirements import Requirements
from partsel.solver.solve import Ranking, rank
from partsel.solver.substitute.model import (
    CIRCUIT_ATOL,
    CIRCUIT_RTOL,
    CircuitComparison,
    Severity,
)
from partsel.solver.table import PartTable

#: THD_F (ratio) below which a candidate's higher estimate is not a behaviour change worth a
#: review: 0.01 %, -80 dB, below what a listener or a 12-bit converter resolves (common
#: practice). Above it every increase is reported.
THD_NEGLIGIBLE = 1e-4

#: Checks a design without a limit still compares (a worse figure is worth a word).
_UNLIMITED_COMPARED: dict[str, Severity] = {
    "thd": "review",
    "glitch": "review",
    "supply_current": "circuit-ok",
}
#: Checks whose margin is not compared: the fix resistor is judged by the conduction rules
#: (a smaller resistor's cost is its supply current, compared on its own).
_NOT_COMPARED = frozenset({"fix_resistor"})
#: Checks the vetting's own form and fit rules word better (they are still judged here).
_FIT_CHECKS = frozenset({"supply_min", "supply_max", "temp_min", "temp_max"})

AddRule = Callable[[str, np.ndarray, Severity, Callable[[int], str]], None]


def requirements_for(design: Design, basis: Basis) -> Requirements:
    """The design's requirements on the vetting's basis (everything else as the design says)."""
    req = Requirements.from_mapping(design.requirements, file=design.source, record=design.name)
    return req.override(basis=basis) if basis != req.basis else req


def evaluate(frame: pd.DataFrame, design: Design, basis: Basis) -> Ranking:
    """The ranking's evaluation of the parts of ``frame`` (row 0: the incumbent) in
    ``design`` (no relaxation hints: they mean nothing for a handful of parts)."""
    return rank(PartTable(frame), design, requirements_for(design, basis), hints=False)


def summary(r: Ranking, k: int) -> dict[str, Any]:
    """The ranking's evaluation of part ``k`` in a few fields (the same as ``partsel rank``)."""
    return {
        "basis": r.requirements.basis,
        "verdict": str(r.verdict[k]),
        "thd_estimate": _num(r.checks.value[k, C.IDX["thd"]]),
        "thd_is_bound": thd_is_bound(r, k),
        "prediction": prediction_fields(r, k),
        "fix": fix_dict(r, k),
        "failing": [
            {"check": C.CHECKS[j].name, "message": check_message(r, k, C.CHECKS[j].name)}
            for j in np.flatnonzero(r.checks.failing[k])
        ],
    }


def _num(x: Any) -> float | None:
    v = float(x)
    return v if np.isfinite(v) else None


@dataclass
class CircuitJudgement:
    """The in-circuit rules for every candidate (rows 1..) against the incumbent (row 0)."""

    own: Ranking  #: every part on its own values
    like: Ranking  #: the candidates' guarantees dropped where the incumbent gives none

    @property
    def p(self) -> int:
        return self.own.n

    def passes(self, *names: str) -> np.ndarray:
        """(P,) True where every check of ``names`` passes (or does not apply)."""
        out = np.ones(self.p, dtype=bool)
        for name in names:
            out &= ~self.own.checks.failing[:, C.IDX[name]]
        return out

    @property
    def feasible(self) -> np.ndarray:
        return self.own.feasible

    def incumbent_rows(self) -> tuple[dict[str, Any], ...]:
        """The incumbent's checks in the design (the ranking's rows)."""
        return tuple(part_checks(self.own, 0))

    def comparisons(self) -> list[tuple[C.CheckDef, np.ndarray]]:
        """Per numeric check, the change of every part's margin against the incumbent's."""
        out = []
        lk = self.like.checks
        for j, c in enumerate(C.CHECKS):
            if c.sense == "is":
                continue
            mi, mc = lk.margin[0, j], lk.margin[:, j]
            vi, vc = lk.value[0, j], lk.value[:, j]
            ignored = lk.status[:, j] == C.IGNORED
            # without a limit compare the value itself (lower is better for a "max" check)
            a = np.where(ignored, -vc if c.sense == "max" else vc, mc)
            b = -vi if c.sense == "max" else vi
            ref = np.where(ignored, b, mi)
            out.append((c, _change(ref, a, c.unit)))
        return out

    def rows(self, k: int) -> tuple[CircuitComparison, ...]:
        """Candidate ``k``'s checks against the incumbent's, as plain data."""
        own, lk = self.own.checks, self.like.checks
        names = C.STATUS_NAMES
        out = []
        for c, change in self.comparisons():
            j = C.IDX[c.name]
            out.append(
                CircuitComparison(
                    c.name,
                    c.unit,
                    float(lk.value[0, j]),
                    float(lk.value[k, j]),
                    float(lk.margin[0, j]),
                    float(lk.margin[k, j]),
                    names[int(own.status[0, j])],
                    names[int(own.status[k, j])],
                    change[k],
                )
            )
        return tuple(out)

    def apply(self, add: AddRule) -> None:
        """Add the in-circuit reasons through ``add(code, mask, severity, message)``."""
        own, like = self.own, self.like
        st, st_like = own.checks.status, like.checks.status
        failing, failing_like = own.checks.failing, like.checks.failing
        changes = dict((c.name, ch) for c, ch in self.comparisons())
        for j, c in enumerate(C.CHECKS):
            name = c.name
            code = f"circuit-{name}"
            label = P.check_label(name)

            def msg(k: int, name: str = name) -> str:
                return check_message(own, k, name)

            fails, inc_fails = failing[:, j], bool(failing[0, j])
            if name == "conduction":
                self._conduction(add, j)
                continue
            if inc_fails:
                add(code, fails, "review", lambda k, m=msg, lb=label: f"fails {lb} like the "
                    f"incumbent: {m(k)}")  # fmt: skip
                add(code, ~fails, "info", lambda k, lb=label: f"{lb}: passes where the "
                    "incumbent fails")  # fmt: skip
                continue
            only_own = fails & ~failing_like[:, j]
            add(code, only_own, "review", lambda k, m=msg: f"{m(k)} on its guaranteed values; "
                "the incumbent gives only typical values here, and on those both pass")  # fmt: skip
            add(code, fails & failing_like[:, j], "review" if name in _FIT_CHECKS else "fail",
                msg)  # fmt: skip
            if name == "cap_load":
                warn = (st[:, j] == C.WARN) & (st[0, j] != C.WARN)
                add(code, warn, "review", msg)
            if name not in changes:
                continue
            worse = ~fails & (changes[name] == "worse")
            ignored = st_like[:, j] == C.IGNORED
            if name in _FIT_CHECKS:
                continue  # the fit rules word these
            sev_unlimited = _UNLIMITED_COMPARED.get(name)
            vi = float(like.checks.value[0, j])
            vc = like.checks.value[:, j]
            if sev_unlimited is not None:
                mask = worse & ignored
                if name == "thd":
                    mask &= np.maximum(vi, vc) > THD_NEGLIGIBLE
                elif name == "glitch":
                    mask &= (vi > 0) | (vc > 0)
                add(code, mask, sev_unlimited, lambda k, c=c, vc=vc, vi=vi: (
                    f"{P.check_label(c.name)}: {P.quantity(float(vc[k]), c.display_unit)} vs "
                    f"{P.quantity(vi, c.display_unit)} for the incumbent (the design sets no "
                    "limit on it)"))  # fmt: skip
            if st[0, j] == C.PASS and name not in _NOT_COMPARED:
                add(code, worse & ~ignored, "circuit-ok", lambda k, c=c: _worse_text(like, c, k))

    def _conduction(self, add: AddRule, j: int) -> None:
        own = self.own
        st = own.checks.status[:, j]
        fx, pr = own.fix, own.prediction
        fails = own.checks.failing[:, j]
        inc_needs = bool(fx.needed[0])
        code = "circuit-conduction"

        def msg(k: int) -> str:
            return check_message(own, k, "conduction")

        if bool(fails[0]):
            add(code, fails, "review", lambda k: f"fails the conduction check like the "
                f"incumbent: {msg(k)}")  # fmt: skip
        else:
            add(code, fails, "fail", msg)
        fixed = st == C.FIXED
        if inc_needs:
            add(code, fixed, "info", lambda k: "needs a fix resistor like the incumbent: "
                + P.fix_summary(fx, k))  # fmt: skip
        else:
            add(code, fixed, "review", lambda k: "changes conduction mode where the incumbent "
                "does not; passes with a fix resistor the board must add: "
                + P.fix_summary(fx, k))  # fmt: skip
            allowed = (st == C.IGNORED) & fx.needed
            add(code, allowed, "review", lambda k: f"{msg(k)} (the design allows it; the "
                "incumbent stays in one mode)")  # fmt: skip
        marg_i = bool(pr.marginal[0]) or bool(pr.handover[0])
        if not marg_i:
            add(code + "-marginal", pr.marginal & ~fx.needed, "review", lambda k: (
                "stays in source mode only barely: least source-device current "
                f"{P.quantity(float(pr.min_source_a[k]), 'A')} of a stage current of "
                f"{P.quantity(float(pr.stage_current_a[k]), 'A')} (audible distortion near the "
                "handover level)"))  # fmt: skip


def _worse_text(r: Ranking, c: C.CheckDef, k: int) -> str:
    """A passing check that is worse than the incumbent's, in words: the values against the
    limit for an upper limit (THD, supply current...), the margins for a lower one (swing...)."""
    j = C.IDX[c.name]
    ch = r.checks
    u = c.display_unit
    label = P.check_label(c.name)
    if c.sense == "max":
        return (
            f"{label} {P.quantity(float(ch.value[k, j]), u)} vs "
            f"{P.quantity(float(ch.value[0, j]), u)} for the incumbent (limit "
            f"{P.quantity(float(ch.limit[k, j]), u)}); still passes"
        )
    du = P.difference_unit(u)
    return (
        f"{label}: margin {P.quantity(float(ch.margin[k, j]), du)} vs "
        f"{P.quantity(float(ch.margin[0, j]), du)} for the incumbent; still passes"
    )


def _change(ref: np.ndarray | float, x: np.ndarray, unit: str) -> np.ndarray:
    """better / equal / worse of ``x`` against ``ref`` (higher is better), within the
    in-circuit tolerances; n/a where the incumbent has no figure, unknown where the part has
    none."""
    ref = np.broadcast_to(np.asarray(ref, dtype=float), x.shape)
    out = np.full(x.shape, "equal", dtype=object)
    with np.errstate(invalid="ignore"):
        fin = np.isfinite(ref)
        tol = np.maximum(np.where(fin, CIRCUIT_RTOL * np.abs(ref), 0.0), CIRCUIT_ATOL.get(unit, 0))
        diff = x - ref
        out[diff < -tol] = "worse"
        out[diff > tol] = "better"
        same_inf = np.isinf(ref) & np.isinf(x) & (np.sign(ref) == np.sign(x))
    out[same_inf] = "equal"
    out[np.isnan(x)] = "unknown"
    out[np.isnan(ref)] = "n/a"
    return out
