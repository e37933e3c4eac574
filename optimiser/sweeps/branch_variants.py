"""Variants of a scheme with one branch's delivery changed: its required head
(``branch-head:NAME``) or its flow (``branch-flow:NAME``), for a trade-off of the whole
scheme's least cost against what one branch must deliver (contract section 7).

``NAME`` is the branch's name as written in the study (``main`` is the trunk, where the
two are the plain ``required-head`` and ``flow``). A branch's flow is its ``flow`` key;
a scenario that gives this branch its own ``branch_flow`` keeps it in the same
proportion to the key, and a scenario's ``branch_factor`` still multiplies the key.
"""

from __future__ import annotations

import dataclasses

from optimiser.model import TRUNK, Study

BRANCH_HEAD = "branch-head"
BRANCH_FLOW = "branch-flow"
BRANCH_KINDS = (BRANCH_HEAD, BRANCH_FLOW)
TRUNK_EQUIVALENT = {BRANCH_HEAD: "required-head", BRANCH_FLOW: "flow"}
"""The trunk's own name for each kind (``branch-head:main`` is ``required-head``)."""


def branch_variable(variable: str) -> tuple[str, str] | None:
    """(kind, branch name) of ``branch-head:NAME`` or ``branch-flow:NAME`` (the kind in
    lower case, the name as given, trimmed); None for any other variable."""
    kind, colon, name = variable.partition(":")
    kind = kind.strip().lower()
    if not colon or kind not in BRANCH_KINDS:
        return None
    return kind, name.strip()


def normalised(variable: str) -> str:
    """``variable`` as the sweeps use it: plain variables in lower case, a branch
    variable as ``kind:NAME`` with the name's own case."""
    parsed = branch_variable(variable)
    return variable.strip().lower() if parsed is None else f"{parsed[0]}:{parsed[1]}"


def is_flow(variable: str) -> bool:
    """True for a flow (``flow`` or ``branch-flow:NAME``): its values are in m^3/s."""
    parsed = branch_variable(variable)
    return variable == "flow" or (parsed is not None and parsed[0] == BRANCH_FLOW)


def branch_problems(study: Study, variable: str) -> list[str]:
    """Why ``variable`` cannot vary ``study`` (an unknown or missing branch), if so."""
    parsed = branch_variable(variable)
    if parsed is None:
        return []
    kind, name = parsed
    if not name:
        return [f"--vary {variable!r}: name the branch after the colon, e.g. {kind}:east"]
    if name not in study.branch_names:
        known = ", ".join(repr(n) for n in study.branch_names)
        return [f"--vary {variable!r}: the study has no branch {name!r} (its lines: {known})"]
    return []


def with_branch_head(study: Study, name: str, head_m: float) -> Study:
    """Branch ``name``'s required head set to ``head_m`` [m]."""
    branches = tuple(dataclasses.replace(b, required_head_m=head_m) if b.name == name else b
                     for b in study.branches)
    return dataclasses.replace(study, branches=branches)


def with_branch_flow(study: Study, name: str, flow_m3_s: float) -> Study:
    """Branch ``name``'s flow key set to ``flow_m3_s`` [m^3/s]; a scenario's own flow
    for the branch moves in proportion."""
    old = study.branch(name).flow_m3_s
    scale = flow_m3_s / old if old > 0 else 1.0
    branches = tuple(dataclasses.replace(b, flow_m3_s=flow_m3_s) if b.name == name else b
                     for b in study.branches)
    scenarios = tuple(dataclasses.replace(s, branch_flows_m3_s=tuple(
        (n, q * scale if n == name else q) for n, q in s.branch_flows_m3_s))
        for s in study.scenarios)
    return dataclasses.replace(study, branches=branches, scenarios=scenarios)


def vary_branch(study: Study, variable: str, value: float) -> Study | None:
    """``study`` with the branch quantity of ``variable`` set to ``value`` (SI units);
    None when ``variable`` is no branch variable or names the trunk (the caller's plain
    variables handle those)."""
    parsed = branch_variable(variable)
    if parsed is None or parsed[1] == TRUNK:
        return None
    kind, name = parsed
    if kind == BRANCH_HEAD:
        return with_branch_head(study, name, value)
    return with_branch_flow(study, name, value)


def trunk_variable(variable: str) -> str:
    """The plain variable of ``branch-head:main`` or ``branch-flow:main``, else
    ``variable`` unchanged."""
    parsed = branch_variable(variable)
    if parsed is not None and parsed[1] == TRUNK:
        return TRUNK_EQUIVALENT[parsed[0]]
    return variable


def branch_study_value(study: Study, variable: str) -> float | None:
    """The study's own value of a branch variable (None for any other)."""
    parsed = branch_variable(variable)
    if parsed is None or parsed[1] == TRUNK:
        return None
    kind, name = parsed
    branch = study.branch(name)
    return branch.required_head_m if kind == BRANCH_HEAD else branch.flow_m3_s


def value_column(variable: str) -> str | None:
    """The CSV column of a branch variable's values (None for any other)."""
    parsed = branch_variable(variable)
    if parsed is None:
        return None
    return "required_head_m" if parsed[0] == BRANCH_HEAD else "flow_m3_s"


def axis_title(variable: str) -> str | None:
    """The axis title of a branch variable (None for any other)."""
    parsed = branch_variable(variable)
    if parsed is None:
        return None
    kind, name = parsed
    if kind == BRANCH_HEAD:
        return f"required energy level at the end of branch {name} (m)"
    return f"flow of branch {name} (L/s)"
