"""Bad input through the CLI: exit code 2, one clear message per problem naming the file
and the row (line N) or key, no traceback, no JSON written (contract section 6).
"""

from __future__ import annotations

import json
from dataclasses import dataclass, field
from typing import Any

import pytest
from builders import (
    DEFAULT_CATALOGUE,
    DEFAULT_DESIGN,
    DEFAULT_PROFILE,
    DELETE,
    MISSING,
    study_dict,
    toml_text,
)

import optimiser
from optimiser.cli import app

P, C, D = DEFAULT_PROFILE, DEFAULT_CATALOGUE, DEFAULT_DESIGN


def _cat_row(index: int, **cells: Any) -> tuple:
    """Catalogue row ``index`` of the default with some cells replaced."""
    columns = ["material", "dn_mm", "internal_diameter_mm", "pressure_class",
               "allowable_head_m", "roughness_mm", "hazen_williams_c", "cost_per_m", "note"]
    row = list(C[index])
    for name, value in cells.items():
        row[columns.index(name)] = value
    return tuple(row)


def squash(text: str) -> str:
    """Text without any whitespace: terminal output may wrap anywhere."""
    return "".join(text.split())


@dataclass
class Bad:
    """A bad-input case: study overrides, the file the message must name ("study",
    "profile", "catalogue" or "design"), location texts (line N or key) and words."""

    overrides: dict[str, Any]
    file: str
    where: list[str]
    words: list[str]
    count: int | None = 1  # number of problems reported (None: at least one)
    extra: dict[str, Any] = field(default_factory=dict)


