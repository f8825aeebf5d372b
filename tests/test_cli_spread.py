"""``partsel corners`` and ``partsel yield`` on the sample catalogue: every sample design, the
JSON against data-schema/spread.schema.json (jsonschema, draft 2020-12), the ranking's yield
check from a design file agreeing with ``partsel yield``, reproducible seeds, and bad input
(exit 2 with the field's JSON pointer, nothing changed)."""

from __future__ import annotations

import json
from collections.abc import Callable
from pathlib import Path

import pytest
from jsonschema import Draft202012Validator
from typer.testing import CliRunner, Result

from partsel.catalogue import load_paths, open_catalogue
from partsel.solver.spread.export import spread_schema_json
from partsel.solver.spread.stats import clopper_pearson

PROJECT = Path(__file__).resolve().parents[1]
SCHEMA_FILE = PROJECT / "data-schema" / "spread.schema.json"
SCHEMA = Draft202012Validator(json.loads(SCHEMA_FILE.read_text(encoding="utf-8")))
DESIGNS = sorted((PROJECT / "sample-catalog" / "designs").glob("*.toml"))
LINE = PROJECT / "sample-catalog" / "designs" / "line-driver-5v.toml"
YIELD_DESIGN = PROJECT / "sample-catalog" / "designs" / "line-driver-5v-yield.toml"
#: Boards per part in these tests: enough for every code path, small for the 2-core machine.
N = 200


@pytest.fixture(scope="module")
def sample_db(tmp_path_factory: pytest.TempPathFactory) -> str:
    """The sample catalogue in SQLite, loaded once (these commands only read it)."""
    url = f"sqlite:///{tmp_path_factory.mktemp('spread') / 'sample.sqlite'}"
    eng = open_catalogue(url)
    load_paths(eng, [PROJECT / "sample-catalog" / "parts"])
    eng.dispose()
    return url


@pytest.fixture(scope="module")
def run(sample_db: str) -> Callable[..., Result]:
    from partsel.cli.main import app

    runner = CliRunner()

    def invoke(*args: str | Path) -> Result:
        return runner.invoke(app, ["--db", sample_db, *map(str, args)])

    return invoke


def _json(res: Result) -> dict:
    return json.loads(res.stdout)


def test_schema_file_is_the_generated_one() -> None:
    """The committed schema is what the code generates (regenerate with
    python -c "from partsel.solver.spread.export import spread_schema_json as s;
    open('data-schema/spread.schema.json', 'w').write(s())")."""
    Draft202012Validator.check_schema(json.loads(SCHEMA_FILE.read_text(encoding="utf-8")))
    assert SCHEMA_FILE.read_text(encoding="utf-8") == spread_schema_json()


@pytest.mark.parametrize("design", DESIGNS, ids=lambda p: p.stem)
def test_corners_and_yield_on_every_sample_design(run: Callable[..., Result], design: Path) -> None:
    """Both commands run on every sample design (a part the ranking lists first), their JSON
    validates, and their verdicts are consistent with what they report."""
    ranked = run("rank", design, "--json", "--top", "1")
    assert ranked.exit_code in (0, 1), ranked.stderr
    part = _json(ranked)["parts"][0]["part_number"]

    res = run("corners", design, part, "--json")
    assert res.exit_code in (0, 1), res.stderr
    doc = _json(res)
    SCHEMA.validate(doc)
    assert doc["part_number"] == part
    failing = [c for c in doc["corners"] if c["status"] in ("fail", "unknown")]
    assert doc["passes"] == (not failing and not doc["fails_whatever_the_spread"])
    assert res.exit_code == (0 if doc["passes"] else 1)
    for c in doc["corners"]:  # a failing corner has a negative margin, a passing one not
        if c["margin"] is not None and c["status"] in ("pass", "fail"):
            assert (c["margin"] < 0) == (c["status"] == "fail"), c

    res = run("yield", design, part, "-n", N, "--json")
    assert res.exit_code in (0, 1), res.stderr
    doc = _json(res)
    SCHEMA.validate(doc)
    (p,) = doc["parts"]
    assert p["part_number"] == part and p["samples"] == N
    assert p["yield"] == pytest.approx(p["passed"] / N, abs=1e-12)
    # every board that meets every check meets each one: no check below the overall yield
    for frac in p["check_pass_fraction"].values():
        assert frac >= p["yield"] - 1e-12
    # the exact interval is Clopper-Pearson's (checked against scipy in test_spread_stats)
    cp = clopper_pearson(p["passed"], N)
    assert p["exact_interval"]["low"] == pytest.approx(cp.low, abs=1e-12)


def test_text_output_says_estimates_and_assumptions(run: Callable[..., Result]) -> None:
    res = run("yield", LINE, "BRQ-622A", "-n", N)
    assert res.exit_code in (0, 1)
    assert "Monte Carlo yield" in res.stdout and "BRQ-622A" in res.stdout
    assert "split normal" in res.stderr and "confirm" in res.stderr
    res = run("corners", LINE, "BRQ-622A")
    assert "Worst corners of BRQ-622A" in res.stdout and "confirm" in res.stderr


def test_fixed_seed_same_output_other_seed_other_boards(run: Callable[..., Result]) -> None:
    """The same seed gives byte-identical JSON; another seed draws other boards."""
    args = ("yield", YIELD_DESIGN, "QLN-102", "QLN-101", "-n", 500, "--json")
    a, b = run(*args, "--seed", 7), run(*args, "--seed", 7)
    assert a.stdout == b.stdout
    c = _json(run(*args, "--seed", 8))
    pa = _json(a)["parts"][0]
    assert pa["thd_percentiles"] != c["parts"][0]["thd_percentiles"]


