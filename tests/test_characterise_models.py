"""Model files are data: what ``partsel characterise`` accepts, what it refuses, and that a bad
model ends with exit code 2, a message naming the file and line, and nothing stored.

The refusals are partsel's own rules (partsel/characterise/model_file.py); the SPICE syntax
they rest on (``+`` continuation lines, ``*`` comment lines, ``;`` and `` $ `` inline comments,
``.control``/``.endc`` blocks, ``*ng_script``, case-insensitive names) is ngspice's, from its
manual (version 39, from memory) and checked here by running ngspice 39 where it matters.
"""

from __future__ import annotations

import json
import stat
from pathlib import Path

import pytest

from partsel.characterise.model_file import MAX_MODEL_BYTES, parse_pins, read_models
from partsel.errors import InputError

CIRCUITS = Path(__file__).parent / "circuits"
CLASS_B = CIRCUITS / "opamp_class_b.sub"
CLASS_AB = CIRCUITS / "opamp_class_ab.sub"

#: A small amplifier-shaped model (a VCVS and a load), invented for these tests.
TOY = """* toy amplifier, invented for partsel's tests
.subckt toy inp inn out vp vn params: gain=1e5
Rin inp inn 1meg
Eg nx vn inp inn {gain}
Ro nx out 100 ; output resistance
Rq vp vn 50k $ quiescent current
.ends toy
"""


def _write(tmp_path: Path, text: str, name: str = "model.sub") -> Path:
    p = tmp_path / name
    p.write_text(text, encoding="utf-8")
    return p


def _refused(path: Path | list[Path], subckt: str = "toy") -> InputError:
    paths = path if isinstance(path, list) else [path]
    with pytest.raises(InputError) as exc:
        read_models(paths, subckt)
    return exc.value


def test_a_plain_model_is_read_as_its_checked_cards(tmp_path: Path) -> None:
    m = read_models([_write(tmp_path, TOY)], "TOY")  # names are case-insensitive in SPICE
    assert m.name == "toy" and m.subckt.pins == ("inp", "inn", "out", "vp", "vn")
    assert m.instance() == "X1 inp inn out vp 0 toy"
    # inline comments are gone: ngspice reads what was checked, not the file's text
    assert "output resistance" not in m.text and "quiescent" not in m.text
    assert "Ro nx out 100\n" in m.text


def test_continuation_lines_are_joined(tmp_path: Path) -> None:
    m = read_models([_write(tmp_path, TOY.replace("Rq vp vn 50k", "Rq vp\n+ vn 50k"))], "toy")
    assert "Rq vp vn 50k" in m.text


def test_pins_option_maps_roles_to_the_subcircuits_order(tmp_path: Path) -> None:
    roles = parse_pins("in+, in-, v+, v-, out")
    m = read_models([_write(tmp_path, TOY)], "toy", roles)
    assert m.instance() == "X1 inp inn vp 0 out toy"
    for bad in ("IN+,IN-,OUT,V+", "IN+,IN+,OUT,V+,V-", "IN+,IN-,OUT,V+,GND"):
        with pytest.raises(InputError, match="--pins"):
            parse_pins(bad)


@pytest.mark.parametrize(
    ("line", "words"),
    [
        (".control\nshell rm -rf /\n.endc", ".control"),
        ("  .CONTROL", ".control"),
        ("shell touch /tmp/partsel-pwned", "ngspice command"),
        ("exec /bin/sh", "ngspice command"),
        ("source other.cir", "ngspice command"),
        ("set noaskquit", "ngspice command"),
        (".options reltol=1", "simulator options"),
        (".tran 1n 1u", "not accepted"),
        (".lib models.lib typ", ".lib"),
        ('.model src filesource(file="/etc/passwd")', "reads files"),
        ("R1 a b 1k", "outside a '.subckt'"),
        ("!ls", "ngspice command"),
    ],
)
def test_commands_and_circuits_are_refused_with_file_and_line(
    tmp_path: Path, line: str, words: str
) -> None:
    p = _write(tmp_path, TOY + line + "\n")
    err = _refused(p)
    first = err.problems[0]
    assert first.file == str(p)
    assert "line 8" in first.message and words in first.message


def test_a_control_card_on_a_continuation_line_is_refused(tmp_path: Path) -> None:
    err = _refused(_write(tmp_path, TOY.replace("Rq vp vn 50k", "Rq vp vn 50k\n+ .control")))
    assert "line 7" in str(err) and ".control" in str(err)


def test_global_nodes_the_benches_use_are_refused(tmp_path: Path) -> None:
    err = _refused(_write(tmp_path, ".global mref\n" + TOY))
    assert "mref" in str(err)


def test_a_control_block_inside_the_subcircuit_is_refused(tmp_path: Path) -> None:
    p = _write(tmp_path, TOY.replace(".ends toy", ".control\nshell id\n.endc\n.ends toy"))
    err = _refused(p)
    assert "line 7" in str(err) and ".control" in str(err)


