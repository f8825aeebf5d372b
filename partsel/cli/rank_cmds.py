"""Ranking commands: ``rank`` (shortlist for a design) and ``explain`` (one part's verdict).

``rank`` exits 0 when at least one part is feasible, 1 when none is, 2 for bad input;
``explain`` exits 0 when the part is feasible, 1 when it is rejected, 2 for bad input.
Every glitch and THD figure is the closed-form estimate of partsel's macro-model.
"""

from __future__ import annotations

import math
import sys
from pathlib import Path
from typing import TYPE_CHECKING, Annotated, Any

import typer
from rich.markup import escape
from rich.table import Table

from partsel import present as P
from partsel.cli.common import (
    BasisOpt,
    DesignArg,
    ExitCode,
    JsonFlag,
    bad_input_exits,
    data_table,
    database_errors_exit,
    echo_json,
    fail_bad_input,
    load_design,
    message,
    out_console,
    session,
)
from partsel.errors import InputError

if TYPE_CHECKING:
    import numpy as np

    from partsel.solver import Ranking


def _solve(ctx: typer.Context, design_path: Path, basis: str | None) -> Ranking:
    """The session's ranking of the design (InputError for bad input)."""
    s = session(ctx)
    return s.rank(load_design(design_path), basis=basis)


# ---- formatting for people --------------------------------------------------------------------


fmt_unit = P.quantity
fmt_thd = P.thd
_TOPO = P.TOPOLOGY_SHORT


def _console() -> Any:
    """Console for data on stdout (see :func:`partsel.cli.common.out_console`)."""
    return out_console()


def _crossover(r: Ranking, i: int) -> str:
    """Handover of the output stage: the output level where it happens, or none."""
    from partsel.solver.export import verdict_text

    v = verdict_text(r, i)
    if v == "changes-mode":
        lvl = r.prediction.handover_out_v[i]
        return f"at {lvl:.3g} V" if math.isfinite(lvl) else "yes"
    return {"marginal": "marginal", "biased": "none (biased)", "one-mode": "none"}[v]


def _fix(r: Ranking, i: int) -> str:
    fx = r.fix
    if not fx.needed[i]:
        return "—"
    if not fx.works[i]:
        return "none works"
    mark = " ✓" if fx.applied[i] else ""
    return f"{P.si(float(fx.r_ohm[i]), 'ohm', symbols=True)} to {P.rail(str(fx.rail[i]))}{mark}"


def _miss(r: Ranking, i: int, j: int) -> str:
    from partsel.solver import checks as C

    c = C.CHECKS[j]
    st = int(r.checks.status[i, j])
    if st == C.UNKNOWN:
        return "no data"
    m = r.checks.margin[i, j]
    rt = r.checks.ratio[i, j]
    if c.sense == "is" or not math.isfinite(m):
        if c.name == "fix_resistor":
            return str(r.fix.reason[i]) or "no resistor works"
        return "not accepted"
    text = f"{fmt_unit(float(m), P.difference_unit(c.display_unit))}"
    if math.isfinite(rt):
        text += f" (×{rt:.2f})"
    return text


def _rank_table(r: Ranking, rows: np.ndarray) -> Table:
    from partsel.solver import checks as C

    t = data_table(
        "#",
        "Part",
        "Stage",
        "Lifecycle",
        "Score",
        "Pareto",
        "Handover",
        "Glitch",
        "THD est.",
        "Fix",
        "Supply I",
        "Price",
        "Tightest",
        keep=("Part",),
    )
    ch = r.checks
    for i in rows:
        j = int(r.tightest[i])
        tight = "—" if j < 0 else f"{P.check_label(C.CHECKS[j].name)} ×{ch.ratio[i, j]:.2g}"
        t.add_row(
            str(r.rank[i]),
            str(r.table.part_number[i]),
            _TOPO.get(str(r.table.topology[i]), str(r.table.topology[i])),
            P.lifecycle(str(r.table.lifecycle[i])),
            f"{r.score[i]:.1f}",
            "yes" if r.pareto[i] else "",
            _crossover(r, i),
            fmt_unit(float(r.prediction.glitch_v[i]), "V") if r.prediction.handover[i] else "—",
            fmt_thd(float(r.prediction.thd_estimate[i]))
            + (f" → {fmt_thd(float(ch.value[i, C.IDX['thd']]))}" if r.fix.applied[i] else ""),
            _fix(r, i),
            fmt_unit(float(ch.value[i, C.IDX["supply_current"]]), "A"),
            fmt_unit(float(ch.value[i, C.IDX["price"]]), "currency unit"),
            tight,
        )
    return t