CASES: dict[str, Bad] = {
    # --- study file keys
    "unknown-top-level-key": Bad({"study": {"colour": "red"}}, "study",
                                 ["colour"], ["unknown key"]),
    "unknown-nested-key": Bad({"study": {"route": {"cover": 1}}}, "study",
                              ["[route] cover"], ["unknown key"]),
    "unknown-key-in-array-of-tables": Bad(
        {"study": {"scenario": [{"name": "a", "flow": "1 L/s", "flw": "2 L/s"}]}}, "study",
        ["[[scenario]] #1 flw"], ["unknown key"]),
    "unknown-key-in-fitting": Bad(
        {"study": {"route": {"fitting": [{"chainage_m": 10.0, "k": 1.0, "kk": 2}]}}},
        "study", ["[[route.fitting]] #1 kk"], ["unknown key"]),
    "missing-required-key": Bad({"study": {"source": {"level_m": DELETE}}}, "study",
                                ["[source] level_m"], ["missing"]),
    "missing-title": Bad({"study": {"title": DELETE}}, "study", ["title"], ["missing"]),
    "missing-scenario-flow": Bad({"study": {"scenario": [{"name": "a"}]}}, "study",
                                 ["[[scenario]] #1 flow"], ["missing"]),
    "quoted-number": Bad({"study": {"route": {"cover_m": "1.0"}}}, "study",
                         ["[route] cover_m"], ["number"]),
    "nan-in-toml": Bad({"study": {"source": {"level_m": float("nan")}}}, "study",
                       ["[source] level_m"], ["finite"]),
    "inf-in-toml": Bad({"study": {"outlet": {"required_head_m": float("inf")}}}, "study",
                       ["[outlet] required_head_m"], ["finite"]),
    "bad-literal": Bad({"study": {"route": {"length": "horizontal"}}}, "study",
                       ["[route] length"], ["slope", "chainage"]),
    # --- absurd magnitudes (ranges in optimiser/io/limits.py)
    "level-absurd": Bad({"study": {"outlet": {"required_head_m": 1e308}}}, "study",
                        ["[outlet] required_head_m"], ["outside the accepted range", "9000"]),
    "source-level-absurd": Bad({"study": {"source": {"level_m": 1e308}}}, "study",
                               ["[source] level_m"], ["outside the accepted range"],
                               count=None),
    "cover-absurd": Bad({"study": {"route": {"cover_m": 1e4}}}, "study",
                        ["[route] cover_m"], ["outside the accepted range"]),
    "min-pressure-below-vacuum": Bad({"study": {"route": {"min_pressure_m": -50.0}}},
                                     "study", ["[route] min_pressure_m"], ["vacuum"]),
    "fitting-k-absurd": Bad({"study": {"route": {"fitting": [{"chainage_m": 10.0,
                                                               "k": 1e9}]}}},
                            "study", ["[[route.fitting]] #1 k"], ["outside the accepted"]),
    "roughness-absurd": Bad({"study": {"scenario": [{"name": "a", "flow": "1 L/s",
                                                     "roughness_mm": 1e5}]}},
                            "study", ["[[scenario]] #1 roughness_mm"], ["outside"]),
    "zone-factor-absurd": Bad({"study": {"costs": {"zone_factor": {"rock": 1e9}}}}, "study",
                              ["[costs.zone_factor] rock"], ["outside the accepted range"]),
    "time-limit-absurd": Bad({"study": {"solver": {"time_limit_s": 1e300}}}, "study",
                             ["[solver] time_limit_s"], ["outside the accepted range"]),
    "ground-absurd": Bad({"profile": [P[0], (800.0, 1e308), *P[2:]]}, "profile",
                         ["line 3", "ground_m"], ["outside the accepted range"]),
    "chainage-absurd": Bad({"profile": [*P[:4], (1e308, 145.0)]}, "profile",
                           ["line 6", "chainage_m"], ["outside the accepted range"]),
    "cost-absurd": Bad({"catalogue": [_cat_row(0, cost_per_m=1e300), *C[1:]]}, "catalogue",
                       ["line 2", "cost_per_m"], ["outside the accepted range"]),
    "diameter-absurd": Bad({"catalogue": [_cat_row(0, internal_diameter_mm=1e6), *C[1:]]},
                           "catalogue", ["line 2", "internal_diameter_mm"], ["outside"]),
    "allowable-head-absurd": Bad({"catalogue": [_cat_row(0, allowable_head_m=1e7), *C[1:]]},
                                 "catalogue", ["line 2", "allowable_head_m"], ["outside"]),
    "nan-in-profile": Bad({"profile": [P[0], (800.0, "nan"), *P[2:]]}, "profile",
                          ["line 3", "ground_m"], ["not finite"]),
    "inf-in-catalogue": Bad({"catalogue": [_cat_row(0, roughness_mm="inf"), *C[1:]]},
                            "catalogue", ["line 2", "roughness_mm"], ["not finite"]),
    "nan-in-design": Bad({"design": [(0.0, "nan", "PE", 250, "PN10"), D[1]]}, "design",
                         ["line 2", "to_m"], ["not finite"]),
    # --- flows
    "flow-bare-number-string": Bad({"study": {"scenario": [{"name": "a", "flow": "42"}]}},
                                   "study", ["[[scenario]] #1", "flow"], ["no unit"]),
    "flow-bare-number": Bad({"study": {"scenario": [{"name": "a", "flow": 42}]}},
                            "study", ["[[scenario]] #1", "flow"], ["no unit"]),
    "flow-wrong-dimension": Bad({"study": {"scenario": [{"name": "a", "flow": "42 m"}]}},
                                "study", ["[[scenario]] #1", "flow"], ["not a flow"]),
    "flow-second-number-after-unit": Bad(
        {"study": {"scenario": [{"name": "a", "flow": "42 L/s 3"}]}}, "study",
        ["[[scenario]] #1", "flow"], ["one number followed by a unit"]),
    "flow-number-with-a-space": Bad(
        {"study": {"offtake": [{"chainage_m": 100.0, "flow": "4 2 L/s"}]}}, "study",
        ["[[offtake]] #1 flow"], ["one number followed by a unit"]),
    "flow-absurd": Bad({"study": {"scenario": [{"name": "a", "flow": "1e6 m^3/s"}]}},
                       "study", ["[[scenario]] #1", "flow"], ["largest flow"]),
    "offtake-flow-no-unit": Bad({"study": {"offtake": [{"chainage_m": 100.0, "flow": "3"}]}},
                                "study", ["[[offtake]] #1 flow"], ["no unit"]),
    # --- scenarios
    "duplicate-scenario-names": Bad(
        {"study": {"scenario": [{"name": "a", "flow": "1 L/s"},
                                {"name": "a", "flow": "2 L/s"}]}},
        "study", ["[[scenario]] #2", "name"], ["already has this name"]),
    "both-roughness-keys": Bad(
        {"study": {"scenario": [{"name": "a", "flow": "1 L/s", "roughness_mm": 1.0,
                                 "roughness_factor": 2.0}]}},
        "study", ["[[scenario]] #1"], ["roughness_mm", "roughness_factor", "not both"]),
    "zero-scenarios": Bad({"study": {"scenario": DELETE}}, "study", ["[[scenario]]"],
                          ["at least one scenario"]),
    "empty-scenario-list": Bad({"study": {"scenario": []}}, "study", ["[[scenario]]"],
                               ["at least one scenario"]),
    # --- catalogue filter
    "materials-empty-list": Bad({"study": {"catalogue": {"materials": []}}}, "study",
                                ["[catalogue] materials"], ["list is empty"]),
    # --- offtakes and fittings
    "offtake-beyond-route-end": Bad(
        {"study": {"offtake": [{"chainage_m": 3500.0, "flow": "3 L/s"}]}}, "study",
        ["[[offtake]] #1 chainage_m"], ["outside the route"]),
    "offtake-before-route-start": Bad(
        {"study": {"offtake": [{"chainage_m": -5.0, "flow": "3 L/s"}]}}, "study",
        ["[[offtake]] #1 chainage_m"], ["outside the route"]),
    "fitting-outside-route": Bad(
        {"study": {"route": {"fitting": [{"chainage_m": 9000.0, "k": 1.0}]}}}, "study",
        ["[[route.fitting]] #1 chainage_m"], ["outside the route"]),
    # --- whole files
    "invalid-toml": Bad({"study_text": 'title = "x"\n[source\nlevel_m = 1\n'}, "study",
                        ["line 2"], ["not valid toml"]),
    "empty-study": Bad({"study_text": ""}, "study", [], ["empty"]),
    "empty-profile": Bad({"profile": ""}, "profile", [], ["empty"]),
    "empty-catalogue": Bad({"catalogue": ""}, "catalogue", [], ["empty"]),
    "empty-design": Bad({"design": ""}, "design", [], ["empty"]),
    "header-only-profile": Bad({"profile": "chainage_m,ground_m\n"}, "profile", [],
                               ["no data rows"]),
    "missing-study": Bad({"extra": "remove-study"}, "study", [], ["not found"]),
    "missing-profile": Bad({"profile": MISSING}, "profile", [], ["not found"]),
    "missing-catalogue": Bad({"catalogue": MISSING}, "catalogue", [], ["not found"]),
    "missing-design": Bad({"design": MISSING}, "design", [], ["not found"]),
    "catalogue-utf16": Bad({"extra": "utf16-catalogue"}, "catalogue", [], ["utf-16"]),
    "profile-not-utf8": Bad({"extra": "latin1-profile"}, "profile", ["line 3"], ["utf-8"]),
    "huge-csv-field": Bad({"profile": "chainage_m,ground_m\n0," + "1" * 200_000 + "\n"},
                          "profile", ["line 2"], ["cannot read"]),
    # --- missing columns
    "profile-missing-column": Bad({"profile": "chainage_m,label\n0,a\n3000,b\n"}, "profile",
                                  ["line 1"], ["missing column", "ground_m"]),
    "catalogue-missing-column": Bad(
        {"catalogue": "material,dn_mm,internal_diameter_mm,pressure_class,roughness_mm,"
                      "hazen_williams_c,cost_per_m,note\nPE,200,176.2,PN10,0.02,150,45,x\n"},
        "catalogue", ["line 1"], ["missing column", "allowable_head_m"]),
    "design-missing-column": Bad({"design": "from_m,to_m,material,dn_mm\n0,3000,PE,200\n"},
                                 "design", ["line 1"], ["missing column", "pressure_class"]),
    # --- separators other than the comma (regional spreadsheet settings)
    "semicolon-profile": Bad(
        {"profile": "chainage_m;ground_m;label;zone\n0;199;intake;\n3000;145,5;tank;\n"},
        "profile", ["line 1"], ["seems to use ';' as separator", "use ','"]),
    "semicolon-catalogue": Bad(
        {"catalogue": "material;dn_mm;internal_diameter_mm;pressure_class;allowable_head_m;"
                      "roughness_mm;hazen_williams_c;cost_per_m;note\n"
                      "PE;200;176,2;PN10;102;0,02;150;45;x\n"},
        "catalogue", ["line 1"], ["seems to use ';' as separator"]),
    "semicolon-design": Bad(
        {"design": "from_m;to_m;material;dn_mm;pressure_class\n0;3000;PE;200;PN10\n"},
        "design", ["line 1"], ["seems to use ';' as separator"]),
    "tab-separated-profile": Bad(
        {"profile": "chainage_m\tground_m\n0\t199\n3000\t145\n"}, "profile", ["line 1"],
        ["seems to use tab as separator"]),
    # --- profile rows
    "chainage-not-increasing": Bad(
        {"profile": [P[0], P[1], (800.0, 180.0), P[3], P[4]]}, "profile", ["line 4"],
        ["does not increase"]),
    "chainage-decreasing": Bad(
        {"profile": [P[0], P[1], (700.0, 180.0), P[3], P[4]]}, "profile", ["line 4"],
        ["does not increase"]),
    "first-chainage-not-zero": Bad({"profile": [(10.0, 199.0), *P[1:]]}, "profile",
                                   ["line 2"], ["first chainage_m must be 0"]),
    "profile-non-numeric": Bad({"profile": [P[0], (800.0, "abc"), *P[2:]]}, "profile",
                               ["line 3", "ground_m"], ["not a number"]),
    "profile-one-point": Bad({"profile": [P[0]]}, "profile", [], ["at least two points"]),
    # --- catalogue rows
    "diameter-zero": Bad({"catalogue": [_cat_row(0, internal_diameter_mm=0), *C[1:]]},
                         "catalogue", ["line 2", "internal_diameter_mm"], ["> 0"]),
    "diameter-negative": Bad({"catalogue": [_cat_row(0, internal_diameter_mm=-141), *C[1:]]},
                             "catalogue", ["line 2", "internal_diameter_mm"], ["> 0"]),
    "duplicate-catalogue-row": Bad({"catalogue": [*C, C[1]]}, "catalogue",
                                   [f"line {len(C) + 2}", "line 3"], ["duplicate"]),
    "catalogue-non-numeric": Bad({"catalogue": [_cat_row(0, cost_per_m="cheap"), *C[1:]]},
                                 "catalogue", ["line 2", "cost_per_m"], ["not a number"]),
    "hazen-williams-without-c": Bad(
        {"study": {"catalogue": {"friction": "hazen-williams"}},
         "catalogue": [_cat_row(2, hazen_williams_c=""), *C[:2], *C[3:]]},
        "catalogue", ["line 2", "hazen_williams_c"], ["empty"]),
    # --- design rows
    "piece-zero-length": Bad(
        {"design": [D[0], (1200.0, 1200.0, "PE", 200, "PN10"), D[1]]}, "design", ["line 3"],
        ["zero or negative length"]),
    "piece-negative-length": Bad(
        {"design": [D[0], (1200.0, 1100.0, "PE", 200, "PN10"), (1100.0, 3000.0, "PE", 200,
                                                                  "PN10")]},
        "design", ["line 3"], ["zero or negative length"], count=None),
    "option-not-in-catalogue": Bad(
        {"design": [(0.0, 1200.0, "PE", 250, "PN25"), D[1]]}, "design", ["line 2"],
        ["not in the catalogue", "PN25"]),
    "pieces-leave-a-gap": Bad({"design": [D[0], (1300.0, 3000.0, "PE", 200, "PN10")]},
                              "design", ["line 3"], ["gap", "1200", "1300"]),
    "pieces-overlap": Bad({"design": [D[0], (1100.0, 3000.0, "PE", 200, "PN10")]},
                          "design", ["line 3"], ["overlaps"]),
    "design-short-of-route-end": Bad({"design": [D[0], (1200.0, 2900.0, "PE", 200, "PN10")]},
                                     "design", ["line 3"], ["ends at 2900", "3000"]),
    "design-beyond-route-end": Bad({"design": [D[0], (1200.0, 3100.0, "PE", 200, "PN10")]},
                                   "design", ["line 3"], ["ends at 3100", "3000"]),
    "design-not-starting-at-zero": Bad({"design": [(50.0, 1200.0, "PE", 250, "PN10"), D[1]]},
                                       "design", ["line 2"], ["start at chainage 0"]),
    "design-non-numeric": Bad({"design": [(0.0, "x", "PE", 250, "PN10"), D[1]]}, "design",
                              ["line 2", "to_m"], ["not a number"]),
    "design-empty-material": Bad({"design": [(0.0, 1200.0, "", 250, "PN10"), D[1]]},
                                 "design", ["line 2", "material"], ["empty"]),
}


