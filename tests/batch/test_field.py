"""The field file: defaults, overrides, the CSV table, and the problems of the file itself.

The format is specified in risk/batch/field.py's docstring; TOML semantics (dotted keys,
inline tables) are those of the TOML v1.0.0 specification (toml.io), read by tomllib.
"""

from __future__ import annotations

import pytest

import risk
from risk.batch import load_field
from risk.batch.field import merge
from risk.errors import ScenarioError

from .conftest import R7, write_field


def test_merge_replaces_a_whole_distribution_and_merges_single_keys():
    base = {"rock": {"ucs": {"dist": "lognormal", "median": 2600, "cov": 0.2}, "biot": 0.9}}
    # a table naming a distribution replaces the whole input (no mixed parameters)
    whole = merge(base, {"rock": {"ucs": {"dist": "normal", "mean": 2500, "sd": 100}}})
    assert whole["rock"]["ucs"] == {"dist": "normal", "mean": 2500, "sd": 100}
    assert whole["rock"]["biot"] == 0.9
    # a dotted key changes one parameter and keeps the rest
    one = merge(base, {"rock": {"ucs": {"median": 3000}}})
    assert one["rock"]["ucs"] == {"dist": "lognormal", "median": 3000, "cov": 0.2}
    assert base["rock"]["ucs"]["median"] == 2600  # the base is not changed


def test_cases_from_toml_and_csv_merge_into_valid_scenarios(tmp_path):
    (tmp_path / "rows.csv").write_text(
        "well,interval,well.depth,rock.ucs.median,production.reservoir_pressure\n"
        'R-9,Lower,8100,2300,"[3500, 3000]"\n'
        "R-15,Lower,7980,,\n", encoding="utf-8")
    path = write_field(tmp_path, '[[case]]\nwell = "R-7"\ninterval = "Upper"\n'
                       "[case.overrides]\nwell.depth = 7400\n", extra='cases_table = "rows.csv"')
    field = load_field(path)
    assert [c.id for c in field.cases] == ["R-7/Upper", "R-9/Lower", "R-15/Lower"]
    r9 = field.cases[1].document
    assert r9["well"]["depth"] == 8100 and r9["rock"]["ucs"]["median"] == 2300
    assert r9["production"]["reservoir_pressure"] == [3500, 3000]  # a cell read as TOML
    assert r9["rock"]["ucs"]["dist"] == "lognormal"  # kept from the defaults
    assert "rock" not in field.cases[2].document or (
        field.cases[2].document["rock"]["ucs"]["median"] == 2600)  # empty cell: no override
    assert field.cases[0].document["title"].startswith("R-7, Upper: Ravenmoor test field")
    for case in field.cases:
        risk.load_scenario(case.document)  # every merged document is a valid scenario
    assert str(R7) in field.files and str(tmp_path / "rows.csv") in field.files


def test_a_case_with_its_own_scenario_file_and_no_overrides_is_that_file(tmp_path):
    path = write_field(tmp_path, f'[[case]]\nwell = "R-7"\nscenario = "{R7}"\n')
    case = load_field(path).cases[0]
    from risk.scenario import load_scenario

    sc = load_scenario(R7)
    assert case.sha256 == sc.sha256 and case.source_name == str(R7)


@pytest.mark.parametrize(("cases", "key", "fragment"), [
    ('[[case]]\ninterval = "x"\n', "case[1].well", "a name of 1 to 80"),
    ('[[case]]\nwell = "A"\n[[case]]\nwell = "A"\n', "case[2].well", "named once"),
    ('[[case]]\nwell = "A"\ndepth = 3\n', "case[1].depth", "scenario keys go under overrides"),
    ('[[case]]\nwell = "A"\nscenario = "missing.toml"\n', "case[1].scenario",
     "an existing file"),
    ("", "case", "at least one case"),
])
def test_problems_of_the_field_file_name_key_value_and_expectation(tmp_path, cases, key,
                                                                    fragment):
    with pytest.raises(ScenarioError) as err:
        load_field(write_field(tmp_path, cases))
    keys = [p.key for p in err.value.problems]
    assert key in keys
    assert fragment in err.value.message


def test_all_problems_are_gathered_and_bad_csv_headers_refused(tmp_path):
    (tmp_path / "rows.csv").write_text("interval,depth\nx,1\n", encoding="utf-8")
    path = write_field(tmp_path, '[[case]]\nwell = ""\n', extra='cases_table = "rows.csv"\n'
                       'colour = "red"')
    with pytest.raises(ScenarioError) as err:
        load_field(path)
    keys = {p.key for p in err.value.problems}
    assert {"colour", "cases_table", "case[1].well"} <= keys


def test_a_field_given_as_a_dict(tmp_path):
    field = load_field({"title": "T", "defaults": str(R7),
                        "case": [{"well": "A", "overrides": {"well": {"depth": 7000}}}]})
    assert field.cases[0].document["well"]["depth"] == 7000
    assert field.source_name == "<dict>"
