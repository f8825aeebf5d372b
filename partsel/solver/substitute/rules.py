"""Substitute vetting: every rule for every candidate against the incumbent, as arrays.

Form (footprint: channels, package code and pinout), fit (supply and temperature range,
lifecycle), function (every catalogue parameter on the basis, like with like, within the
incumbent's own spread), behaviour (another topology, a much faster loop into a capacitive load,
an input range that no longer reaches a rail, minimum stable gain) and, with a design, the
circuit (the ranking's own checks and limits, :mod:`partsel.solver.substitute.circuit`). The
worst severity among a candidate's reasons sets its verdict (``fail``: unsuitable, ``review``,
``circuit-ok``: fits this circuit, else drop-in).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np
import pandas as pd

from partsel.errors import InputError
from partsel.params import PARAMS, Lifecycle
from partsel.physics.circuit import Design
from partsel.physics.stage import Basis, StageParams
from partsel.solver.substitute.circuit import CircuitJudgement, evaluate, summary
from partsel.solver.substitute.model import (
    _DIM_UNIT,
    _TOPOLOGY_TEXT,
    EQUAL_RTOL,
    GBW_FLAG_RATIO,
    SEVERITIES,
    VERDICTS,
    Aspect,
    Candidate,
    PartSummary,
    Reason,
    Severity,
    Verdict,
    Vetting,
    _check_basis,
    _summaries,
    find_part,
    fmt,
)
from partsel.solver.substitute.values import (
    _change_all,
    _Cols,
    _form_pool,
    _like_with_like,
    _pair_all,
    _ParamArrays,
    spread_tolerance,
)
from partsel.solver.table import PartTable

#: Parameters that the in-circuit prediction judges (so a worse value can still fit a circuit).
_JUDGED_IN_CIRCUIT: frozenset[str] = frozenset(
    {
        "supply_current",
        "cm_headroom_neg",
        "cm_headroom_pos",
        "gbw",
        "slew_rise",
        "slew_fall",
        "cap_load_limit",
        "dead_band",
        "stage_current",
        "source_limit",
        "sink_limit",
        "swing_pos",
        "swing_neg",
        "junction_max_c",
        "theta_ja_k_per_w",
    }
)
#: Parameters the circuit model does not judge, with the design requirement that limits them
#: (canonical key in ``Design.requirements["limits"]``, SI value).
_REQUIREMENT_LIMIT: dict[str, str] = {
    "offset_voltage": "max_offset",
    "bias_current": "max_bias_current",
    "noise_density": "max_noise",
}


@dataclass
class _Rule:
    """One reason, evaluated for every part at once: its severity per part ('' where it does not
    apply) and a function that words it for part ``j``."""

    aspect: Aspect
    code: str
    severity: np.ndarray  #: (P,) object array of severities or ''
    message: Callable[[int], str]


class _Vetting:
    """Every vetting rule for the candidates (rows 1.. of ``sub``) against row 0, as arrays.

    The verdict of every candidate follows from the severities alone; messages, parameter and
    in-circuit comparisons are built only for the candidates reported (:meth:`candidate`).
    """

    def __init__(
        self,
        sub: pd.DataFrame,
        summaries: list[PartSummary],
        basis: Basis,
        design: Design | None,
        package: str | None,
        circ: CircuitJudgement | None,
        stage: StageParams,
    ) -> None:
        self.sub, self.s, self.basis, self.design = sub, summaries, basis, design
        self.package, self.circ, self.stage = package, circ, stage
        self.cols = _Cols(sub)
        self.p = len(sub)
        self.rules: list[_Rule] = []
        self.params: list[_ParamArrays] = []
        self.common: list[tuple[str, ...]] = [()] * self.p
        self._form()
        self._fit()
        self._function()
        self._behaviour()
        if circ is not None:
            circ.apply(lambda code, mask, sev, msg: self.add("circuit", code, mask, sev, msg))

    # ---- helpers -----------------------------------------------------------------------------
    def add(
        self,
        aspect: Aspect,
        code: str,
        mask: np.ndarray,
        severity: Severity | np.ndarray,
        message: Callable[[int], str],
    ) -> None:
        sev = np.where(mask, severity, "").astype(object)
        sev[0] = ""
        if (sev != "").any():
            self.rules.append(_Rule(aspect, code, sev, message))

    def _str(self, attr: str) -> np.ndarray:
        return np.array([getattr(x, attr) for x in self.s], dtype=object)

    def _numattr(self, attr: str) -> np.ndarray:
        return np.array([getattr(x, attr) for x in self.s], dtype=float)

    # ---- form ----------------------------------------------------------------------------------
    def _form(self) -> None:
        inc, s, package = self.s[0], self.s, self.package
        ch = np.array([x.channels for x in s])
        self.add(
            "form",
            "channels",
            ch != inc.channels,
            "fail",
            lambda j: f"{s[j].channels} channel(s) per package; the incumbent has {inc.channels}",
        )
        inc_pk = {(c.upper(), p.upper()): c for c, p in inc.packages}
        want = {k for k in inc_pk if package is not None and k[0] == package.upper()}
        status = np.zeros(self.p, dtype=int)  # 0 ok, 1 partial (review), 2 no fit
        for j, x in enumerate(s):
            cand = {(c.upper(), p.upper()) for c, p in x.packages}
            self.common[j] = tuple(inc_pk[k] for k in inc_pk if k in cand)
            if package is not None:
                status[j] = 0 if want & cand else 2
            elif not self.common[j]:
                status[j] = 2
            elif len(self.common[j]) < len(inc_pk):
                status[j] = 1

        def conflicts(j: int) -> list[str]:
            codes = {c.upper(): p for c, p in s[j].packages}
            pk = {(c.upper(), p.upper()) for c, p in s[j].packages}
            return [
                f"{c} ({codes[c.upper()]} instead of {p})"
                for c, p in inc.packages
                if c.upper() in codes and (c.upper(), p.upper()) not in pk
            ]

        def no_fit(j: int) -> str:
            other = conflicts(j)
            if package is not None:
                msg = f"not offered in {package} with the incumbent's pinout"
                return msg + (f"; same package, other pinout: {', '.join(other)}" if other else "")
            msg = "no package with the incumbent's code and pinout"
            if other:
                msg += (
                    f"; same package, other pinout (will not fit the footprint): {', '.join(other)}"
                )
            return msg

        def partial(j: int) -> str:
            missing = [c for k, c in inc_pk.items() if c not in self.common[j]]
            return (
                f"fits the {', '.join(self.common[j])} footprint only; the incumbent also "
                f"comes in {', '.join(missing)}: give the package in use to decide"
            )

        self.add("form", "package", status == 2, "fail", no_fit)
        self.add("form", "package-partial", status == 1, "review", partial)

    # ---- fit -----------------------------------------------------------------------------------
    def _fit(self) -> None:
        inc, s, d, circ = self.s[0], self.s, self.design, self.circ
        lc = self._str("lifecycle")
        self.add("fit", "lifecycle", lc == Lifecycle.OBSOLETE.value, "fail", lambda j: "obsolete")
        self.add(
            "fit",
            "lifecycle",
            lc == Lifecycle.NOT_FOR_NEW_DESIGNS.value,
            "review",
            lambda j: "not for new designs: a lifecycle risk of its own",
        )
        known = {
            Lifecycle.ACTIVE.value,
            Lifecycle.OBSOLETE.value,
            Lifecycle.NOT_FOR_NEW_DESIGNS.value,
        }
        self.add(
            "fit",
            "lifecycle",
            np.array([x not in known for x in lc]),
            "review",
            lambda j: f"lifecycle {s[j].lifecycle or 'unknown'}",
        )
        smin, smax = self._numattr("supply_min_v"), self._numattr("supply_max_v")
        tmin, tmax = self._numattr("temp_min_c"), self._numattr("temp_max_c")
        with np.errstate(invalid="ignore"):
            cover_s = (smin <= inc.supply_min_v) & (smax >= inc.supply_max_v)
            cover_t = (tmin <= inc.temp_min_c) & (tmax >= inc.temp_max_c)

        def rng_s(x: PartSummary) -> str:
            return f"{fmt(x.supply_min_v, 'V')} .. {fmt(x.supply_max_v, 'V')}"

        def rng_t(x: PartSummary) -> str:
            return f"{x.temp_min_c:g} .. {x.temp_max_c:g} degC"

        if d is not None and circ is not None:
            self.add(
                "fit",
                "supply-range",
                ~cover_s & circ.passes("supply_min", "supply_max"),
                "circuit-ok",
                lambda j: (
                    f"supply range {rng_s(s[j])} is narrower than the incumbent's "
                    f"{rng_s(inc)} but covers the design's {fmt(d.supply.total_v, 'V')}"
                ),
            )
            self.add(
                "fit",
                "temperature",
                ~cover_t & circ.passes("temp_min", "temp_max"),
                "circuit-ok",
                lambda j: (
                    f"rated {rng_t(s[j])}, narrower than the incumbent's "
                    f"{rng_t(inc)}, but covers the design's {d.t_ambient_min_c:g} .. "
                    f"{d.t_ambient_max_c:g} degC"
                ),
            )
        else:
            self.add(
                "fit",
                "supply-range",
                ~cover_s,
                "review",
                lambda j: f"supply range {rng_s(s[j])} does not cover the incumbent's {rng_s(inc)}",
            )
            self.add(
                "fit",
                "temperature",
                ~cover_t,
                "review",
                lambda j: f"rated {rng_t(s[j])}; does not cover the incumbent's {rng_t(inc)}",
            )

    # ---- function ------------------------------------------------------------------------------
    def _function(self) -> None:
        has_design = self.design is not None
        topo = self._str("topology")
        other_topo = topo != self.s[0].topology
        typical = np.zeros((self.p, 0), dtype=bool)
        typical_keys: list[str] = []
        for pdef in PARAMS:
            sides = self.cols.sides(pdef.key)
            a, sa, b, sb, note = _pair_all(sides, pdef.worst_side, self.basis)
            change = _change_all(a, b, pdef.worse, spread_tolerance(sides, pdef.worst_side))
            if pdef.key == "stage_current":
                # pull-down, sink bias and quiescent current are different things
                mask = other_topo & (change != "unknown") & (change != "n/a")
                change[mask], note[mask] = "n/a", "other-topology"
            pa = _ParamArrays(
                pdef.key,
                _DIM_UNIT.get(pdef.dimension, ""),
                pdef.worse,
                np.broadcast_to(a, (self.p,)),
                b,
                sa,
                sb,
                change,
                note,
            )
            self.params.append(pa)
            typical = np.column_stack([typical, note == "typical"])
            typical_keys.append(pdef.key)
            self._param_rules(pa, has_design)
        for rail, label in (("swing_pos", "V+"), ("swing_neg", "V-")):
            pa = self._swing(rail)
            if pa is None:
                continue
            self.params.append(pa)
            sev: Severity = "circuit-ok" if has_design else "review"
            self.add(
                "function",
                f"worse-{rail}",
                pa.change == "worse",
                sev,
                lambda j, pa=pa, label=label: (
                    f"needs {fmt(pa.cand[j] - pa.inc[j], 'V')} "
                    f"more headroom to {label} at {fmt(float(pa.at_current_a[j]), 'A')} "  # type: ignore[index]
                    f"({fmt(pa.cand[j], 'V')} vs {fmt(pa.inc[j], 'V')})"
                ),
            )
            self.add(
                "function",
                f"unknown-{rail}",
                pa.change == "unknown",
                "review",
                lambda j, label=label: f"no swing curve to {label}",
            )
        # theta_JA is per package (the frame keeps the largest), so it is not compared here;
        # the junction check of the design uses it.
        jm = self.cols.num("junction_max_c")
        jm = np.where(np.isnan(jm), 150.0, jm)
        pa = _ParamArrays(
            "junction_max_c",
            "degC",
            "low",
            np.full(self.p, jm[0]),
            jm,
            np.full(self.p, "value", dtype=object),
            np.full(self.p, "value", dtype=object),
            _change_all(np.full(self.p, jm[0]), jm, "low"),
            np.full(self.p, "", dtype=object),
        )
        self.params.append(pa)
        self.add(
            "function",
            "worse-junction_max_c",
            pa.change == "worse",
            "circuit-ok" if has_design else "review",
            lambda j, pa=pa: pa.comparison(j).text(),
        )
        self.add(
            "function",
            "typical-only",
            typical.any(axis=1),
            "info",
            lambda j: (
                "typical values compared (the incumbent gives no guaranteed value): "
                + ", ".join(k for k, t in zip(typical_keys, typical[j], strict=True) if t)
            ),
        )

    def _param_rules(self, pa: _ParamArrays, has_design: bool) -> None:
        """Reasons for a worse, unknown or unguaranteed parameter (module docstring rules)."""
        key = pa.key
        text = pa.comparison
        worse = pa.change == "worse"
        no_g = pa.note == "no-guarantee"
        self.add(
            "function",
            f"unknown-{key}",
            pa.change == "unknown",
            "review",
            lambda j: (
                f"{key}: no value in the catalogue (the incumbent's is "
                f"{fmt(float(pa.inc[j]), pa.unit)})"
            ),
        )
        self.add(
            "function",
            f"no-guarantee-{key}",
            no_g & (pa.change != "unknown") & ~worse,
            "review",
            lambda j: (
                f"{key}: no guaranteed value, the incumbent has one (typicals "
                f"compared: {text(j).text()})"
            ),
        )
        judged = key in _JUDGED_IN_CIRCUIT
        if not has_design or not judged:
            self.add(
                "function",
                f"worse-{key}",
                worse & no_g,
                "review",
                lambda j: (
                    f"worse {text(j).text()} (typicals: no guaranteed value, the incumbent has one)"
                ),
            )
            worse = worse & ~no_g
        if not has_design:
            self.add(
                "function", f"worse-{key}", worse, "review", lambda j: f"worse {text(j).text()}"
            )
            return
        if judged:
            self.add(
                "function",
                f"worse-{key}",
                worse,
                "circuit-ok",
                lambda j: f"worse {text(j).text()}; judged in the circuit",
            )
            return
        # Not judged by the circuit model, but by the design's own limit where it sets one
        # (the ranking's offset / noise / bias-current checks: a candidate over the limit
        # fails there, see partsel.solver.substitute.circuit).
        lim = _REQUIREMENT_LIMIT.get(key)
        has_lim = (
            lim is not None
            and self.circ is not None
            and (self.circ.own.requirements.limit(lim) is not None)
        )
        self.add(
            "function",
            f"worse-{key}",
            worse,
            "circuit-ok",
            lambda j: (
                f"worse {text(j).text()}; "
                + ("within the design's limit" if has_lim else "the design sets no limit on it")
            ),
        )

    def _swing(self, rail: str) -> _ParamArrays | None:
        """Every part's headroom to ``rail`` at the incumbent's curve currents, worst point kept.

        Currents beyond a part's own source (sink) limit are left out: the curve says nothing
        there, and the limit is compared as a parameter of its own.
        """
        st = self.stage
        ii = st.swing_pos_i_a if rail == "swing_pos" else st.swing_neg_i_a
        vv = st.swing_pos_v if rail == "swing_pos" else st.swing_neg_v
        pts = [
            (float(ii[0, k]), float(vv[0, k]))
            for k in range(ii.shape[1])
            if not (math.isnan(ii[0, k]) or math.isnan(vv[0, k]))
        ]
        if not pts:
            return None
        p = self.p
        used = st.used.get(rail)
        side_c = (
            np.asarray(used, dtype=object) if used is not None else np.full(p, "typ", dtype=object)
        )
        side_i = np.full(p, side_c[0], dtype=object)
        fn = st.headroom_pos if rail == "swing_pos" else st.headroom_neg
        limit = st.source_limit_a if rail == "swing_pos" else st.sink_limit_a
        h = np.column_stack([fn(np.full(p, i_a)) for i_a, _ in pts])  # (P, K)
        cur = np.array([i_a for i_a, _ in pts])
        h_inc = np.array([v for _, v in pts])
        with np.errstate(invalid="ignore"):
            inside = ~(cur[None, :] > limit[:, None])
        diff = np.where(inside, h - h_inc[None, :], -np.inf)
        k = np.argmax(diff, axis=1)
        rows = np.arange(p)
        best = diff[rows, k]
        lo = np.min(np.where(inside, h - h_inc[None, :], np.inf), axis=1)
        tol = 1e-6
        change = np.where(best > tol, "worse", np.where(lo < -tol, "better", "equal")).astype(
            object
        )
        note = np.full(p, "", dtype=object)
        none_inside = ~inside.any(axis=1)
        no_curve = np.all(np.isnan(ii), axis=1)
        k = np.where(none_inside, 0, k)
        cand = h[rows, k]
        change[none_inside], note[none_inside] = "n/a", "beyond-limit"
        cand = np.where(none_inside, np.nan, cand)
        change[no_curve], side_c = "unknown", np.where(no_curve, "none", side_c)
        return _ParamArrays(rail, "V", "high", h_inc[k], cand, side_i, side_c, change, note, cur[k])

    # ---- behaviour -----------------------------------------------------------------------------
    def _behaviour(self) -> None:
        inc, s, d = self.s[0], self.s, self.design
        topo = self._str("topology")
        self.add(
            "behaviour",
            "topology",
            topo != inc.topology,
            "review",
            lambda j: (
                f"another output-stage topology: {s[j].topology} instead of "
                f"{inc.topology}; it is {_TOPOLOGY_TEXT.get(s[j].topology, s[j].topology)}. The "
                "output behaves differently even where its figures are better: check the "
                "circuit around it (a fix resistor or bias chosen for the incumbent's stage)"
            ),
        )
        g = self.cols.sides("gbw")
        gbw = np.where(np.isnan(g.vtyp), np.where(np.isnan(g.vmin), g.vmax, g.vmin), g.vtyp)
        c_load = d.load.c_load_f if d is not None else None
        if gbw[0] > 0 and (c_load is None or c_load > 0):
            where = (
                f"into the design's {fmt(c_load, 'F')} load capacitance"
                if c_load
                else "with any capacitive load (cable, ADC input, long trace)"
            )
            with np.errstate(invalid="ignore"):
                fast = gbw >= GBW_FLAG_RATIO * gbw[0]
            self.add(
                "behaviour",
                "gbw-cap-load",
                fast,
                "review",
                lambda j: (
                    f"gain-bandwidth {gbw[j] / gbw[0]:.3g}x the incumbent's {where}: "
                    "the faster loop has less phase margin against the load pole; check "
                    "stability and ringing"
                ),
            )
        msg = self.cols.num("min_stable_gain")
        msg = np.where(np.isnan(msg), 1.0, msg)
        higher = msg > msg[0] * (1 + EQUAL_RTOL)
        if d is not None and self.circ is not None:
            self.add(
                "behaviour",
                "min-stable-gain",
                higher & self.circ.passes("stability"),
                "circuit-ok",
                lambda j: (
                    f"stable only from a gain of {msg[j]:g} (incumbent "
                    f"{msg[0]:g}); the design's noise gain {d.noise_gain:g} is enough"
                ),
            )
            return
        self.add(
            "behaviour",
            "min-stable-gain",
            higher,
            "review",
            lambda j: (
                f"stable only from a noise gain of {msg[j]:g} (the incumbent from {msg[0]:g})"
            ),
        )
        order = ("max", "typ", "min") if self.basis == "worst-case" else ("typ", "max", "min")
        for key, rail in (("cm_headroom_neg", "V-"), ("cm_headroom_pos", "V+")):
            sd = self.cols.sides(key)
            b = np.full(self.p, np.nan)
            for side in order:
                b = np.where(np.isnan(b), sd.side(side), b)
            with np.errstate(invalid="ignore"):
                lost = (b[0] <= 0) & (b > 0)
            self.add(
                "behaviour",
                f"input-range-{key}",
                lost,
                "review",
                lambda j, b=b, rail=rail: (
                    f"input range no longer reaches {rail} (stops "
                    f"{fmt(b[j], 'V')} from it): a circuit biased near {rail} stops working"
                ),
            )

    # ---- results -------------------------------------------------------------------------------
    def verdicts(self) -> tuple[np.ndarray, dict[str, np.ndarray]]:
        """Verdict index per part (into VERDICTS) and per-part counts for the ordering."""
        rank = {sev: k for k, sev in enumerate(SEVERITIES)}
        worst = np.full(self.p, len(SEVERITIES), dtype=int)
        n = {k: np.zeros(self.p, dtype=int) for k in ("fail", "heavy", "light")}
        for r in self.rules:
            code = np.select([r.severity == sev for sev in SEVERITIES], list(rank.values()), 4)
            worst = np.minimum(worst, code)
            n["fail"] += r.severity == "fail"
            is_review = r.severity == "review"
            n["heavy" if r.aspect != "function" else "light"] += is_review
        for key in ("better", "worse", "unknown"):
            n[key] = sum((pa.change == key).astype(int) for pa in self.params)
        verdict = np.select(
            [worst == 0, worst == 1, worst == 2], [3, 2, 1], default=0
        )  # fail, review, circuit-ok, else drop-in
        return verdict, n

    def candidate(self, j: int, verdict: Verdict) -> Candidate:
        order = {s: i for i, s in enumerate(SEVERITIES)}
        reasons = [
            Reason(r.aspect, r.severity[j], r.code, r.message(j))
            for r in self.rules
            if r.severity[j]
        ]
        reasons.sort(key=lambda r: order[r.severity])
        circuit = None if self.circ is None else self.circ.rows(j)
        return Candidate(
            self.s[j],
            verdict,
            tuple(reasons),
            tuple(pa.comparison(j) for pa in self.params),
            circuit,
            self.common[j],
            None if self.circ is None else bool(self.circ.feasible[j]),
            None if self.circ is None else summary(self.circ.own, j),
        )


def vet_substitutes(
    catalogue: PartTable | pd.DataFrame,
    incumbent: str,
    design: Design | None = None,
    basis: Basis | None = None,
    *,
    candidates: Sequence[str] | None = None,
    package: str | None = None,
    include_unsuitable: bool = False,
    limit: int | None = None,
    passing_first: bool = False,
) -> Vetting:
    """Vet substitutes for ``incumbent`` (a part number in ``frame``), best first.

    Parameters
    ----------
    frame: the parts table (:func:`partsel.catalogue.parts_frame`).
    incumbent: part number to replace (case-insensitive).
    design: optional circuit: judges fit against its rails and ambient, and compares the
        in-circuit behaviour of every candidate with the incumbent's.
    basis: ``"worst-case"`` (guaranteed values; default) or ``"typical"``.
    candidates: part numbers to vet (default: every part with the incumbent's channel count and
        a package of the same code and pinout). Named candidates are always reported.
    package: the package code on the board (e.g. ``"SO-8"``); without it a candidate that
        fits only some of the incumbent's packages needs review.
    include_unsuitable: also list unsuitable candidates from the default pool.
    limit: at most this many candidates.
    passing_first: with a design, candidates that pass every in-circuit check come first
        (for a circuit the incumbent itself fails; the BOM check uses it).

    Every rule is evaluated for all candidates at once (arrays along the part axis); the
    reasons and comparisons are worded only for the candidates returned.

    Raises :class:`~partsel.errors.InputError` for an unknown part number, a package the
    incumbent does not come in, or an unknown basis.
    """
    frame = catalogue.frame if isinstance(catalogue, PartTable) else catalogue
    if basis is None:
        basis = _design_basis(design)
    basis = _check_basis(basis)
    inc = find_part(frame, incumbent)
    inc_summary = _summaries(frame.iloc[[inc]])[0]
    if package is not None and not any(
        c.upper() == package.strip().upper() for c, _ in inc_summary.packages
    ):
        offered = ", ".join(c for c, _ in inc_summary.packages) or "none"
        raise InputError(
            f"{inc_summary.part_number} does not come in {package!r} (offered: {offered})",
            pointer="/package",
        )
    package = package.strip() if package is not None else None
    if candidates is not None:
        rows = []
        for pn in candidates:
            k = find_part(frame, pn)
            if k != inc and k not in rows:
                rows.append(k)
        pool = np.array(rows, dtype=int)
        keep_unsuitable = True
    else:
        if include_unsuitable:
            pool = np.flatnonzero(np.arange(len(frame)) != inc)
        else:
            pool = _form_pool(frame, inc)
        keep_unsuitable = include_unsuitable
    sub = frame.iloc[np.concatenate([[inc], pool]).astype(int)].reset_index(drop=True)
    like = _like_with_like(sub, basis)
    stage = StageParams.from_columns(like, basis)
    circ = None
    if design is not None:
        own = evaluate(sub, design, basis)
        circ = CircuitJudgement(own, evaluate(like, design, basis) if like is not sub else own)
    summaries = _summaries(sub)
    vet = _Vetting(sub, summaries, basis, design, package, circ, stage)
    verdict, n = vet.verdicts()
    idx = np.arange(1, len(sub))
    if not keep_unsuitable:
        idx = idx[verdict[idx] != VERDICTS.index("unsuitable")]
    price = [x.price if math.isfinite(x.price) else math.inf for x in summaries]
    passing = circ.feasible if (passing_first and circ is not None) else None

    def key(j: int) -> tuple[Any, ...]:
        """The order of :data:`SORT_ORDER` (:meth:`Candidate.sort_key`), from the arrays."""
        second = (not bool(passing[j]),) if passing is not None else ()
        return (
            int(verdict[j]),
            *second,
            int(n["fail"][j]),
            int(n["heavy"][j] + n["worse"][j] + n["unknown"][j]),
            int(n["light"][j]),
            -int(n["better"][j]),
            price[j],
            summaries[j].part_number.casefold(),
        )

    order = sorted(idx.tolist(), key=key)
    if limit is not None:
        order = order[: max(int(limit), 0)]
    out = [vet.candidate(j, VERDICTS[int(verdict[j])]) for j in order]
    inc_circ = circ.incumbent_rows() if circ is not None else None
    return Vetting(
        incumbent=summaries[0],
        basis=basis,
        design_name=design.name if design is not None else None,
        package=package,
        candidates=tuple(out),
        incumbent_circuit=inc_circ,
        considered=int(pool.size),
        incumbent_in_circuit=summary(circ.own, 0) if circ is not None else None,
    )


def _design_basis(design: Design | None) -> Basis:
    """The basis of a vetting without an override: the design's (the one rule of every door,
    :func:`partsel.api.resolve_requirements`), else worst-case (guaranteed values)."""
    if design is None:
        return "worst-case"
    from partsel.solver.requirements import Requirements

    return Requirements.from_mapping(
        design.requirements, file=design.source, record=design.name
    ).basis