def _miss_table(r: Ranking, rows: np.ndarray) -> Table:
    from partsel.solver import checks as C

    t = data_table(
        "Part",
        "Maker",
        "Stage",
        "Lifecycle",
        "Fails",
        "Binding check",
        "Misses by",
        "Fix",
        title="Nearest misses",
        keep=("Part",),
    )
    for i in rows:
        j = int(r.binding[i])
        t.add_row(
            str(r.table.part_number[i]),
            str(r.table.text("maker")[i]),
            _TOPO.get(str(r.table.topology[i]), str(r.table.topology[i])),
            P.lifecycle(str(r.table.lifecycle[i])),
            str(int(r.n_failing[i])),
            P.check_label(C.CHECKS[j].name),
            _miss(r, i, j),
            _fix(r, i),
        )
    return t


def _hint_value(requirement: str, unit: str, value: Any) -> str:
    from partsel.solver.requirements import LIMIT_BY_KEY

    if isinstance(value, list | tuple):
        return ", ".join(str(v) for v in value)
    if isinstance(value, str):
        return value
    if requirement in LIMIT_BY_KEY and LIMIT_BY_KEY[requirement].dimension == "dimensionless":
        if requirement in ("max_thd", "max_gain_error"):
            return P.percent(value, 3)
        return f"{value:.3g}"
    return fmt_unit(float(value), unit)


def hint_lines(r: Ranking, limit: int = 6) -> list[str]:
    """Relaxation hints as sentences."""
    out = []
    for h in r.hints[:limit]:
        first, last = h.steps[0], h.steps[-1]
        cur = _hint_value(h.requirement, h.unit, h.current)
        line = (
            f"relax {h.requirement} from {cur} to "
            f"{_hint_value(h.requirement, h.unit, first.value)}: +{first.admits} "
            f"({', '.join(first.parts)})"
        )
        if last is not first:
            line += f"; to {_hint_value(h.requirement, h.unit, last.value)}: +{last.admits}"
        out.append(line)
    if out and r.requirements.limit("min_yield") is not None:
        # the parts a hint admits are then judged on their boards, which it cannot foresee
        out.append("(counted before the yield: a part admitted must still reach min_yield)")
    return out


# ---- commands ---------------------------------------------------------------------------------


