"""Hostile or oversized text in a scenario (issue 11, part 4).

User text (title, sources, file and folder names) is printed on terminals and in the memo. It
must be shown as the characters it holds: rich markup in it is printed literally, control
characters never reach the terminal (they are refused in the scenario's texts and shown as
visible escapes where they can still arrive, in file names), and oversized input is refused
at once with one short message. The memo's side is in tests/report/test_memo.py.
"""

from __future__ import annotations

import io
import re
import tomllib
from pathlib import Path
from typing import Any

import pytest
from rich.console import Console
from typer.testing import CliRunner

from risk.cli import app
from risk.errors import CONTROL_CHARACTERS, MAX_LISTED, Problem, ScenarioError, visible
from risk.report.console import print_scenario, print_summary
from risk.report.text import safe
from risk.scenario import (
    MAX_FILE_BYTES,
    MAX_OPERATING_POINTS,
    MAX_TITLE_CHARS,
    load_scenario,
    parse_scenario,
)
from risk.uncertainty import MAX_SOURCE_CHARS
from tests.conftest import FIELD_DOC

RUNNER = CliRunner()
BLINK = "[blink]APPROVED: no sanding risk[/blink]"
OOPS = "Well A [/oops]"

#: One character of each kind the loader refuses (derived from the Unicode and ECMA-48 tables:
#: NUL, tab, line feed, carriage return, ESC, DEL, NEL, CSI, line separator, right-to-left
#: override, first strong isolate).
CONTROLS = ["\x00", "\t", "\n", "\r", "\x1b", "\x7f", "\x85", "\x9b", "\u2028", "\u202e",
            "\u2068"]


def _doc(**changes: Any) -> dict[str, Any]:
    doc = tomllib.loads(FIELD_DOC)
    for dotted, value in changes.items():
        *path, last = dotted.split("__")
        table = doc
        for part in path:
            table = table[part]
        table[last] = value
    return doc


def _plain_console(width: int = 400) -> tuple[Console, io.StringIO]:
    """A console that writes no styling codes: every ESC in its output came from the input."""
    buf = io.StringIO()
    return Console(file=buf, width=width, color_system=None, force_terminal=False,
                   legacy_windows=False), buf


def _unwrapped(text: str) -> str:
    """Console output without the line breaks and spaces of its wrapping."""
    return "".join(text.split())


def _raw_controls(text: str, allowed: str = "\n") -> list[str]:
    return [ch for ch in CONTROL_CHARACTERS.findall(text) if ch not in allowed]


# --------------------------------------------------------------------------------------------
# The display helper
# --------------------------------------------------------------------------------------------


@pytest.mark.parametrize("ch", CONTROLS)
def test_visible_shows_every_control_as_an_escape(ch):
    # derived: Python's repr escapes exactly these characters (none of them is printable)
    shown = visible(f"a{ch}b")
    assert shown == "a" + repr(ch)[1:-1] + "b"
    assert not CONTROL_CHARACTERS.search(shown)


def test_visible_keeps_ordinary_text():
    # derived: letters, accents, non-Latin scripts and the degree sign are not controls
    text = "Brønnøy-7 ∠30° 井 [bold] :warning: \\x1b"
    assert visible(text) == text


def test_safe_text_is_literal_on_the_console():
    con, buf = _plain_console()
    con.print(safe(f"{OOPS} {BLINK} :warning: \x1b[31mred"))
    out = buf.getvalue()
    assert OOPS in out and BLINK in out and ":warning:" in out  # no markup, no emoji
    assert "\x1b" not in out and "\\x1b[31mred" in out


# --------------------------------------------------------------------------------------------
# risk check / print_scenario
# --------------------------------------------------------------------------------------------


