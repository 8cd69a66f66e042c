"""The answer a design review reads first (issue 12): for every shipped example, the first
answer of the console and of the memo is the sand-free drawdown limit, named by mechanism and
equal to results.json — never first yield. Regression of the wiring, checked against
results.json, which tests/test_decision.py checks against numpy and a brute force.
"""

from __future__ import annotations

import io
import re
from pathlib import Path

import pytest
from rich.console import Console

from risk.api import run_scenario
from risk.report.console import print_summary
from risk.report.figures import format_value

pytestmark = pytest.mark.slow  # runs every example end to end

EXAMPLES = sorted((Path(__file__).resolve().parents[1] / "examples").glob("*.toml"))


@pytest.fixture(scope="module", params=EXAMPLES, ids=lambda p: p.stem)
def example(request, tmp_path_factory):
    out = tmp_path_factory.mktemp("headline") / "run"
    return run_scenario(request.param, out=out, samples=512)


@pytest.mark.slow
def test_console_opens_with_the_sand_free_limit(example):
    s = example.summary
    buf = io.StringIO()
    print_summary(s, example.out_dir, Console(file=buf, width=100, color_system=None))
    lines = [ln for ln in buf.getvalue().splitlines() if ln.strip()]
    body = " ".join(lines[:4])
    first = s["sand_free"]["stages"][0]
    assert "Sand-free drawdown limit now:" in lines[1] or "Sand-free drawdown limit now:" in body
    head = body[body.index("Sand-free drawdown limit now:"):]
    assert head.split()[4] == f"{first['drawdown_limit']:,.4g}"
    assert s["mechanisms"][first["governing"]]["name"].split()[0] in head
    assert "yield" not in head.split(";")[0].lower()


@pytest.mark.slow
def test_memo_opens_with_the_sand_free_limit(example):
    s = example.summary
    html = (example.out_dir / "memo.html").read_text(encoding="utf-8")
    headline = re.search(r'<p class="headline" id="headline">(.*?)</p>', html, re.S)
    assert headline is not None
    text = re.sub(r"<[^>]+>", "", headline.group(1))
    first = s["sand_free"]["stages"][0]
    unit = s["units"]["pressure"]
    assert text.startswith("Sand-free drawdown limit now: "
                           + format_value(first["drawdown_limit"], unit))
    assert s["mechanisms"][first["governing"]]["name"].split("(")[0].strip().lower() in \
        text.lower()
    # the headline comes before every per-mechanism table, first yield included
    assert html.index('id="headline"') < html.index("Drawdown limits per mechanism")
    cells = re.findall(r'data-field="sand_free_limit" data-value="([^"]*)"', html)
    assert [float(c) for c in cells] == [st["drawdown_limit"] for st in s["sand_free"]["stages"]]


@pytest.mark.slow
def test_demo_shows_a_limit_that_falls_to_zero(tmp_path):
    # the shipped demo must show a decision: a positive limit that reaches zero in depletion
    demo = next(p for p in EXAMPLES if "r7" in p.stem)
    s = run_scenario(demo, out=tmp_path / "run", samples=2048).summary
    limits = [st["drawdown_limit"] for st in s["sand_free"]["stages"]]
    assert limits[0] > 0 and limits[-1] == 0
    assert s["sand_free"]["zero_limit"]["kind"] == "between"


@pytest.mark.slow
@pytest.mark.parametrize("extra", ["", 'effective_strength_cavity = "tip"'])
def test_opposite_shot_directions_always_tie(tmp_path, write, field_doc, extra):
    # Opposite tunnels see the same far-field stress (the stress tensor is centrosymmetric:
    # derived), so 0 and 180, 90 and 270 are equal up to rounding and must tie: never a
    # winner picked by 1e-14 MPa (issue 12: probability_at_limit 0.0 against 1.0).
    doc = field_doc.replace("shot_angles = [0, 60, 120, 180, 240, 300]",
                            "shot_angles = [0, 180, 90, 270]").replace(
        "ucs = 9000", "ucs = { dist = \"lognormal\", median = 3000, cov = 0.2 }\n"
        "twc_ratio = { dist = \"uniform\", low = 1.1, high = 1.7 }").replace(
        "[analysis]", "[analysis]\n" + extra)
    s = run_scenario(write(doc), out=tmp_path / "run", samples=256).summary
    for mech in s["mechanisms"].values():
        for st in mech.get("stages") or []:
            if "shots" not in st:
                continue
            by = {sh["angle"]: sh for sh in st["shots"]}
            for a, b in ((0.0, 180.0), (90.0, 270.0)):
                assert by[a]["probability_at_limit"] == by[b]["probability_at_limit"]
                assert by[a]["drawdown_limit"] == pytest.approx(by[b]["drawdown_limit"],
                                                                rel=1e-9)
            for key in ("worst_shot_angles", "best_shot_angles"):
                if st.get(key) is not None:
                    assert len(st[key]) % 2 == 0, (key, st[key])  # opposite pairs together


@pytest.mark.slow
def test_no_sand_mechanism_is_said_plainly(tmp_path, write, field_doc):
    # the test document enables no sand-production mechanism: no sand-free limit, said so,
    # with the inputs that would enable one; first yield is never promoted to the headline
    res = run_scenario(write(field_doc), out=tmp_path / "run", samples=64)
    s = res.summary
    assert s["sand_free"] is None and "twc" in s["sand_free_note"]
    assert "critical_plastic_strain" in s["sand_free_note"]
    buf = io.StringIO()
    print_summary(s, res.out_dir, Console(file=buf, width=100, color_system=None))
    out = buf.getvalue()
    assert "No sand-free limit" in out[:out.index("Per mechanism")]
    html = (res.out_dir / "memo.html").read_text(encoding="utf-8")
    head = re.search(r'<p class="headline" id="headline">(.*?)</p>', html, re.S)
    assert head is not None and "No sand-free limit" in head.group(1)