def rank_cmd(
    ctx: typer.Context,
    design: DesignArg,
    top: Annotated[
        int, typer.Option("--top", "-n", help="Parts to list (0: all).", min=0, max=10**7)
    ] = 10,
    basis: BasisOpt = None,
    json_out: JsonFlag = False,
    csv_out: Annotated[
        bool, typer.Option("--csv", help="Print CSV on stdout (one row per listed part).")
    ] = False,
) -> None:
    """Rank the catalogue for a design: feasible parts by score, then the nearest misses.

    Exit code 0 when at least one part is feasible, 1 when none is, 2 for bad input.
    """
    from partsel.io.csvout import write_frame
    from partsel.solver.export import CAUTION, THD_LABEL, ranking_dict, ranking_frame

    with bad_input_exits(json_out=json_out):
        if json_out and csv_out:
            raise InputError("choose one of --json and --csv", pointer="/json")
        r = _solve(ctx, design, basis)
    code = ExitCode.OK if r.n_feasible > 0 else ExitCode.FINDINGS
    if json_out:
        echo_json(ranking_dict(r, top or None))
        raise typer.Exit(code)
    if csv_out:
        write_frame(ranking_frame(r, top or None), sys.stdout)
        raise typer.Exit(code)
    con = _console()
    req = r.requirements
    con.print(
        f"[bold]{escape(r.design.name)}[/bold]: {r.n_feasible} of {r.n} parts feasible "
        f"({req.basis} basis from the {req.source('basis')}, conduction {req.conduction}; "
        f"Pareto over {', '.join(req.pareto_objectives)})"
    )
    k = top or r.n
    feas = r.order[: min(k, r.n_feasible)]
    if feas.size:
        con.print(_rank_table(r, feas))
        if feas.size < r.n_feasible:
            con.print(f"{feas.size} of {r.n_feasible} feasible parts shown (-n 0 for all)")
    if r.n_feasible < min(k, 5):
        rej = r.order[r.n_feasible : r.n_feasible + max(3, min(k, 10) - feas.size)]
        if rej.size:
            con.print(_miss_table(r, rej))
        lines = hint_lines(r)
        if lines:
            con.print("Relaxation hints (one requirement at a time):")
            for line in lines:
                con.print(f"  {line}")
    message(
        f"THD est.: {THD_LABEL}. Fix ✓ (THD → with the fix): the "
        "verdict is for the part with that resistor fitted, which keeps the stage in one mode."
    )
    message(CAUTION)
    raise typer.Exit(code)


def explain(
    ctx: typer.Context,
    design: DesignArg,
    part: Annotated[str, typer.Argument(help="Part number.")],
    basis: BasisOpt = None,
    json_out: JsonFlag = False,
) -> None:
    """Explain one part's verdict in a design in full: every check, the fix, the score.

    Exit code 0 when the part is feasible, 1 when it is rejected, 2 for bad input.
    """
    import numpy as np

    from partsel.solver.export import CAUTION, THD_LABEL, options_dict, part_dict
    from partsel.solver.pareto import dominators
    from partsel.solver.relax import part_relaxation

    with bad_input_exits(json_out=json_out):
        r = _solve(ctx, design, basis)
    try:
        i = r.index(part)
    except KeyError:
        fail_bad_input(
            InputError(f"no part {part!r} in the catalogue", record=part, pointer="/part"),
            json_out=json_out,
        )
    feas_idx = np.flatnonzero(r.feasible)
    dom = (
        dominators(r.pareto_costs, i, among=feas_idx)
        if r.feasible[i] and not r.pareto[i]
        else np.array([], dtype=int)
    )
    dom = dom[np.argsort(r.table.part_key[dom], kind="stable")]
    code = ExitCode.OK if r.feasible[i] else ExitCode.FINDINGS
    own_hints = part_relaxation(r, i)
    if json_out:
        data = part_dict(r, i)
        data["design"] = {"name": r.design.name, "source": r.design.source}
        data["options"] = options_dict(r)
        data["dominated_by"] = [str(r.table.part_number[k]) for k in dom]
        data["thd_definition"] = THD_LABEL
        data["relax"] = [
            {"requirement": k, "unit": u, "current": c, "value": v} for k, u, c, v in own_hints
        ]
        echo_json(data)
        raise typer.Exit(code)
    _explain_text(r, i, dom, own_hints)
    message(CAUTION)
    raise typer.Exit(code)