def test_ranking_requires_the_yield_from_the_design_file(run: Callable[..., Result]) -> None:
    """line-driver-5v-yield.toml asks for min_yield 99.5 %: the ranking's yield check holds the
    same figure as ``partsel yield`` of that part with the design's samples and seed, parts
    below 99.5 % are rejected with the yield check failing, and those above it are feasible."""
    doc = _json(run("rank", YIELD_DESIGN, "--json", "--top", "0"))
    evaluated = []
    for p in doc["parts"]:
        (c,) = [c for c in p["checks"] if c["check"] == "yield"]
        if c["value"] is None:
            continue
        evaluated.append((p["part_number"], p["verdict"], c["value"], c["status"]))
        if c["value"] < 0.995:
            assert c["status"] == "fail" and p["verdict"] == "rejected", p["part_number"]
        else:
            assert c["status"] == "pass" and p["verdict"] != "rejected", p["part_number"]
    assert any(s == "fail" for *_, s in evaluated), evaluated  # the limit bites on this design
    assert any(s == "pass" for *_, s in evaluated), evaluated
    for pn, _, value, _ in evaluated[:2] + [e for e in evaluated if e[3] == "fail"][:1]:
        y = _json(run("yield", YIELD_DESIGN, pn, "--json"))  # design's 2,000 boards, seed 13
        assert y["samples"] == 2000 and y["seed"] == 13
        assert y["parts"][0]["yield"] == pytest.approx(value, abs=1e-12), pn


def test_default_parts_are_the_feasible_ones(run: Callable[..., Result]) -> None:
    feasible = [
        p["part_number"]
        for p in _json(run("rank", YIELD_DESIGN, "--json", "--top", "0"))["parts"]
        if p["verdict"] != "rejected"
    ]
    doc = _json(run("yield", YIELD_DESIGN, "-n", N, "--json"))
    assert [p["part_number"] for p in doc["parts"]] == feasible


def test_target_and_fix_search(run: Callable[..., Result]) -> None:
    """With the fix fitted and a target, the largest value of the series reaching it is
    reported, and its yield reaches the target; a missed target exits 1."""
    res = run("yield", LINE, "HKE-262", "-n", 1000, "--target", "99 %", "--json")
    doc = _json(res)
    fix = doc["parts"][0]["fix"]
    assert fix is not None and fix["target"] == pytest.approx(0.99)
    if fix["largest_reaching_target_ohm"] is not None:
        assert fix["largest_yield"] >= 0.99
        tried = {round(t["r_ohm"]): t["yield"] for t in fix["tried"]}
        larger = [r for r in tried if r > fix["largest_reaching_target_ohm"]]
        assert all(tried[r] < 0.99 for r in larger)
    missed = doc["parts"][0]["yield"] < 0.99
    assert res.exit_code == (1 if missed else 0)


def test_plot_is_written(run: Callable[..., Result], tmp_path: Path) -> None:
    out = tmp_path / "spread.png"
    res = run("yield", LINE, "BRQ-622A", "-n", N, "--plot", out)
    assert res.exit_code in (0, 1), res.stderr
    assert out.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"


@pytest.mark.parametrize(
    ("old", "new", "pointer"),
    [
        ('resistance = "2 kohm"', 'resistance = "2 kohm ±120 %"', "/load/resistance"),
        ('resistance = "2 kohm"', 'resistance = "2.2 kohm .. 1.8 kohm"', "/load/resistance"),
        ('coupling = "ac"', 'coupling = "ac ±10 %"', "/load/coupling"),
        ('coupling_capacitor = "10 uF"', 'coupling_capacitor = "10 uF -120/+80 %"',
         "/load/coupling_capacitor"),
    ],
)  # fmt: skip
@pytest.mark.parametrize("command", ["yield", "corners"])
def test_bad_tolerances_exit_2_with_pointer(
    run: Callable[..., Result], tmp_path: Path, old: str, new: str, pointer: str, command: str
) -> None:
    src = LINE.read_text(encoding="utf-8")
    assert old in src
    path = tmp_path / "bad.toml"
    path.write_text(src.replace(old, new), encoding="utf-8")
    before = path.read_bytes()
    args = [command, path] + (["BRQ-622A"] if command == "corners" else []) + ["--json"]
    res = run(*args)
    assert res.exit_code == 2, res.stdout
    problems = json.loads(res.stdout)
    assert any(p["pointer"] == pointer for p in problems), problems
    assert all(p["file"] and p["file"].endswith("bad.toml") for p in problems)
    assert path.read_bytes() == before


@pytest.mark.parametrize(
    ("args", "pointer"),
    [
        (("-n", "5"), "/samples"),
        (("--target", "150 %"), "/target"),
        (("--target", "fast"), "/target"),
        (("--seed", "-1"), "/seed"),
    ],
)
def test_bad_options_exit_2(
    run: Callable[..., Result], args: tuple[str, ...], pointer: str
) -> None:
    res = run("yield", LINE, "BRQ-622A", *args, "--json")
    assert res.exit_code == 2, res.stdout
    assert any(p["pointer"] == pointer for p in json.loads(res.stdout))


def test_unknown_part_exits_2(run: Callable[..., Result]) -> None:
    res = run("corners", LINE, "NO-SUCH-PART", "--json")
    assert res.exit_code == 2
    assert any(p["pointer"] == "/part_number" for p in json.loads(res.stdout))
