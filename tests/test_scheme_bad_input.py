"""Bad input of branched schemes through the CLI (contract sections 6 and 7): exit code 2,
one message per problem naming the file and the row (line N) or key, no traceback, no
JSON written. Rules: contract section 7 for ``[[branch]]``, docs/file-formats.md for
the compact ``[network]`` form (extension) and the design CSV's ``branch`` column.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import pytest
from builders import DELETE, csv_text
from scheme_builders import (
    BRANCH_OFFTAKES,
    BRANCH_TABLES,
    LINKS,
    NODES,
    write_branch_scheme,
    write_csv,
    write_network_scheme,
)

from optimiser.cli import app

NORTH, SCHOOL = BRANCH_TABLES


def _with(table: dict[str, Any], **changes: Any) -> dict[str, Any]:
    out = {**table, **changes}
    return {k: v for k, v in out.items() if v is not None}


@dataclass
class Bad:
    """A case: top-level study overrides (or nodes/links/files), the file the message
    must name, location texts and words, and the number of problems."""

    study: dict[str, Any] = field(default_factory=dict)
    file: str = "study.toml"
    where: list[str] = field(default_factory=list)
    words: list[str] = field(default_factory=list)
    count: int = 1
    network: bool = False
    nodes: list[dict] | None = None
    links: list[dict] | None = None
    files: dict[str, Any] = field(default_factory=dict)


BRANCH_CASES: dict[str, Bad] = {
    "unknown-parent": Bad({"branch": [NORTH, _with(SCHOOL, **{"from": "nowhere"})]},
                          where=["[[branch]] #2 ('school') from"],
                          words=["no branch is named 'nowhere'"]),
    "junction-at-start": Bad({"branch": [_with(NORTH, at_chainage_m=0.0), SCHOOL]},
                             where=["[[branch]] #1", "at_chainage_m"],
                             words=["not strictly inside", "profile.csv"]),
    "junction-past-end": Bad({"branch": [NORTH, _with(SCHOOL, at_chainage_m=1000.0)]},
                             where=["[[branch]] #2", "at_chainage_m"],
                             words=["not strictly inside", "north.csv"]),
    "ground-disagrees": Bad(files={"north.csv": [(0.0, 180.0), (1000.0, 160.0)]},
                            where=["[[branch]] #1"],
                            words=["north.csv", "profile.csv", "180.00", "175.00", "0.5"]),
    "cycle": Bad({"branch": [_with(NORTH, **{"from": "school"}), SCHOOL]},
                 where=["from"], words=["cycle", "'north end' -> 'school'"]),
    "duplicate-name": Bad({"branch": [NORTH, _with(SCHOOL, name="north end",
                                                   **{"from": "main"})]},
                          where=["[[branch]] #2", "name"], words=["already has this name"]),
    "name-main": Bad({"branch": [NORTH, _with(SCHOOL, name="main", **{"from": "main"})]},
                     where=["[[branch]] #2", "name"], words=["trunk"]),
    "flow-missing": Bad({"branch": [NORTH, _with(SCHOOL, flow=None)]},
                        where=["[[branch]] #2 ('school') flow"], words=["missing"]),
    "flow-zero-everywhere": Bad({"branch": [NORTH, _with(SCHOOL, flow="0 L/s")]},
                                where=["[[branch]] #2 ('school')"], words=["no flow"]),
    "flow-without-unit": Bad({"branch": [NORTH, _with(SCHOOL, flow="1.5")]},
                             where=["[[branch]] #2 ('school') flow"], words=["unit"]),
    "branch-flow-unknown": Bad(
        {"scenario": [{"name": "peak day", "flow": "25 L/s",
                       "branch_flow": {"nowhere": "2 L/s"}}]},
        where=["[[scenario]] #1", "branch_flow.nowhere"], words=["no branch"]),
    "offtake-unknown-branch": Bad(
        {"offtake": [*BRANCH_OFFTAKES, {"chainage_m": 10.0, "flow": "1 L/s",
                                        "branch": "east"}]},
        where=["[[offtake]] #3 branch"], words=["'east'"]),
    "offtake-outside-branch": Bad(
        {"offtake": [BRANCH_OFFTAKES[0], _with(BRANCH_OFFTAKES[1], chainage_m=1200.0)]},
        where=["[[offtake]] #2 chainage_m"], words=["outside", "north.csv"]),
    "fitting-outside-branch": Bad(
        {"branch": [_with(NORTH, fitting=[{"chainage_m": 1500.0, "k": 1.0}]), SCHOOL]},
        where=["[[branch]] #1", "[[fitting]] #1"], words=["outside the branch"]),
    "unknown-key": Bad({"branch": [_with(NORTH, colour="red"), SCHOOL]},
                       where=["[[branch]] #1 colour"], words=["unknown key"]),
    "unknown-key-in-fitting": Bad(
        {"branch": [_with(NORTH, fitting=[{"chainage_m": 10.0, "k": 1.0, "kk": 1}]),
                    SCHOOL]},
        where=["[[branch]] #1", "kk"], words=["unknown key"]),
    "profile-missing": Bad({"branch": [NORTH, _with(SCHOOL, profile="nofile.csv")]},
                           file="nofile.csv", words=["not found"]),
}


def _node(name: str, **changes: Any) -> list[dict]:
    return [{**n, **changes} if n["name"] == name else n for n in NODES]


NETWORK_CASES: dict[str, Bad] = {
    "unknown-node": Bad(links=[*LINKS[:-1], {**LINKS[-1], "to": "scool"}],
                        file="links.csv", where=[f"line {len(LINKS) + 1}", "column to"],
                        words=["'scool'"], network=True),
    "node-reached-twice": Bad(links=[*LINKS, {"from": "n800", "to": "school",
                                              "length_m": 90.0}],
                              file="links.csv", where=[f"line {len(LINKS) + 2}"],
                              words=["reached twice", "loop"], network=True),
    "disconnected-node": Bad(nodes=[*NODES, {"name": "hut", "ground_m": 150.0}],
                             file="nodes.csv", where=[f"line {len(NODES) + 2}"],
                             words=["'hut'", "disconnected"], network=True),
    "second-source": Bad(nodes=[*NODES, {"name": "spring", "ground_m": 190.0},
                                {"name": "hut2", "ground_m": 185.0, "demand": "1 L/s"}],
                         links=[*LINKS, {"from": "spring", "to": "hut2", "length_m": 40.0}],
                         file="nodes.csv", where=[f"line {len(NODES) + 2}"],
                         words=["'spring'", "second source"], network=True),
    "loop-away-from-the-source": Bad(
        nodes=[*NODES, {"name": "a", "ground_m": 150.0}, {"name": "b", "ground_m": 150.0}],
        links=[*LINKS, {"from": "a", "to": "b", "length_m": 40.0},
               {"from": "b", "to": "a", "length_m": 40.0}],
        file="links.csv", words=["'a'", "'b'", "not connected", "loop"], network=True),
    "non-positive-length": Bad(links=[{**LINKS[0], "length_m": 0.0}, *LINKS[1:]],
                               file="links.csv", where=["line 2", "length_m"],
                               words=["> 0"], network=True),
    "demand-without-unit": Bad(nodes=_node("school", demand="1.5"), file="nodes.csv",
                               where=["line 12", "demand"], words=["unit"], network=True),
    "source-not-a-node": Bad({"network": {"nodes": "nodes.csv", "links": "links.csv",
                                          "source": "lake"}},
                             where=["[network] source"], words=["'lake'"], network=True),
    "profile-with-network": Bad({"route": {"profile": "profile.csv", "fitting": DELETE}},
                                where=["[route] profile"], words=["[network]"],
                                network=True),
    "duplicate-node": Bad(nodes=[*NODES, {"name": "school", "ground_m": 1.0}],
                          file="nodes.csv", where=[f"line {len(NODES) + 2}", "line 12"],
                          words=["already given"], network=True),
    "link-profile-ground-disagrees": Bad(
        links=[{"from": "intake", "to": "n800", "profile": "dip.csv"}, *LINKS[1:]],
        files={"dip.csv": [(0.0, 199.0), (800.0, 195.0)]}, file="links.csv",
        where=["line 2"], words=["dip.csv", "195.00", "190.00", "'n800'"], network=True),
    "source-with-demand": Bad(nodes=_node("intake", demand="1 L/s"), file="nodes.csv",
                              where=["line 2"], words=["source node"], network=True),
}


def _write(tmp_path, case: Bad):
    if case.network:
        files = write_network_scheme(tmp_path, study=case.study, nodes=case.nodes,
                                     links=case.links)
    else:
        files = write_branch_scheme(tmp_path, study=case.study)
    for name, rows in case.files.items():
        write_csv(files.folder / name, rows, ("chainage_m", "ground_m"))
    return files


def _squash(text: str) -> str:
    return "".join(text.split())


def _assert_bad(result, case: Bad, json_path) -> None:
    output = result.output
    assert result.exit_code == 2, output
    assert "Traceback" not in output
    assert result.exception is None or isinstance(result.exception, SystemExit), output
    assert not json_path.exists()
    flat = _squash(output)
    assert _squash(case.file) in flat, output
    for where in case.where:
        assert _squash(where) in flat, output
    for word in case.words:
        assert _squash(word).lower() in flat.lower(), output
    assert flat.count("error:") == case.count, output


@pytest.mark.parametrize("name", [*BRANCH_CASES, *NETWORK_CASES])
def test_bad_scheme_input_exits_2_with_a_located_message(name, tmp_path, runner):
    case = BRANCH_CASES.get(name) or NETWORK_CASES[name]
    files = _write(tmp_path, case)
    json_path = tmp_path / "result.json"
    result = runner.invoke(app, ["check", str(files.study), "--design", str(files.design),
                                 "--json", str(json_path)])
    _assert_bad(result, case, json_path)


DESIGN_COLUMNS = ("branch", "from_m", "to_m", "material", "dn_mm", "pressure_class")
GOOD_DESIGN = [
    ("main", 0.0, 3000.0, "PE", 250, "PN10"), ("north end", 0.0, 1000.0, "PE", 160, "PN10"),
    ("school", 0.0, 400.0, "PE", 160, "PN10"),
]

DESIGN_CASES: dict[str, Bad] = {
    "unknown-branch": Bad(files={"rows": [*GOOD_DESIGN, ("east", 0.0, 10.0, "PE", 160,
                                                         "PN10")]},
                          file="scheme-design.csv", where=["line 5", "column branch"],
                          words=["'east'"]),
    "branch-without-pieces": Bad(files={"rows": GOOD_DESIGN[:2]}, file="scheme-design.csv",
                                 words=["'school'", "no piece"]),
    "gap-on-a-branch": Bad(files={"rows": [*GOOD_DESIGN[:2], ("school", 0.0, 100.0, "PE",
                                                               160, "PN10"),
                                           ("school", 150.0, 400.0, "PE", 160, "PN10")]},
                           file="scheme-design.csv", where=["line 5"], words=["gap"]),
    "branch-short-of-its-end": Bad(files={"rows": [*GOOD_DESIGN[:2], ("school", 0.0, 300.0,
                                                                       "PE", 160, "PN10")]},
                                   file="scheme-design.csv", where=["line 4"],
                                   words=["branch 'school' ends at 400"]),
}


@pytest.mark.parametrize("name", list(DESIGN_CASES))
def test_bad_scheme_design_csv_exits_2_naming_the_row(name, tmp_path, runner):
    case = DESIGN_CASES[name]
    files = write_branch_scheme(tmp_path)
    design = files.folder / "scheme-design.csv"
    design.write_text(csv_text(case.files["rows"], DESIGN_COLUMNS), encoding="utf-8")
    json_path = tmp_path / "result.json"
    result = runner.invoke(app, ["check", str(files.study), "--design", str(design),
                                 "--json", str(json_path)])
    _assert_bad(result, case, json_path)


def test_every_problem_of_a_scheme_is_reported_together(tmp_path, runner):
    """Independent problems in the study and a branch profile come out in one run."""
    files = write_branch_scheme(tmp_path, study={"branch": [
        _with(NORTH, **{"from": "nowhere"}), _with(SCHOOL, profile="nofile.csv")]})
    result = runner.invoke(app, ["check", str(files.study), "--design", str(files.design)])
    assert result.exit_code == 2
    flat = _squash(result.output)
    assert "'nowhere'" in flat and "nofile.csv" in flat