def test_markup_in_title_and_source_is_printed_literally(tmp_path):
    text = (FIELD_DOC.replace('title = "Test well (field units)"', f'title = "{OOPS}"')
            .replace("ucs = 9000", f'ucs = {{ dist = "normal", mean = 9000, sd = 900, '
                                   f'source = "{BLINK}" }}'))
    path = tmp_path / "[bold]well[red].toml"  # a file name holds no "/"
    path.write_text(text, encoding="utf-8")
    con, buf = _plain_console()
    print_scenario(load_scenario(path), con)  # rich raised MarkupError on "[/oops]" before
    out = buf.getvalue()
    assert OOPS in out
    assert BLINK in out  # shown as typed: the engineer sees the brackets, no styling
    assert "[bold]well[red].toml" in out


def test_styled_console_does_not_apply_markup_from_input():
    # with colours on, "[blink]" in a source would have become the blink code ESC[5m
    sc = parse_scenario(_doc(rock__ucs={"dist": "normal", "mean": 9000, "sd": 900,
                                        "source": BLINK}))
    buf = io.StringIO()
    con = Console(file=buf, width=400, force_terminal=True, color_system="standard")
    print_scenario(sc, con)
    out = buf.getvalue()
    assert "\x1b[5m" not in out  # ECMA-48 SGR 5 = slow blink (from memory)
    assert "[blink]APPROVED: no sanding risk" in out


def test_file_name_with_terminal_escape_is_shown_visibly(tmp_path):
    # a file name may hold any byte but "/" and NUL; the default title is the file's stem
    text = FIELD_DOC.replace('title = "Test well (field units)"\n', "")
    path = tmp_path / "well\x1b[2J[blink]A.toml"
    path.write_text(text, encoding="utf-8")
    sc = load_scenario(path)
    assert sc.title == "well\\x1b[2J[blink]A"  # the title never holds a control character
    r = RUNNER.invoke(app, ["check", str(path)])
    assert r.exit_code == 0, r.output
    assert "\x1b" not in r.output
    assert "well\\x1b[2J[blink]A.toml" in _unwrapped(r.output)  # the CLI wraps at 80 columns


def test_error_message_of_a_file_name_with_escape_is_visible(tmp_path):
    path = tmp_path / "bad\x1b]0;pwned\x07.toml"
    path.write_text(FIELD_DOC.replace("ucs = 9000", "ucs = -5"), encoding="utf-8")
    r = RUNNER.invoke(app, ["check", str(path)])
    assert r.exit_code == 2, r.output
    assert not _raw_controls(r.output)
    assert "bad\\x1b]0;pwned\\x07.toml" in _unwrapped(r.output)


def test_unknown_key_with_control_characters_is_named_visibly():
    doc = _doc()
    doc["rock"]["ucs\x1b[8m"] = 1  # ESC[8m hides the text after it (ECMA-48 SGR 8, from memory)
    with pytest.raises(ScenarioError) as ei:
        parse_scenario(doc)
    assert not _raw_controls(ei.value.message)
    assert [p.key for p in ei.value.problems] == ['rock."ucs\\u001b[8m"']


# --------------------------------------------------------------------------------------------
# risk run / print_summary
# --------------------------------------------------------------------------------------------


def _summary(title: str, name: str, warning: str) -> dict[str, Any]:
    """The parts of a results summary that print_summary reads (one mechanism, one stage)."""
    dc = {"p10": 100.0, "p50": 200.0, "p90": 300.0}
    stage = {"reservoir_pressure": 4000.0, "drawdown_limit": 120.0, "drawdown_limit_lower": 90.0,
             "critical_drawdown": dc, "never_fraction": 0.0, "worst_wall_angle": 10.0,
             "convergence_warning": None}
    return {"title": title, "samples": 64, "sampling": "sobol", "seed": 1,
            "criterion": "mohr-coulomb", "accepted_risk": 0.1, "units": {"pressure": "psi"},
            "warnings": [warning],
            "mechanisms": {"yield_onset": {"name": name, "stages": [stage]}},
            "sensitivity": {"yield_onset": [{"input": name, "rank_value": 0.5, "total": 0.5,
                                              "first": 0.4, "shapley": 0.45}]}}