def _make(make_study, case: Bad):
    overrides = {k: v for k, v in case.overrides.items() if k != "extra"}
    files = make_study(**overrides)
    action = case.overrides.get("extra")
    if action == "remove-study":
        files.study.unlink()
    elif action == "utf16-catalogue":
        files.catalogue.write_bytes(files.catalogue.read_text().encode("utf-16"))
    elif action == "latin1-profile":
        files.profile.write_bytes(b"chainage_m,ground_m,label\n0,199,intake\n"
                                  b"3000,145,r\xe9servoir\n")
    return files


def _invoke(runner, files, json_path):
    return runner.invoke(app, ["check", str(files.study), "--design", str(files.design),
                               "--json", str(json_path)])


@pytest.mark.parametrize("name", list(CASES))
def test_bad_input_exits_2_with_a_located_message(name, make_study, runner, tmp_path):
    case = CASES[name]
    files = _make(make_study, case)
    json_path = tmp_path / "result.json"
    result = _invoke(runner, files, json_path)
    output = result.output
    assert result.exit_code == 2, output
    assert "Traceback" not in output
    assert result.exception is None or isinstance(result.exception, SystemExit), output
    assert not json_path.exists()
    flat = squash(output)
    file_path = getattr(files, case.file)
    assert squash(file_path.name) in flat, output
    assert squash(str(file_path.resolve())) in flat or squash(str(file_path)) in flat, output
    for where in case.where:
        assert squash(where) in flat, output
    for word in case.words:
        assert squash(word).lower() in flat.lower(), output
    problems = flat.count("error:")
    if case.count is None:
        assert problems >= 1, output
    else:
        assert problems == case.count, output


