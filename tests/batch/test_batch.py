"""risk batch: results per case as a separate run gives them, failures kept to their case,
incremental reruns, resumption, a killed worker, the output folder's rules.

References: a case's results.json must equal what ``risk run`` / ``risk.assess`` give for the
same scenario, samples and seed (the issue's acceptance checks); the folder rules are those of
risk/report/writer.py's docstring.
"""

from __future__ import annotations

import json

import pytest
from typer.testing import CliRunner

from risk.assessment import assess
from risk.batch import EXIT_CASES_FAILED, run_field
from risk.cli import app
from risk.report.results import summarize
from risk.report.writer import dumps
from risk.scenario import load_scenario

from .conftest import EXAMPLES, R7, write_field

N = 256
GOOD = f'[[case]]\nwell = "R-7"\nscenario = "{R7}"\n'
DEEP = '[[case]]\nwell = "R-7"\ninterval = "deep"\n[case.overrides]\nwell.depth = 8300\n'
BAD = '[[case]]\nwell = "R-8"\n[case.overrides]\nrock.ucs.median = -5\n'


def _reference(path, samples=N, seed=None):
    return json.loads(dumps(summarize(assess(load_scenario(path), samples=samples, seed=seed))))


def test_a_bad_case_is_reported_and_the_others_complete(tmp_path, client):
    import pandas as pd

    out = tmp_path / "out"
    res = run_field(write_field(tmp_path, GOOD + BAD), out=out, client=client, samples=N,
                    memos=False)
    assert res.exit_code == EXIT_CASES_FAILED and [c.case for c in res.failed] == ["R-8"]
    msg = res.failed[0].message
    assert "rock.ucs.median" in msg and "-5" in msg and "expected" in msg
    # the good case: exactly the single run with the same scenario, samples and seed
    written = json.loads((out / "cases" / "R-7" / "results.json").read_text())
    assert written == _reference(R7)
    assert not (out / "cases" / "R-8").exists()
    table = pd.read_parquet(out / "results.parquet")
    assert table.equals(res.table)
    bad = table[table["case"] == "R-8"]
    assert list(bad["status"]) == ["failed"] and "rock.ucs.median" in bad["message"].iloc[0]
    # the sand-free rows carry the limits of results.json, in the field's units (psi here)
    sf = table[(table["case"] == "R-7") & (table["mechanism"] == "sand_free")]
    assert list(sf["drawdown_limit [psi]"]) == [
        s["drawdown_limit"] for s in written["sand_free"]["stages"]]
    assert set(sf["seed"]) == {written["seed"]} and set(sf["version"]) == {written["version"]}
    csv = pd.read_csv(out / "results.csv")
    assert len(csv) == len(table)
    memo = (out / "field_memo.html").read_text()
    assert "Safety cautions" in memo and "[psi]" in memo and "rock.ucs.median" in memo
    assert (out / "field_memo.pdf").read_bytes()[:5] == b"%PDF-"
    assert json.loads((out / "batch.json").read_text())["failed"] == 1


def test_cli_exit_codes_bad_field_file_2_bad_case_3(tmp_path, client):
    runner = CliRunner()
    bad_file = tmp_path / "broken.toml"
    bad_file.write_text("title = \n", encoding="utf-8")
    r = runner.invoke(app, ["batch", str(bad_file), "--out", str(tmp_path / "o1")])
    assert r.exit_code == 2 and "valid TOML" in r.output
    assert not (tmp_path / "o1").exists()  # nothing half-written
    field = write_field(tmp_path, GOOD + BAD)
    r = runner.invoke(app, ["batch", str(field), "--out", str(tmp_path / "o2"), "--samples",
                            str(N), "--no-memos", "--scheduler",
                            client.scheduler.address])
    assert r.exit_code == EXIT_CASES_FAILED == 3, r.output
    assert "R-8" in r.output and (tmp_path / "o2" / "cases" / "R-7" / "results.json").is_file()


