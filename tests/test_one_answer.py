"""One answer per design: every door gives a part the same basis, verdict, fix and THD estimate.

For every sample design and every part of the sample catalogue, the answer of ``rank --json`` is
compared with ``predict --json``, ``explain --json``, ``vet -d --json`` (every part as a
candidate), ``bom-check --json`` (a BOM listing every part against the design) and the terminal
UI's exported ranking. They must agree exactly on basis, verdict, fix rail, value and rule,
and to 1e-12 on the THD figures (a batch of FFTs rounds the last bit differently for one part
and for many: numpy's pocketfft works on several rows at once): they are one evaluation
(:class:`partsel.api.Session`), so any difference is a second copy of a rule. Nothing here is
a physics reference; the physics is checked elsewhere against ngspice and analytic results.
"""

from __future__ import annotations

import asyncio
import csv
import json
from collections.abc import Callable
from pathlib import Path
from typing import Any

import pytest
from test_tui_support import SAMPLE_DESIGNS, SIZE, build_sample_db, copy_sample_db, settle
from typer.testing import CliRunner, Result

PROJECT = Path(__file__).resolve().parents[1]
DESIGNS = sorted(SAMPLE_DESIGNS.glob("*.toml"))

Answer = dict[str, Any]


def _figure(x: Any) -> Any:
    """A THD figure to 12 significant digits (see the module docstring)."""
    return x if x is None else float(f"{x:.12g}")


def answer(basis: str, verdict: str, fix: dict[str, Any], thd: Any, thd_designed: Any) -> Answer:
    """The fields every door must agree on."""
    return {
        "basis": basis,
        "verdict": verdict,
        "fix_rail": fix["rail"],
        "fix_ohm": fix["resistance_ohm"],
        "fix_rule": fix.get("rule"),
        "thd": _figure(thd),
        "thd_as_designed": _figure(thd_designed),
    }


def of_part(d: dict[str, Any]) -> Answer:
    """From a part of the ranking / prediction / explain JSON."""
    return answer(
        d["basis"], d["verdict"], d["fix"], d["thd_estimate"], d["prediction"]["thd_estimate"]
    )


def of_evaluation(e: dict[str, Any]) -> Answer:
    """From the ``in_circuit`` / ``evaluation`` of a vetting or BOM line."""
    return answer(
        e["basis"], e["verdict"], e["fix"], e["thd_estimate"], e["prediction"]["thd_estimate"]
    )


@pytest.fixture(scope="module")
def sample_file(tmp_path_factory: pytest.TempPathFactory) -> Path:
    return build_sample_db(tmp_path_factory)


@pytest.fixture(scope="module")
def run(sample_file: Path) -> Callable[..., Result]:
    from partsel.cli.main import app

    runner = CliRunner()
    url = f"sqlite:///{sample_file}"

    def invoke(*args: str | Path) -> Result:
        r = runner.invoke(app, ["--db", url, *map(str, args)])
        assert r.exception is None or isinstance(r.exception, SystemExit), r.exception
        return r

    return invoke


def tui_export(sample_file: Path, tmp_path: Path, design: Path) -> list[dict[str, Any]]:
    """The UI's exported ranking (its own writer, the same as rank --json) for ``design``."""
    from partsel.tui.app import PartselApp

    engine = copy_sample_db(sample_file, tmp_path)
    app = PartselApp(engine, design=design, simulate=False, work_dir=tmp_path)
    out = tmp_path / "export.json"

    async def main() -> None:
        async with app.run_test(size=SIZE) as pilot:
            await settle(pilot)
            assert app.ranking is not None
            app.export_ranking(out)

    asyncio.run(main())
    engine.dispose()
    return json.loads(out.read_text(encoding="utf-8"))["parts"]