def test_bad_input_is_an_input_error_from_the_api(make_study):
    """The same problems reach API users as one InputError with a list of messages."""
    files = make_study(profile=[P[0], (800.0, "abc"), *P[2:]])
    with pytest.raises(optimiser.InputError) as caught:
        optimiser.load_study(files.study)
    assert len(caught.value.problems) == 1
    assert "line 3" in caught.value.problems[0]


# --------------------------------------------------------------------------- several


def _problems(runner, files, tmp_path) -> tuple[int, list[str], str]:
    result = _invoke(runner, files, tmp_path / "r.json")
    assert "Traceback" not in result.output
    assert not (tmp_path / "r.json").exists()
    chunks = squash(result.output).split("error:")[1:]
    return result.exit_code, chunks, result.output


def test_two_bad_profile_rows_give_two_messages(make_study, runner, tmp_path):
    files = make_study(profile=[P[0], (800.0, "abc"), (1600.0, "x"), *P[3:]])
    code, problems, output = _problems(runner, files, tmp_path)
    assert code == 2
    assert len(problems) == 2, output
    assert "line3" in problems[0] and "line4" in problems[1]


def test_every_bad_catalogue_cell_is_reported(make_study, runner, tmp_path):
    files = make_study(catalogue=[_cat_row(0, internal_diameter_mm=0, cost_per_m="x"),
                                  _cat_row(1, roughness_mm=-1), *C[2:], C[3]])
    code, problems, output = _problems(runner, files, tmp_path)
    assert code == 2
    text = " ".join(problems)
    assert len(problems) == 4, output
    for expected in ("internal_diameter_mm", "cost_per_m", "roughness_mm", "duplicate"):
        assert expected in text