def test_ng_script_files_are_refused(tmp_path: Path) -> None:
    err = _refused(_write(tmp_path, "*ng_script\n" + TOY))
    assert "line 1" in str(err) and "script" in str(err)


def test_a_control_word_in_a_comment_is_only_a_comment(tmp_path: Path) -> None:
    text = TOY.replace("* toy amplifier", "* toy amplifier (never put a .control block here)")
    read_models([_write(tmp_path, text)], "toy")


def test_truncated_model_names_the_open_subcircuit(tmp_path: Path) -> None:
    lines = CLASS_B.read_text(encoding="utf-8").splitlines(keepends=True)
    p = _write(tmp_path, "".join(lines[:45]), "cut.sub")  # cut in the middle of the circuit
    err = _refused(p, "opamp_class_b")
    assert err.problems[0].file == str(p)
    assert "no '.ends'" in str(err) and "line 29" in str(err)  # the file's .subckt line


def test_missing_ends(tmp_path: Path) -> None:
    err = _refused(_write(tmp_path, TOY.replace(".ends toy\n", "")))
    assert "line 2" in str(err) and "no '.ends'" in str(err)


def test_wrong_pin_count(tmp_path: Path) -> None:
    p = _write(tmp_path, TOY.replace("inp inn out vp vn", "inp inn out vp vn en"))
    err = _refused(p)
    assert "line 2" in str(err) and "6 pins" in str(err)


def test_unknown_subcircuit_lists_the_ones_defined(tmp_path: Path) -> None:
    err = _refused(_write(tmp_path, TOY), "other")
    assert "they define: toy" in str(err)


def test_includes_only_files_given(tmp_path: Path) -> None:
    lib = _write(tmp_path, ".model dmod D(IS=1e-14)\n", "diodes.lib")
    text = TOY.replace("Rq vp vn 50k", "Rq vp vn 50k\nD1 vn vp dmod")
    main = _write(tmp_path, '.include "diodes.lib"\n' + text)
    err = _refused(main)
    assert "diodes.lib" in str(err) and "not among the model files given" in str(err)
    m = read_models([main, lib], "toy")  # named on the command line: inlined, include dropped
    assert ".include" not in m.text and ".model dmod D(IS=1e-14)" in m.text


def test_instances_of_undefined_subcircuits_are_refused(tmp_path: Path) -> None:
    text = TOY.replace("Rq vp vn 50k", "Xbuf nx out buffer")
    err = _refused(_write(tmp_path, text))
    assert "line 6" in str(err) and "'buffer'" in str(err)


def test_only_the_subcircuits_used_reach_the_deck(tmp_path: Path) -> None:
    text = TOY + ".subckt unused a b\nR1 a b 1\n.ends unused\n"
    m = read_models([_write(tmp_path, text)], "toy")
    assert "unused" not in m.text


def test_text_after_end_is_refused(tmp_path: Path) -> None:
    err = _refused(_write(tmp_path, TOY + ".end\nR9 a b 1\n"))
    assert "line 9" in str(err) and "after '.end'" in str(err)


def test_a_20_mb_file_is_refused_before_it_is_parsed(tmp_path: Path) -> None:
    p = tmp_path / "huge.sub"
    with p.open("w", encoding="ascii") as fh:
        fh.write(TOY)
        line = "* " + "x" * 98 + "\n"
        for _ in range(200_000):  # 20,000,000 bytes of comment lines
            fh.write(line)
    assert p.stat().st_size > 20e6 > MAX_MODEL_BYTES
    err = _refused(p)
    assert err.problems[0].file == str(p) and "too large" in str(err)


def test_binary_and_latin1_files(tmp_path: Path) -> None:
    p = tmp_path / "bin.sub"
    p.write_bytes(TOY.encode() + b"\x00\x01\x02")
    assert "NUL" in str(_refused(p))
    latin = tmp_path / "latin.sub"  # an older file: a micro sign as one Latin-1 byte
    latin.write_bytes(TOY.replace("toy amplifier", "toy amplifier, 1 \xb5A").encode("latin-1"))
    read_models([latin], "toy")


# ---- the command line --------------------------------------------------------------------


def _bad_models(tmp_path: Path) -> dict[str, tuple[Path, str]]:
    """Each bad model and a line number its message must name."""
    text = CLASS_B.read_text(encoding="utf-8")
    cut = "".join(text.splitlines(keepends=True)[:45])
    big = tmp_path / "big.sub"
    big.write_bytes(text.encode() + b"* " + b"y" * (20 * 10**6) + b"\n")
    return {
        "truncated": (_write(tmp_path, cut, "truncated.sub"), "line 29"),
        "missing .ends": (
            _write(tmp_path, text.replace(".ends opamp_class_b", ""), "noends.sub"),
            "line 29",
        ),
        "wrong pin count": (
            _write(tmp_path, text.replace("inp inn out vp vn", "inp inn out vp"), "pins.sub"),
            "line 29",
        ),
        "control block": (
            _write(tmp_path, text + ".control\nshell id > pwned\n.endc\n", "control.sub"),
            "line 58",
        ),
        "20 MB": (big, "MiB"),
    }


