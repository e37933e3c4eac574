"""One model for the whole tree: every line's columns and rows, joined at the junctions.

A scheme (contract section 7) is a tree with one source. With the flow of every section
known in every scenario (:func:`optimiser.analysis.flows.line_flows_m3_s`), the head lost
in each section is linear in the lengths of the options laid in it, on every line alike,
so the split-pipe linear programme stays exact on a tree (Karmeli, D., Gadish, Y. &
Meyers, S. (1968), Design of optimal water distribution networks, J. Pipeline Div. ASCE
94(PL1)). Each line is built exactly as a single route
(:mod:`optimiser.milp.formulation`: the same columns, pressure rows, outlet rows and rule
rows, from the line's own :class:`~optimiser.milp.data.ProblemData`), in one shared
:class:`~optimiser.milp.matrix.LinearModel`, with two differences:

- the energy of a branch at its chainage 0, before its junction loss, is the energy of
  its parent at the junction node on the upstream side (before a fitting of the parent
  there), a free column per scenario that the parent's energy rows already carry
  (:func:`optimiser.milp.pressure_rows.add_pressure_rows` with ``taps``); the branch's
  junction K takes the velocity head of its first section's smallest pipe, as the
  entrance loss of a single route does (conservative when that section is split);
- the rules are written per line: ``max_changes`` counts the changes of each line,
  ``min_piece_length_m`` and ``sizes_downstream`` hold along each line away from its
  junction, ``change_cost`` is paid at every change of every line.

What is exact and what is conservative on each line is as for a single route (see
:mod:`optimiser.milp.formulation`).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from optimiser.analysis.flows import nearest_node
from optimiser.milp.built_model import Formulation, WarmStart
from optimiser.milp.columns import add_section_columns
from optimiser.milp.data import ProblemData
from optimiser.milp.matrix import Affine, LinearModel
from optimiser.milp.pressure_rows import add_pressure_rows
from optimiser.milp.pumps.class_rows import ReachLevels
from optimiser.milp.rule_rows import add_rule_rows
from optimiser.milp.tree.pump_rows import add_line_class_rows, add_station_columns
from optimiser.milp.wave_rows import add_break_rows, add_wave_rows
from optimiser.model import Study
from optimiser.model.lines import Line


@dataclass
class TreeFormulation(Formulation):
    """The tree's model: ``parts[i]`` is the model of line ``i`` (sharing ``model``).

    Warm starts and section indices are global: line ``i``'s section ``s`` is
    ``offsets[i] + s``."""

    parts: list[Formulation] = field(default_factory=list)
    offsets: list[int] = field(default_factory=list)
    junctions: dict[str, list[Affine]] = field(default_factory=dict)
    """Each branch's energy at its junction (before its junction loss), per scenario."""

    def junction_energy_m(self, name: str) -> np.ndarray:
        """(K,) solved energy at the junction of branch ``name``."""
        assert self.values is not None
        return np.array([sum(v * self.values[c] for c, v in e.terms) + e.constant
                         for e in self.junctions[name]])

    def share_values(self) -> None:
        """Give every line's model the values (and duals) of the last solve."""
        for part in self.parts:
            part.values = self.values
            part.row_duals = self.row_duals
            part.column_duals = self.column_duals

    def warm_columns(self, warm: WarmStart) -> tuple[np.ndarray, np.ndarray]:
        columns: list[np.ndarray] = []
        values: list[np.ndarray] = []
        by_part: list[WarmStart] = [{} for _ in self.parts]
        for (kind, s, j), value in warm.items():
            index = int(np.searchsorted(self.offsets, s, side="right")) - 1
            by_part[index][kind, s - self.offsets[index], j] = value
        for part, own in zip(self.parts, by_part, strict=True):
            c, v = part.warm_columns(own)
            columns.append(c)
            values.append(v)
        return (np.concatenate(columns).astype(np.int32), np.concatenate(values))


def junction_nodes(lines: list[Line], datas: list[ProblemData], index: int
                   ) -> list[tuple[str, int]]:
    """(child name, node of line ``index``) for every branch leaving line ``index``."""
    name = lines[index].name
    chainage = datas[index].node_chainage_m
    found = []
    for child in lines:
        if child.parent == name:
            node = nearest_node(chainage, child.at_chainage_m)
            if abs(chainage[node] - child.at_chainage_m) > 1e-6 \
                    or not 0 < node < len(chainage) - 1:
                raise ValueError(f"branch {child.name!r}: no inner node of {name!r} at "
                                 f"its junction, chainage {child.at_chainage_m:g} m")
            found.append((child.name, node))
    return found


def build_tree(lines: list[Line], datas: list[ProblemData], *,
               allowed: list[np.ndarray | None] | None = None, with_rules: bool = True,
               relaxed: bool = False, pumped: Study | None = None,
               pump_levels: list[ReachLevels] | None = None) -> TreeFormulation:
    """Build the tree's model (lines parents before children, as
    :func:`optimiser.model.lines.study_lines` gives them). ``allowed[i]`` restricts line
    i's options (None: all admissible); ``with_rules`` and ``relaxed`` as
    :func:`optimiser.milp.formulation.build`; ``pumped``: the whole pumped scheme, whose
    station heads and classes under pumping the model then takes
    (:mod:`optimiser.milp.tree.pump_rows`; on merged reaches ``pump_levels`` gives each
    line's reach levels for the relaxed class rows)."""
    model = LinearModel()
    root = TreeFormulation(model, datas[0], datas[0].admissible, with_rules, relaxed)
    starts: dict[str, list[Affine]] = {}
    tops: dict[str, np.ndarray] = {}  # most energy per scenario at each junction (pumped)
    offset = 0
    for index, (line, data) in enumerate(zip(lines, datas, strict=True)):
        mask = None if allowed is None else allowed[index]
        form = Formulation(model, data, data.admissible if mask is None
                           else data.admissible & mask, with_rules, relaxed)
        columns = add_section_columns(form, 0.0)
        if pumped is not None and line.is_trunk:  # before the energy rows, which use them
            add_station_columns(form, pumped)
            root.pump_heads = form.pump_heads
        children = junction_nodes(lines, datas, index)
        tapped = add_pressure_rows(form, columns, None if line.is_trunk else starts[line.name],
                                   tuple(node for _, node in children))
        for child, node in children:
            starts[child] = [tapped[k, node] for k in range(data.n_scenarios)]
            root.junctions[child] = starts[child]
        change_terms = add_rule_rows(form, columns) if with_rules else []
        add_wave_rows(form, columns)
        add_break_rows(form, columns)
        change_cost = data.study.costs.change_cost
        if change_cost and change_terms:
            model.add_cost((c, v * change_cost) for c, v in change_terms)
            root.objective_offset -= change_cost
        form.n_binaries = 0 if relaxed else len(form.y)
        if pumped is not None:
            top = add_line_class_rows(form, None if line.is_trunk else starts[line.name],
                                      tops.get(line.name),
                                      None if pump_levels is None else pump_levels[index])
            tops.update((child, top[:, node]) for child, node in children)
        root.n_binaries += form.n_binaries
        root.pressure_rows.extend(form.pressure_rows)
        root.parts.append(form)
        root.offsets.append(offset)
        offset += data.n_sections
    return root
