"""The rule-abiding dynamic programme priced in blocks of nodes against node by node.

:func:`optimiser.milp.sequence_dp.cheapest_sequence` prices the new pieces of a block of
nodes at once; with blocks of one node it is the plain node-by-node programme. Both
must choose the same options on seeded random rates (ties included: rates drawn from a
few integers), long routes of short sections where blocks are long. Consistency of one
rule computed two ways, common practice, no source; the programme itself is checked
against enumeration in ``test_milp_priced.py``.
"""

from __future__ import annotations

import numpy as np
import pytest

from optimiser.milp import sequence_dp


@pytest.mark.parametrize("seed", range(4))
def test_blocks_choose_what_single_nodes_choose(monkeypatch, seed):
    rng = np.random.default_rng(seed)
    for trial in range(25):
        n, m = int(rng.integers(20, 400)), int(rng.integers(1, 7))
        rate = rng.integers(1, 4, (n, m)).astype(float) if trial % 2 else \
            rng.uniform(1.0, 10.0, (n, m))
        rate[rng.random((n, m)) < 0.1] = np.inf
        lengths = rng.choice([5.0, 10.0, 12.5, 40.0], n)
        rules = {"max_changes": [None, 0, 2, 10][int(rng.integers(4))],
                 "min_length_m": float(rng.choice([0.0, 200.0, 1500.0])),
                 "change_cost": float(rng.choice([0.0, 3.0])),
                 "diameter_mm": rng.choice([100.0, 150.0], m) if trial % 3 == 0 else None}
        blocks = sequence_dp.cheapest_sequence(rate, lengths, **rules)
        with monkeypatch.context() as patch:
            patch.setattr(sequence_dp, "BLOCK_NODES", 1)
            single = sequence_dp.cheapest_sequence(rate, lengths, **rules)
        assert (blocks is None) == (single is None)
        if blocks is not None:
            assert np.array_equal(blocks, single)