def test_independent_design_problems_are_all_reported(make_study, runner, tmp_path):
    """A gap, an unknown option and a short end are independent: three messages."""
    files = make_study(design=[(0.0, 1000.0, "PE", 250, "PN10"),
                               (1100.0, 2000.0, "PE", 999, "PN10"),
                               (2000.0, 2900.0, "PE", 200, "PN10")])
    code, problems, output = _problems(runner, files, tmp_path)
    assert code == 2
    assert len(problems) == 3, output
    assert "gap" in problems[0] and "line3" in problems[0]
    assert "DN999" in problems[1]
    assert "endsat2900" in problems[2]


def test_a_bad_cell_does_not_cause_follow_on_messages(make_study, runner, tmp_path):
    """A non-numeric first row must not also claim the next row 'does not start at 0'."""
    files = make_study(design=[(0.0, "x", "PE", 250, "PN10"), D[1]])
    code, problems, output = _problems(runner, files, tmp_path)
    assert code == 2
    assert len(problems) == 1, output
    files = make_study(profile=[(0.0, "?"), *P[1:]])
    code, problems, output = _problems(runner, files, tmp_path)
    assert len(problems) == 1, output


def test_problems_in_study_and_profile_are_reported_together(make_study, runner, tmp_path):
    """A duplicate scenario name and a bad profile row are independent problems."""
    files = make_study(study={"scenario": [{"name": "a", "flow": "1 L/s"},
                                           {"name": "a", "flow": "2 L/s"}]},
                       profile=[P[0], (800.0, "abc"), *P[2:]])
    code, problems, output = _problems(runner, files, tmp_path)
    assert code == 2
    assert len(problems) == 2, output
    assert any("study.toml" in p for p in problems)
    assert any("profile.csv" in p and "line3" in p for p in problems)