def test_print_summary_shows_user_text_literally(tmp_path):
    out_dir = tmp_path / "run [red]x\x1b[0m"  # not created: print_summary only names it
    con, buf = _plain_console()
    print_summary(_summary(OOPS, BLINK, f"rock.hb_mi: {BLINK}\x1b[2K"), out_dir, con)
    out = buf.getvalue()
    assert OOPS in out and BLINK in out
    assert f"warning: rock.hb_mi: {BLINK}\\x1b[2K" in out
    assert "run [red]x\\x1b[0m" in out and "results.json" in out
    assert "\x1b" not in out


# --------------------------------------------------------------------------------------------
# Control characters and sizes refused by the loader
# --------------------------------------------------------------------------------------------


@pytest.mark.parametrize("ch", CONTROLS)
@pytest.mark.parametrize("field", ["title", "source"])
def test_control_character_refused_in_every_text(field, ch):
    text = f"Well A{ch}B"
    doc = (_doc(title=text) if field == "title" else
           _doc(rock__ucs={"dist": "normal", "mean": 9000, "sd": 900, "source": text}))
    key = "title" if field == "title" else "rock.ucs.source"
    with pytest.raises(ScenarioError) as ei:
        parse_scenario(doc)
    err = ei.value
    assert [p.key for p in err.problems] == [key]
    assert "without control characters" in err.problems[0].expected
    assert f"Well A{repr(ch)[1:-1]}B" in err.message  # the value, shown visibly
    assert not _raw_controls(err.message)


def test_text_limits_are_inclusive():
    # derived: exactly the limit passes, one more character is refused
    assert parse_scenario(_doc(title="T" * MAX_TITLE_CHARS)).title == "T" * MAX_TITLE_CHARS
    src = {"dist": "normal", "mean": 9000, "sd": 900, "source": "s" * MAX_SOURCE_CHARS}
    assert parse_scenario(_doc(rock__ucs=src)).inputs["ucs"].source == "s" * MAX_SOURCE_CHARS
    with pytest.raises(ScenarioError, match="title: found a text of 201 characters"):
        parse_scenario(_doc(title="T" * (MAX_TITLE_CHARS + 1)))


def test_one_megabyte_title_is_refused_with_a_short_message(tmp_path):
    # the file is below the size limit, so the title's own limit refuses it; the message
    # shows the start of the value only (no timing: DEVELOPERS.md, no timed unit tests)
    title = "A" * 1_000_000
    path = tmp_path / "big_title.toml"
    path.write_text(FIELD_DOC.replace("Test well (field units)", title), encoding="utf-8")
    assert path.stat().st_size <= MAX_FILE_BYTES
    with pytest.raises(ScenarioError) as ei:
        load_scenario(path)
    assert [p.key for p in ei.value.problems] == ["title"]
    assert "1,000,000 characters" in ei.value.message
    assert len(ei.value.message) < 500
    r = RUNNER.invoke(app, ["run", str(path), "--out", str(tmp_path / "out")])
    assert r.exit_code == 2 and "Traceback" not in r.output
    assert len(r.output) < 800 and not (tmp_path / "out").exists()


def test_file_size_is_checked_before_parsing(tmp_path):
    # control: one byte more than the limit is refused even though it is not valid TOML
    # (it is never parsed); the limit itself is accepted as far as size goes
    over = tmp_path / "over.toml"
    over.write_bytes(b"x" * (MAX_FILE_BYTES + 1))
    with pytest.raises(ScenarioError, match="at most 1,048,576 bytes"):
        load_scenario(over)
    at = tmp_path / "at.toml"
    at.write_bytes(FIELD_DOC.encode() + b"#" * (MAX_FILE_BYTES - len(FIELD_DOC.encode())))
    assert at.stat().st_size == MAX_FILE_BYTES
    assert load_scenario(at).title == "Test well (field units)"


def test_operating_points_limit():
    ops = [[3000, 2000]] * MAX_OPERATING_POINTS
    assert len(parse_scenario(_doc(production__operating_points=ops)).operating_points) == 1000
    with pytest.raises(ScenarioError) as ei:
        parse_scenario(_doc(production__operating_points=ops + [[3000, 2000]]))
    assert len(ei.value.problems) == 1


