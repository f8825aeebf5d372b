"""Command-line messages for people: no Python syntax, no repeated file names, and "nothing
was changed" only where a command could have changed the catalogue."""

from __future__ import annotations

from pathlib import Path

PROJECT = Path(__file__).resolve().parents[1]
DESIGN = PROJECT / "sample-catalog" / "designs" / "line-driver-5v.toml"


def test_missing_design_names_the_file_once(cli, tmp_path: Path) -> None:
    missing = tmp_path / "nosuch.toml"
    r = cli("rank", missing)
    assert r.exit_code == 2
    err = r.stderr
    assert f"error: {missing}: no such design file" in err
    assert err.count("nosuch") == 1 and "record" not in err
    assert "nothing was changed" not in err  # rank changes nothing


def test_a_refused_load_says_nothing_was_changed(cli, tmp_path: Path) -> None:
    bad = tmp_path / "bad.yaml"
    bad.write_text("parts:\n  - part_number: X-1\n", encoding="utf-8")
    r = cli("load", bad)
    assert r.exit_code == 2
    assert "nothing was changed in the catalogue" in r.stderr
    r = cli("check", bad)  # check only reads
    assert r.exit_code == 2 and "nothing was changed" not in r.stderr


def test_bom_column_message_speaks_command_line(cli, tmp_path: Path) -> None:
    bom = tmp_path / "b.csv"
    bom.write_text("Ref,Manufacturer Part,Count\nU1,BRQ-622A,1\n", encoding="utf-8")
    r = cli("bom-check", bom)
    assert r.exit_code == 2
    assert '--column part_number="NAME"' in r.stderr
    assert "{" not in r.stderr and "columns=" not in r.stderr


def test_bad_per_line_design_is_named_once(cli, tmp_path: Path) -> None:
    r = cli("load", PROJECT / "sample-catalog" / "parts")
    assert r.exit_code == 0
    bom = tmp_path / "b.csv"
    bom.write_text("designators,part_number,design\nU1,BRQ-622A,nosuch.toml\n", encoding="utf-8")
    r = cli("bom-check", bom, "--json")
    assert r.exit_code == 1
    import json

    line = json.loads(r.stdout)["lines"][0]
    msg = next(f["message"] for f in line["findings"] if f["code"] == "bad-design")
    assert msg == "design nosuch.toml: no such design file"


def test_progress_only_in_a_terminal(monkeypatch) -> None:
    """A progress bar is drawn on a terminal, and nowhere else (pipes, files, --json)."""
    import io

    from rich.console import Console

    from partsel.cli import common

    buf = io.StringIO()
    monkeypatch.setattr(
        common, "err_console", lambda: Console(file=buf, force_terminal=True, width=80)
    )
    with common.progress(10, "simulating") as advance:
        for _ in range(10):
            advance(1)
    assert "simulating" in buf.getvalue()
    buf2 = io.StringIO()
    monkeypatch.setattr(common, "err_console", lambda: Console(file=buf2, force_terminal=False))
    with common.progress(10, "simulating") as advance:
        advance(10)
    assert buf2.getvalue() == ""
    buf3 = io.StringIO()
    monkeypatch.setattr(common, "err_console", lambda: Console(file=buf3, force_terminal=True))
    with common.progress(10, "simulating", enabled=False) as advance:  # --json
        advance(10)
    assert buf3.getvalue() == ""


def test_output_paths_are_checked_before_the_work(cli, tmp_path: Path) -> None:
    """An output that cannot be written stops the command at once with exit 2, the path and
    the reason (no traceback, no work done first); nothing is left behind."""
    assert cli("load", PROJECT / "sample-catalog" / "parts").exit_code == 0
    blocker = tmp_path / "a-file"
    blocker.write_text("x", encoding="utf-8")
    cases = [
        ("export-csv", tmp_path / "nofolder" / "p.csv"),
        ("export", blocker / "sub"),  # below a file: no folder can be made there
        ("deck", DESIGN, "BRQ-622", "-o", blocker / "d.cir"),
        ("waveform", DESIGN, "BRQ-622", "-o", tmp_path / "nofolder" / "w.png"),
        ("bom-check", PROJECT / "sample-catalog" / "bom" / "mixed-board.csv", "--csv",
         tmp_path / "nofolder" / "out.csv"),
    ]  # fmt: skip
    for args in cases:
        r = cli(*args)
        assert r.exit_code == 2, (args, r.output)
        assert "Traceback" not in r.output
        assert r.exception is None or isinstance(r.exception, SystemExit)
        target = str(args[-1])
        assert f"error: {target}:" in r.stderr, (args, r.stderr)
    left = sorted(p.name for p in tmp_path.iterdir() if not p.name.startswith("catalogue"))
    assert left == ["a-file"]  # (the test catalogue lives here too)


def test_huge_integers_on_the_command_line_are_refused(cli) -> None:
    """A version or a count beyond what the database holds is a usage error (exit 2), not an
    overflow in the database driver."""
    assert cli("load", PROJECT / "sample-catalog" / "parts").exit_code == 0
    for args in (
        ("restore", "BRQ-622", "99999999999999999999"),
        ("rank", DESIGN, "-n", "99999999999999999999"),
        ("deck", DESIGN, "BRQ-622", "-o", "x.cir", "--periods", "1000000"),
    ):
        r = cli(*args)
        assert r.exit_code == 2, (args, r.output)
        assert "Traceback" not in r.output


def test_implausible_values_are_warned_not_refused(cli, tmp_path: Path) -> None:
    """A value that parses but is implausible (a 1e30 V supply) is stored as given, with a
    warning naming the field and the plausible range (partsel.units.PLAUSIBLE)."""
    import yaml

    src = PROJECT / "sample-catalog" / "parts" / "brindle-semi.yaml"
    doc = yaml.safe_load(src.read_text(encoding="utf-8"))
    doc["parts"] = doc["parts"][:1]
    doc["parts"][0]["supply"]["range"]["max"] = "1e30 V"
    f = tmp_path / "odd.yaml"
    f.write_text(yaml.safe_dump(doc, sort_keys=False), encoding="utf-8")
    r = cli("check", f)
    assert r.exit_code == 0, r.output
    assert "warning:" in r.stderr and "/supply/range/max" in r.stderr
    r = cli("load", f, "--json")
    assert r.exit_code == 0, r.output
    import json

    report = json.loads(r.stdout)
    assert report["added"] == 1 and report["warnings"]
    assert report["warnings"][0]["pointer"].endswith("/supply/range/max")
    design = tmp_path / "d.toml"
    design.write_text(DESIGN.read_text().replace('frequency = "1 kHz"', 'frequency = "1e13 Hz"'))
    r = cli("rank", design)
    assert "warning:" in r.stderr and "/signal/frequency" in r.stderr