def test_several_unknown_keys_each_named(make_study, runner, tmp_path):
    files = make_study(study={"colour": 1, "route": {"cover": 1.0},
                              "rules": {"max_change": 2}})
    code, problems, output = _problems(runner, files, tmp_path)
    assert code == 2
    assert len(problems) == 3, output
    text = " ".join(problems)
    for key in ("colour", "[route]cover", "[rules]max_change"):
        assert key in text


def test_study_text_written_by_the_builder_is_valid_toml(tmp_path):
    """Guard on the test data: the builder's TOML round-trips through tomllib."""
    import tomllib

    data = study_dict()
    assert tomllib.loads(toml_text(data)) == data


# --------------------------------------------------------------------------- usage


def test_missing_design_option_is_a_usage_error(study_files, runner):
    result = runner.invoke(app, ["check", str(study_files.study)])
    assert result.exit_code == 2
    assert "Traceback" not in result.output
    assert "--design" in result.output


def test_unknown_option_is_a_usage_error(study_files, runner):
    result = runner.invoke(app, ["check", str(study_files.study), "--design",
                                 str(study_files.design), "--colour"])
    assert result.exit_code == 2
    assert "Traceback" not in result.output


def test_json_into_a_missing_folder_creates_it(study_files, runner, tmp_path):
    # Issue 16 item 11: --json PATH creates missing folders (common practice, no source).
    target = tmp_path / "no" / "such" / "folder" / "r.json"
    result = runner.invoke(app, ["check", str(study_files.study), "--design",
                                 str(study_files.design), "--json", str(target)])
    assert result.exit_code == 0, result.output
    assert json.loads(target.read_text(encoding="utf-8"))["ok"] is True
    assert sorted(p.name for p in target.parent.iterdir()) == ["r.json"]