def test_hundred_thousand_repeated_pairs_give_one_problem():
    # before: 99,999 "each pair at most once" problems, one line each
    doc = _doc(rock__ucs={"dist": "normal", "mean": 9000, "sd": 900},
               rock__friction_angle={"dist": "normal", "mean": 30, "sd": 2})
    doc["correlation"] = {"pairs": [["ucs", "friction_angle", 0.5]] * 100_000}
    with pytest.raises(ScenarioError) as ei:
        parse_scenario(doc)
    assert len(ei.value.problems) == 1
    assert "100,000 pairs" in ei.value.message and "at most 1 pair" in ei.value.message


def test_pair_limit_is_n_choose_two():
    # derived: 3 uncertain inputs make 3 pairs; all three pass, a fourth (a repeat) does not
    doc = _doc(rock__ucs={"dist": "normal", "mean": 9000, "sd": 900},
               rock__friction_angle={"dist": "normal", "mean": 30, "sd": 2},
               rock__biot={"dist": "uniform", "low": 0.8, "high": 1.0})
    pairs = [["ucs", "friction_angle", 0.3], ["ucs", "biot", 0.2], ["friction_angle", "biot", 0.1]]
    doc["correlation"] = {"pairs": pairs}
    assert len(parse_scenario(doc).correlation) == 3
    doc["correlation"] = {"pairs": pairs + [["biot", "ucs", 0.2]]}
    with pytest.raises(ScenarioError, match="at most 3 pairs"):
        parse_scenario(doc)


# --------------------------------------------------------------------------------------------
# Many problems: the message is capped, the list is not
# --------------------------------------------------------------------------------------------


def test_message_lists_at_most_ten_problems():
    problems = [Problem(f"key{i}", i, "something") for i in range(25)]
    err = ScenarioError(problems, "f.toml")
    lines = err.message.splitlines()
    assert lines[0] == "f.toml: 25 problems in the scenario:"
    assert lines[1:1 + MAX_LISTED] == [f"  - key{i}: found {i}; expected something"
                                       for i in range(MAX_LISTED)]
    assert lines[-1] == "  ... and 15 more problems"
    assert len(lines) == MAX_LISTED + 2
    assert err.problems == problems  # complete, for programs


def test_message_of_exactly_ten_problems_lists_all():
    # derived: the "... and N more" line appears only above the cap
    err = ScenarioError([Problem(f"k{i}", i, "x") for i in range(MAX_LISTED)])
    assert len(err.message.splitlines()) == MAX_LISTED + 1
    assert "more problem" not in err.message


def test_many_bad_operating_points_print_a_short_message(tmp_path):
    ops = ", ".join(['[3000, "x"]'] * 900)
    path = tmp_path / "ops.toml"
    path.write_text(FIELD_DOC.replace("accepted_risk = 0.10",
                                      f"accepted_risk = 0.10\noperating_points = [{ops}]"),
                    encoding="utf-8")
    with pytest.raises(ScenarioError) as ei:
        load_scenario(path)
    assert len(ei.value.problems) == 900
    r = RUNNER.invoke(app, ["check", str(path)])
    assert r.exit_code == 2
    assert len(re.findall(r"production\.operating_points\[\d+\]: found", r.output)) == MAX_LISTED
    assert "... and 890 more problems" in r.output


def test_paths_are_not_parsed_as_markup_in_errors(tmp_path):
    path: Path = tmp_path / "[/]" / "x.toml"
    r = RUNNER.invoke(app, ["check", str(path)])
    assert r.exit_code == 2 and "Traceback" not in r.output
    assert "[/]" in r.output


def test_unknown_distribution_parameter_with_control_characters_is_named_visibly():
    # the key is written as TOML would need it: a quoted basic string with \u escapes
    doc = _doc(rock__ucs={"dist": "normal", "mean": 9000, "sd": 900, "x\x1b[8m": 1})
    with pytest.raises(ScenarioError) as ei:
        parse_scenario(doc)
    assert [p.key for p in ei.value.problems] == ['rock.ucs."x\\u001b[8m"']
    assert not _raw_controls(ei.value.message)
