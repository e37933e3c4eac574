"""The record of the search: every stage carries its kind, its text follows the kind.

Facts of this code base (common practice, no source): stages are told apart by their
kind, the text is only shown; the JSON record of a stage is unchanged by the kind (it is
not written); statuses are members of the one ``Status`` enumeration and equal to their
JSON strings.
"""

from __future__ import annotations

import json

from test_milp_priced import undulating_rules_study

from optimiser.milp import StageKind, Status, optimise_design


def test_every_stage_has_a_kind_and_its_label(tmp_path):
    outcome = optimise_design(undulating_rules_study(tmp_path), time_limit_s=600.0,
                              mip_gap=1e-6)
    assert outcome.status is Status.OPTIMAL and outcome.status == "optimal"
    kinds = [stage.kind for stage in outcome.stages]
    assert kinds[0] is StageKind.DOMINANCE
    assert StageKind.LP_RELAXATION in kinds and StageKind.REACH_MODEL in kinds
    for stage in outcome.stages:
        assert isinstance(stage.kind, StageKind)
        assert stage.name.startswith(stage.kind.label)
        assert isinstance(stage.status, Status)
        record = stage.as_dict()
        assert "kind" not in record
        assert list(record) == ["name", "status", "objective", "bound", "seconds",
                                "variables", "constraints", "binaries", "message",
                                "build_seconds"]
        assert json.loads(json.dumps(record))["status"] == str(stage.status)


def test_labels_are_distinct():
    labels = [kind.label for kind in StageKind]
    assert len(set(labels)) == len(labels)