def _explain_text(r: Ranking, i: int, dom: np.ndarray, own_hints: list[Any]) -> None:
    from partsel.report import fix_lines
    from partsel.solver import checks as C
    from partsel.solver.export import fix_dict, part_checks
    from partsel.solver.messages import failing_messages

    con = _console()
    t, req, p = r.table, r.requirements, r.prediction
    con.print(
        f"[bold]{t.part_number[i]}[/bold]  {t.text('maker')[i]} — {t.topology[i]}, "
        f"{int(t.channels[i]) if math.isfinite(t.channels[i]) else '?'} channel(s), "
        f"{t.lifecycle[i]}"
    )
    con.print(
        f"design: {r.design.name} ({req.basis} basis from the {req.source('basis')}, "
        f"conduction {req.conduction})",
        markup=False,
    )
    if r.feasible[i]:
        where = "in the Pareto set" if r.pareto[i] else "not in the Pareto set"
        con.print(
            f"verdict: [bold]feasible[/bold], rank {r.rank[i]} of {r.n_feasible}, "
            f"score {r.score[i]:.1f}, {where} ({', '.join(req.pareto_objectives)})"
        )
        if dom.size:
            names = ", ".join(str(t.part_number[k]) for k in dom[:8])
            con.print(f"  dominated by: {names}")
    else:
        j = int(r.binding[i])
        con.print(
            f"verdict: [bold]rejected[/bold] by {int(r.n_failing[i])} check(s); binding: "
            f"{P.check_label(C.CHECKS[j].name)}, misses by {_miss(r, i, j)}"
        )
        for name, text in failing_messages(r, i):
            con.print(f"  {P.check_label(name)}: {text}", markup=False)
    cross = _crossover(r, i)
    line = f"handover (closed form): {cross}"
    if p.handover[i]:
        line += (
            f", output held near {fmt_unit(float(p.flat_level_v[i]), 'V')}, glitch "
            f"{fmt_unit(float(p.glitch_v[i]), 'V')}, THD estimate "
            f"{fmt_thd(float(p.thd_estimate[i]))}"
        )
    con.print(line)
    con.print(
        f"  smallest source current {fmt_unit(float(p.min_source_a[i]), 'A')} "
        f"(stage current {fmt_unit(float(p.stage_current_a[i]), 'A')})"
    )
    for line in fix_lines(fix_dict(r, i)):
        con.print(line.strip() if line.startswith("  Fix") else line, markup=False)
    table = Table("check", "status", "value", "limit", "margin", "ratio", "values used")
    ch = r.checks
    for row, c in zip(part_checks(r, i), C.CHECKS, strict=True):
        status = row["status"]
        style = "bold red" if status in ("fail", "unknown") else ""
        if c.sense == "is":
            value = str(row["value"])
            if c.name == "channels" and row["value"] is not None:
                value = f"{row['value']:g}"
            lim = "any" if row["limit"] is None else ", ".join(map(str, row["limit"]))
            margin = ratio = ""
        else:
            value = fmt_unit(row["value"], c.display_unit)
            lim = fmt_unit(row["limit"], c.display_unit)
            margin = fmt_unit(row["margin"], P.difference_unit(c.display_unit))
            ratio = "—" if row["ratio"] is None else f"{row['ratio']:.3g}"
            if row["ratio"] is None and math.isinf(float(ch.ratio[i, C.IDX[c.name]])):
                ratio = "∞"
        sides = " ".join(f"{k}:{v}" for k, v in row["values_used"].items() if v != "none")
        table.add_row(P.check_label(c.name), f"[{style}]{status}[/]" if style else status,
                      value, lim, margin, ratio, sides)  # fmt: skip
    con.print(table)
    if r.feasible[i]:
        st = Table("objective", "metric", "u (0 best)", "weight", title="Score")
        for name, w in req.objectives:
            u = r.utility[name][i]
            st.add_row(
                name,
                f"{r.metrics[name][i]:.4g}",
                "—" if not math.isfinite(u) else f"{u:.3f}",
                f"{w:g}",
            )
        con.print(st)
    if own_hints and not r.feasible[i]:
        con.print("to admit this part:")
        for key, unit, current, value in own_hints:
            con.print(
                f"  relax {key} from {_hint_value(key, unit, current)} "
                f"to {_hint_value(key, unit, value)}"
            )


def register(app: typer.Typer) -> None:
    """Add the ranking commands to ``app``."""
    app.command("rank")(database_errors_exit(rank_cmd))
    app.command("explain")(database_errors_exit(explain))
