"""Batches of rows for a solver that steps every row of a batch on one grid of steps.

:func:`catalog.physics.hot_network.hot_network_rise` cuts a segment into equal
steps where the winding moves far, a number per row and segment.  Rows solved
together share a grid with, per segment, the most steps of any of them; the
others step by zero durations there, exact identities, so a row's result never
depends on its batch, only the work does (Python loops over the steps, numpy
over the rows).  This module chooses the batches.
"""
from __future__ import annotations

import numpy as np

__all__ = ["step_groups", "GROUP", "GROUP_SINGLE", "GROUP_COST"]

GROUP = 512                 #: rows of several steps solved on one grid at most [-]
GROUP_SINGLE = 4096         #: rows of one step per segment solved together at most [-]
GROUP_COST = 2000           #: what one more batch costs beside its rows' steps [row-steps] (a few ms)


def step_groups(steps) -> list:
    """The rows (columns of ``steps``: steps per segment, (S, n)) in groups, each solved on one grid.

    Rows of one step per segment go together (no padding: larger groups).  The others are gathered
    by their pattern of steps (per segment, rounded up to a power of two), and patterns are merged,
    fewest steps first, while the padded work of the merged group stays within twice its rows' own
    steps plus :data:`GROUP_COST`; at most :data:`GROUP` rows a group.  Returns a list of arrays of
    row positions.
    """
    fine = np.any(steps > 1, axis=0)
    single = np.flatnonzero(~fine)
    out = [g for g in np.array_split(single, max(1, -(-single.size // GROUP_SINGLE))) if g.size]
    idx = np.flatnonzero(fine)
    if not idx.size:
        return out
    level = np.ceil(np.log2(steps[:, idx])).astype(int)             # (S, k): 1, 2, 3-4, 5-8, ... steps
    patterns, which = np.unique(level.T, axis=0, return_inverse=True)
    which = which.reshape(-1)
    order = np.argsort(which, kind="stable")
    cuts = np.searchsorted(which[order], np.arange(len(patterns) + 1))
    members = [idx[order[cuts[p]:cuts[p + 1]]] for p in range(len(patterns))]
    own = [int(steps[:, m].sum()) for m in members]
    top = [steps[:, m].max(axis=1) for m in members]
    fine_groups, current, cur_top, cur_own = [], [], None, 0
    for p in np.argsort([t.sum() for t in top], kind="stable"):    # a loop over patterns, not rows
        if current:
            merged = np.maximum(cur_top, top[p])
            rows = sum(len(m) for m in current) + len(members[p])
            if rows <= GROUP and rows * merged.sum() <= 2 * (cur_own + own[p]) + GROUP_COST:
                current.append(members[p])
                cur_top, cur_own = merged, cur_own + own[p]
                continue
            fine_groups.append(np.concatenate(current))
        current, cur_top, cur_own = [members[p]], top[p], own[p]
    fine_groups.append(np.concatenate(current))
    return out + [g for big in fine_groups for g in np.array_split(big, max(1, -(-big.size // GROUP)))]