def test_json_under_a_file_is_bad_input_and_creates_nothing(study_files, runner, tmp_path):
    target = tmp_path / "new" / "afile" / "r.json"
    (tmp_path / "new").mkdir()
    (tmp_path / "new" / "afile").write_text("in the way\n", encoding="utf-8")
    before = sorted(p.relative_to(tmp_path) for p in tmp_path.rglob("*"))
    result = runner.invoke(app, ["check", str(study_files.study), "--design",
                                 str(study_files.design), "--json", str(target)])
    assert result.exit_code == 2, result.output
    assert "Traceback" not in result.output
    assert "afile" in result.output
    assert sorted(p.relative_to(tmp_path) for p in tmp_path.rglob("*")) == before


def test_empty_materials_list_stops_design_with_exit_2(make_study, runner, tmp_path):
    """``materials = []`` leaves nothing to design with: bad input naming the key (exit 2),
    not a run that finds no design (exit 1)."""
    files = make_study(study={"catalogue": {"materials": []}})
    out = tmp_path / "out"
    result = runner.invoke(app, ["design", str(files.study), "--out", str(out)])
    assert result.exit_code == 2, result.output
    assert "Traceback" not in result.output
    assert "[catalogue]materials" in squash(result.output)
    assert not out.exists() or not any(out.iterdir())


# Every numeric key of the study file, with a value that is valid for it.
NUMERIC_KEYS: list[tuple[tuple, float]] = [
    (("water", "temperature_c"), 15.0), (("source", "level_m"), 201.0),
    (("source", "top_water_level_m"), 203.0), (("source", "entrance_k"), 0.5),
    (("outlet", "required_head_m"), 175.0), (("outlet", "exit_k"), 1.0),
    (("route", "cover_m"), 1.0), (("route", "min_pressure_m"), 2.0),
    (("route", "local_k_per_km"), 0.1), (("route", "fitting", 0, "k"), 2.0),
    (("offtake", 0, "min_pressure_m"), 5.0), (("scenario", 0, "offtake_factor"), 1.0),
    (("scenario", 0, "source_level_m"), 200.0), (("scenario", 0, "roughness_mm"), 0.1),
    (("catalogue", "surge_allowance_m"), 0.0), (("rules", "min_piece_length_m"), 0.0),
    (("rules", "velocity_min_m_s"), 0.0), (("rules", "velocity_max_m_s"), 3.0),
    (("costs", "change_cost"), 0.0), (("costs", "zone_factor", "rock"), 1.5),
    (("solver", "time_limit_s"), 60.0), (("solver", "mip_gap"), 1e-4),
]


def _set(data: dict, location: tuple, value: Any) -> dict:
    target: Any = data
    for key in location[:-1]:
        target = target.setdefault(key, {}) if isinstance(key, str) else target[key]
    target[location[-1]] = value
    return data


@pytest.mark.parametrize("bad", [float("nan"), float("inf"), float("-inf"), 1e308, -1e308])
@pytest.mark.parametrize(("location", "good"), NUMERIC_KEYS,
                         ids=["-".join(map(str, loc)) for loc, _ in NUMERIC_KEYS])
def test_every_numeric_study_key_refuses_absurd_values(make_study, location, good, bad):
    """nan, inf and +-1e308 are refused at every numeric key, naming it; the same key
    with an ordinary value loads (so the refusal is about the value)."""
    from builders import toml_text

    data = _set(study_dict(), location, good)
    files = make_study(study_text=toml_text(data))
    optimiser.load_study(files.study)
    files = make_study(study_text=toml_text(_set(data, location, bad)))
    with pytest.raises(optimiser.InputError) as caught:
        optimiser.load_study(files.study)
    key = str(location[-1])
    assert any(key in problem and "study.toml" in problem
               for problem in caught.value.problems), caught.value.problems


def test_the_ranges_take_real_extremes():
    """Levels from the Dead Sea shore (about -430 m) to Everest (about 8,849 m), from
    memory; pressure heads down to -10 m (standard atmosphere 101.325 kPa is 10.33 m of
    water at 1000 kg/m^3, common practice, no source)."""
    from optimiser.io import limits

    for level in (-430.0, 0.0, 4150.0, 8849.0):
        assert limits.LEVEL.message(level) is None
    assert limits.LEVEL.message(-501.0) and limits.LEVEL.message(9001.0)
    assert limits.PRESSURE.message(-10.0) is None
    assert limits.PRESSURE.message(-10.4)