def test_bad_models_exit_2_naming_file_and_line_and_store_nothing(cli, tmp_path: Path) -> None:
    for what, (path, where) in _bad_models(tmp_path).items():
        res = cli("characterise", path, "--subckt", "opamp_class_b", "--store")
        assert res.exit_code == 2, what
        assert str(path) in res.output and where in res.output, (what, res.output)
        assert "nothing was changed" in res.output
    assert json.loads(cli("list", "--json").stdout) == []
    assert not (tmp_path / "pwned").exists()


def test_a_model_that_does_not_converge(cli, tmp_path: Path, need_ngspice: None) -> None:
    """A subcircuit with no DC solution (its output equals itself plus 1 V): ngspice fails on
    the first bench; the message names the file and the element's line."""
    p = _write(
        tmp_path,
        "* no DC solution\n.subckt nc inp inn out vp vn\nB1 out vn V = V(out) + 1\n"
        "R1 inp inn 1meg\nR2 vp vn 10k\n.ends nc\n",
        "nc.sub",
    )
    res = cli("characterise", p, "--subckt", "nc", "--store")
    assert res.exit_code == 2
    assert str(p) in res.output and "'B1' (line 3)" in res.output
    assert json.loads(cli("list", "--json").stdout) == []


def test_a_bench_that_takes_too_long_is_stopped(tmp_path: Path, need_ngspice: None) -> None:
    from partsel.characterise.benches import Conditions
    from partsel.characterise.run import characterise

    models = read_models([CLASS_B], "opamp_class_b")
    with pytest.raises(InputError, match="did not finish in time"):
        characterise(models, Conditions(5.0), timeout_s=1e-3)


def test_missing_ngspice_exits_2(cli, tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setenv("PARTSEL_NGSPICE", str(tmp_path / "no-such-ngspice"))
    res = cli("characterise", CLASS_B, "--subckt", "opamp_class_b")
    assert res.exit_code == 2 and "ngspice is not installed" in res.output


def _recording_ngspice(tmp_path: Path, log: Path, real: str | None) -> Path:
    """An ngspice stand-in that appends every deck it is given to ``log``, then runs the real
    one (or fails, when ``real`` is None)."""
    wrapper = tmp_path / "ngspice-wrapper"
    run = f'exec {real} "$@"' if real else "exit 1"
    wrapper.write_text(
        f'#!/bin/sh\nfor a; do last="$a"; done\ncat "$last" >> "{log}"\n{run}\n',
        encoding="utf-8",
    )
    wrapper.chmod(wrapper.stat().st_mode | stat.S_IEXEC)
    return wrapper


def test_a_part_number_with_a_newline_never_reaches_a_deck(
    cli, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    """Refused before any bench runs: the ngspice stand-in records no deck."""
    log = tmp_path / "decks.log"
    monkeypatch.setenv("PARTSEL_NGSPICE", str(_recording_ngspice(tmp_path, log, None)))
    for option in ("--part-number", "--maker"):
        res = cli("characterise", CLASS_B, "--subckt", "opamp_class_b", option, "X1\n.control")
        assert res.exit_code == 2 and "U+000A" in res.output, res.output
    assert not log.exists()


def test_part_number_and_maker_text_never_reach_a_deck(
    cli, tmp_path: Path, monkeypatch: pytest.MonkeyPatch, need_ngspice: None
) -> None:
    """Printable part numbers and makers that look like SPICE are accepted for the record,
    and appear in none of the decks ngspice is given (an ngspice stand-in records them)."""
    import shutil

    log = tmp_path / "decks.log"
    real = shutil.which("ngspice")
    monkeypatch.setenv("PARTSEL_NGSPICE", str(_recording_ngspice(tmp_path, log, real)))
    res = cli(
        "characterise", CLASS_AB, "--subckt", "opamp_class_ab",
        "--part-number", "PN; .control shell", "--maker", "Maker $ exec",
    )  # fmt: skip
    assert res.exit_code == 0, res.output
    assert "part_number: PN; .control shell\n" in res.stdout
    decks = log.read_text(encoding="utf-8")
    assert decks.count("* partsel characterise bench") >= 9
    assert ".subckt opamp_class_ab" in decks
    assert "PN;" not in decks and "Maker" not in decks and "shell" not in decks


def test_the_command_line_imports_none_of_it_until_asked() -> None:
    """``partsel --help`` stays fast: importing the command line loads neither the
    characterisation package, the scope reader, ngspice's runner nor their numerical
    libraries (they are imported inside the commands)."""
    import subprocess
    import sys

    code = (
        "import sys, partsel.cli.main; print(','.join(m for m in ('numpy', 'scipy', "
        "'matplotlib', 'partsel.characterise', 'partsel.io.scope', 'partsel.spice_run') "
        "if m in sys.modules))"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == ""