@pytest.mark.parametrize("design", DESIGNS, ids=lambda p: p.stem)
def test_every_door_gives_the_same_answer(
    run: Callable[..., Result], sample_file: Path, tmp_path: Path, design: Path
) -> None:
    r = run("rank", design, "--json", "-n", "0")
    assert r.exit_code in (0, 1), r.output
    ranked = json.loads(r.stdout)
    parts = [p["part_number"] for p in ranked["parts"]]
    assert len(parts) == ranked["summary"]["parts"] >= 50
    want = {p["part_number"]: of_part(p) for p in ranked["parts"]}
    basis = ranked["basis"]
    assert {a["basis"] for a in want.values()} == {basis}

    # predict: every part at once (closed form; the simulation does not change the answer)
    r = run("predict", design, "--json", "--no-sim")
    assert r.exit_code == 0, r.output
    got = {p["part_number"]: of_part(p) for p in json.loads(r.stdout)}
    assert got == want

    # predict of one part alone (its evaluation without the rest of the catalogue)
    for pn in parts[:: max(1, len(parts) // 6)]:
        r = run("predict", design, pn, "--json", "--no-sim")
        assert of_part(json.loads(r.stdout)[0]) == want[pn], pn

    # explain: one part at a time
    for pn in parts:
        r = run("explain", design, pn, "--json")
        assert r.exit_code in (0, 1), r.output
        assert of_part(json.loads(r.stdout)) == want[pn], pn

    # vet -d: two incumbents whose candidate lists (--all) cover every part
    seen: dict[str, Answer] = {}
    for inc in (parts[0], parts[1]):
        r = run("vet", inc, "-d", design, "--all", "--top", "0", "--json")
        assert r.exit_code in (0, 1), r.output
        v = json.loads(r.stdout)
        assert v["basis"] == basis
        seen[inc] = of_evaluation(v["incumbent_in_circuit"])
        for c in v["candidates"]:
            ev = of_evaluation(c["in_circuit"])
            seen.setdefault(c["part_number"], ev)
            assert ev == want[c["part_number"]], c["part_number"]
            # a part that fails the circuit is never a drop-in
            if ev["verdict"] == "rejected":
                assert c["verdict"] != "drop-in", c["part_number"]
    assert set(seen) == set(parts)

    # bom-check: every part on one BOM, judged in the design
    bom = tmp_path / "all.csv"
    with bom.open("w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh)
        w.writerow(["designators", "part_number", "quantity"])
        for k, pn in enumerate(parts, 1):
            w.writerow([f"U{k}", pn, 1])
    r = run("bom-check", bom, "-d", design, "--json", "--substitutes", "0")
    assert r.exit_code in (0, 1), r.output
    lines = json.loads(r.stdout)["lines"]
    assert [ln["match"]["part_number"] for ln in lines] == parts
    for ln in lines:
        assert of_evaluation(ln["evaluation"]) == want[ln["part_number"]], ln["part_number"]
        # every in-circuit finding names its check
        for f in ln["findings"]:
            if f["code"] in ("out-of-spec", "needs-fix", "marginal", "changes-mode"):
                assert f["check"], f

    # the terminal UI's exported ranking
    ui = {p["part_number"]: of_part(p) for p in tui_export(sample_file, tmp_path, design)}
    assert ui == want


def test_basis_override_is_one_rule(run: Callable[..., Result]) -> None:
    """--basis overrides the design's basis the same way at every door, and every output says
    which basis it used and where that came from."""
    design = SAMPLE_DESIGNS / "line-driver-5v.toml"
    ranked = json.loads(run("rank", design, "--json", "-n", "0", "--basis", "typical").stdout)
    assert ranked["basis"] == "typical"
    want = {p["part_number"]: of_part(p) for p in ranked["parts"]}
    pred = json.loads(run("predict", design, "--json", "--no-sim", "--basis", "typical").stdout)
    assert {p["part_number"]: of_part(p) for p in pred} == want
    assert {p["options"]["basis_source"] for p in pred} == {"override"}
    v = json.loads(run("vet", "BRQ-622", "-d", design, "--basis", "typical", "--json").stdout)
    assert v["basis"] == "typical"
    for c in v["candidates"]:
        assert of_evaluation(c["in_circuit"]) == want[c["part_number"]]
    text = run("predict", design, "BRQ-622", "--no-sim").stdout
    assert "basis: worst-case (design file)" in text