def test_rerun_recomputes_only_the_changed_case_and_keeps_foreign_files(tmp_path, client):
    out = tmp_path / "out"
    field = write_field(tmp_path, GOOD + DEEP)
    first = run_field(field, out=out, client=client, samples=N, memos=False)
    assert (first.computed, first.reused) == (2, 0)
    kept = (out / "cases" / "R-7" / "results.json").stat().st_mtime_ns
    (out / "notes.txt").write_text("mine")
    (out / "cases" / "R-7" / "notes.txt").write_text("mine too")
    field.write_text(field.read_text().replace("8300", "8350"))
    second = run_field(field, out=out, client=client, samples=N, memos=False)
    assert (second.computed, second.reused) == (1, 1)  # counted: only the changed case ran
    assert [c.case for c in second.cases if not c.reused] == ["R-7/deep"]
    assert (out / "cases" / "R-7" / "results.json").stat().st_mtime_ns == kept
    assert (out / "notes.txt").read_text() == "mine"
    assert (out / "cases" / "R-7" / "notes.txt").read_text() == "mine too"
    assert second.kept_foreign == ("notes.txt",)
    # a new seed changes every case's inputs' digest
    third = run_field(field, out=out, client=client, samples=N, seed=99, memos=False)
    assert (third.computed, third.reused) == (2, 0)
    # an edited output is never replaced without --force: that case fails, the other is reused
    res = out / "cases" / "R-7" / "results.json"
    res.write_text(res.read_text() + " ")
    fourth = run_field(field, out=out, client=client, samples=N, seed=99, memos=False)
    assert [c.case for c in fourth.failed] == ["R-7"] and "--force" in fourth.failed[0].message
    assert res.read_text().endswith(" ")
    fifth = run_field(field, out=out, client=client, samples=N, seed=99, memos=False,
                      force=True)
    assert not fifth.failed and fifth.computed == 1


def test_an_interrupted_batch_resumes(tmp_path, client):
    out = tmp_path / "out"
    field = write_field(tmp_path, GOOD + DEEP)

    def stop_after_first(event):
        if event.kind == "batch":
            raise KeyboardInterrupt

    with pytest.raises(KeyboardInterrupt):
        run_field(field, out=out, client=client, samples=N, memos=False,
                  progress=stop_after_first)
    assert json.loads((out / "batch.json").read_text())["status"] == "running"
    again = run_field(field, out=out, client=client, samples=N, memos=False)
    assert (again.reused, again.computed) == (1, 1) and not again.failed


def test_nothing_is_written_without_an_output_folder(tmp_path, client, monkeypatch):
    monkeypatch.chdir(tmp_path)
    res = run_field(write_field(tmp_path, GOOD), client=client, samples=N, memos=False)
    assert res.out_dir is None and sorted(p.name for p in tmp_path.iterdir()) == ["field.toml"]
    assert res.summaries["R-7"] == _reference(R7)


def test_killing_a_worker_mid_batch_still_completes_every_case(tmp_path, monkeypatch):
    distributed = pytest.importorskip("distributed")
    marker = tmp_path / "killed"
    # the worker that starts case R-7 is killed (SIGKILL) once; the scheduler reruns the case
    monkeypatch.setenv("RISK_TEST_KILL_CASE", f"R-7={marker}")
    field = write_field(tmp_path, GOOD + DEEP)
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                  dashboard_address=":0") as cluster, \
            distributed.Client(cluster) as c:
        res = run_field(field, out=tmp_path / "out", client=c, samples=N, memos=False)
    assert marker.exists()  # a worker was killed
    assert not res.failed and res.computed == 2
    assert json.loads((tmp_path / "out" / "cases" / "R-7" / "results.json").read_text()) \
        == _reference(R7)


@pytest.mark.slow
def test_batch_of_the_examples_equals_separate_runs(tmp_path, client):
    from risk.api import run_scenario

    names = ("ravenmoor_r7_openhole", "ravenmoor_r12_deviated_perforated",
             "ravenmoor_g3_depleting_gas")
    cases = "".join(f'[[case]]\nwell = "{n}"\nscenario = "{EXAMPLES / n}.toml"\n' for n in names)
    res = run_field(write_field(tmp_path, cases), out=tmp_path / "batch", client=client,
                    samples=512)
    assert not res.failed
    for n in names:
        run_scenario(EXAMPLES / f"{n}.toml", out=tmp_path / "single" / n, samples=512)
        single = json.loads((tmp_path / "single" / n / "results.json").read_text())
        batch = json.loads((tmp_path / "batch" / "cases" / n / "results.json").read_text())
        assert batch == single  # value by value, provenance and scenario digest included
        assert (tmp_path / "batch" / "cases" / n / "memo.pdf").is_file()


@pytest.mark.slow
def test_cli_runs_the_example_field_on_its_own_local_cluster(tmp_path):
    import pandas as pd

    field = EXAMPLES / "field" / "ravenmoor_field.toml"
    r = CliRunner().invoke(app, ["batch", str(field), "--out", str(tmp_path / "field"),
                                 "--samples", "256", "--workers", "2", "--no-memos"])
    assert r.exit_code == 0, r.output
    table = pd.read_parquet(tmp_path / "field" / "results.parquet")
    assert set(table["status"]) == {"ok"} and table["case"].nunique() == 6
    html = (tmp_path / "field" / "field_memo.html").read_text()
    assert "Safety cautions" in html and "R-9/Lower Tarn" in html
