"""The frontier programme in the falling-factorial basis, on numpy arrays: for dense pieces.

This is the colour-class expansion of :mod:`.frontier` done for *unlabelled* classes, so
that one pass yields every falling-factorial coefficient ``a_j`` (the number of
partitions of the vertices into ``j`` independent sets; Read 1968, §5):

state
    a set partition of the frontier into open classes (a restricted-growth string of
    labels, one row of a ``uint8`` matrix), and a vector ``W[c]`` counting the partial
    partitions with that frontier pattern and ``c`` *closed* classes (classes with no
    member left on the frontier).
step (introduce ``v``)
    ``v`` joins an open class holding none of its neighbours (``W`` unchanged); or opens
    a class: a brand new one (``W`` unchanged) or a closed one, which is never adjacent
    to ``v`` because its members have no neighbours left to come
    (``W'[c] += (c + 1) · W[c + 1]``).
step (forget)
    frontier vertices whose neighbours have all been placed leave the rows; a class left
    empty becomes closed (``W`` shifts up by one place per closed class).

At the end the frontier is empty and ``W[j] = a_j``. All rows of a step are handled at
once: labels are packed 4 bits each into one ``uint64`` key (frontiers of at most 16
vertices), equal keys are merged by a sort and ``np.add.reduceat``. Every intermediate
number counts real partial partitions, so it is at most the Bell number ``B(n)``;
``int64`` is exact up to ``n = 25`` and Python ints (numpy object arrays) are used beyond.
"""

from __future__ import annotations

from typing import Sequence

import networkx as nx
import numpy as np

from .budget import Budget, BudgetExceeded, UNLIMITED
from .frontier import _plan, frontier_order
from .polynomial import falling_to_power

MAX_WIDTH = 16  # labels are packed 4 bits each into a uint64 key


def _bell_fits_int64(n: int) -> bool:
    row = [1]
    for _ in range(n):
        new = [row[-1]]
        for x in row:
            new.append(new[-1] + x)
        row = new
    return row[0] < 2**62


def _canonical(rows: np.ndarray) -> np.ndarray:
    """Relabel every row to a restricted-growth string (labels by first occurrence)."""
    count, width = rows.shape
    if width == 0 or count == 0:
        return rows
    mapping = np.full((count, MAX_WIDTH + 2), 255, dtype=np.uint8)
    seen = np.zeros(count, dtype=np.uint8)
    index = np.arange(count)
    out = np.empty_like(rows)
    for pos in range(width):
        labels = rows[:, pos]
        current = mapping[index, labels]
        new = current == 255
        mapping[index[new], labels[new]] = seen[new]
        current = np.where(new, seen, current)
        seen += new
        out[:, pos] = current
    return out


def _compress(rows: np.ndarray, present: np.ndarray) -> np.ndarray:
    """Close the gaps in the labels (keeping their order), then fix rows that are no longer RGS.

    ``present`` holds, per row, a bit for each label that occurs. Dropping positions from a
    restricted-growth string mostly leaves one again up to gaps in the labels; only rows
    where a dropped position held a label's first occurrence need the full relabelling.
    """
    out = np.empty_like(rows)
    for pos in range(rows.shape[1]):
        below = present & (np.left_shift(np.uint32(1), rows[:, pos].astype(np.uint32)) - np.uint32(1))
        out[:, pos] = np.bitwise_count(below)
    limit = np.maximum.accumulate(out, axis=1)
    bad = np.zeros(len(out), dtype=bool)
    bad |= out[:, 0] != 0
    if out.shape[1] > 1:
        bad |= (out[:, 1:] > limit[:, :-1] + 1).any(axis=1)
    if bad.any():
        out[bad] = _canonical(out[bad])
    return out


def _keys(rows: np.ndarray) -> np.ndarray:
    keys = np.zeros(rows.shape[0], dtype=np.uint64)
    for pos in range(rows.shape[1]):
        keys |= rows[:, pos].astype(np.uint64) << np.uint64(4 * pos)
    return keys


def _merge(rows: np.ndarray, weights: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Merge equal rows, adding their weight columns."""
    keys = _keys(rows)
    order_idx = np.argsort(keys, kind="stable")
    keys = keys[order_idx]
    starts = np.flatnonzero(np.concatenate(([True], keys[1:] != keys[:-1])))
    return rows[order_idx[starts]], np.add.reduceat(weights[:, order_idx], starts, axis=1)


def falling_frontier_counts(graph: nx.Graph, order: Sequence | None = None, budget: Budget = UNLIMITED) -> list[int]:
    """``a_0 … a_n`` for ``graph`` (partitions into ``j`` independent sets), vectorised.

    Raises :class:`BudgetExceeded` when the frontier is wider than :data:`MAX_WIDTH`.

    Examples
    --------
    >>> import networkx as nx
    >>> falling_frontier_counts(nx.cycle_graph(4))   # C_4: {02}{13}; 2 ways into 3; 1 into 4
    [0, 0, 1, 2, 1]
    """
    n = graph.number_of_nodes()
    if n == 0:
        return [1]
    if order is None:
        order = frontier_order(graph).order
    steps = _plan(graph, order)
    widths = [len(keep) for _, _, keep in steps]
    if max(widths) + 1 > MAX_WIDTH:
        raise BudgetExceeded(f"frontier of {max(widths) + 1} is wider than the vectorised programme takes")
    dtype = np.int64 if _bell_fits_int64(n) else object
    rows = np.zeros((1, 0), dtype=np.uint8)
    # weights[c, i]: partial partitions with the frontier pattern of row i and c closed
    # classes (one contiguous line per c, so merging rows runs along memory)
    # only c ≤ (vertices forgotten so far) can be non-zero: the array grows with them
    weights = np.zeros((1, 1), dtype=dtype)
    weights[0, 0] = 1
    reopen = np.arange(n + 1, dtype=np.int64).astype(dtype)[:, None]  # c ways to reopen one of c closed classes
    for t, (v, nbpos, keep) in enumerate(steps):
        budget.check_time("the falling-factorial frontier count")
        count, width = rows.shape
        blocks = rows.max(axis=1).astype(np.int16) + 1 if width else np.zeros(count, dtype=np.int16)
        nb = rows[:, nbpos] if nbpos else np.zeros((count, 0), dtype=np.uint8)
        parts_rows, parts_w = [], []
        for label in range(int(blocks.max(initial=0))):
            ok = blocks > label
            if nb.shape[1]:
                ok &= ~(nb == label).any(axis=1)
            if not ok.any():
                continue
            chosen = rows[ok]
            parts_rows.append(np.hstack([chosen, np.full((chosen.shape[0], 1), label, dtype=np.uint8)]))
            parts_w.append(weights[:, ok])
        # a new open class: brand new, or one of the closed classes reopened
        fresh = weights.copy()
        fresh[:-1] += reopen[1: len(weights)] * weights[1:]
        parts_rows.append(np.hstack([rows, blocks.astype(np.uint8)[:, None]]))
        parts_w.append(fresh)
        grown = np.vstack(parts_rows)
        grown_w = np.concatenate(parts_w, axis=1)
        before = grown.max(axis=1).astype(np.int16) + 1
        projected = grown[:, keep] if len(keep) < grown.shape[1] else grown
        if projected.shape[1]:
            present = np.zeros(len(projected), dtype=np.uint32)
            for pos in range(projected.shape[1]):
                present |= np.left_shift(np.uint32(1), projected[:, pos].astype(np.uint32))
            after = np.bitwise_count(present).astype(np.int16)
        else:
            after = np.zeros(len(projected), np.int16)
        closed = before - after
        cap = t + 2 - len(keep)  # vertices forgotten after this step, plus one
        if grown_w.shape[0] < cap:
            grown_w = np.vstack([grown_w, np.zeros((cap - grown_w.shape[0], grown_w.shape[1]), dtype=dtype)])
        for shift in np.unique(closed):
            if shift <= 0:
                continue
            sel = np.flatnonzero(closed == shift)
            block = grown_w[:, sel]
            moved = np.zeros_like(block)
            moved[shift:] = block[:-shift]
            grown_w[:, sel] = moved
        if len(keep) < grown.shape[1] and projected.shape[1]:
            projected = _compress(projected, present)
        rows, weights = _merge(projected, grown_w)
        budget.check_memory(weights.nbytes * 6 + rows.nbytes * 6, "the falling-factorial frontier count")
    counts = [int(x) for x in weights[:, 0]]
    return counts + [0] * (n + 1 - len(counts))


def falling_frontier_polynomial(graph: nx.Graph, order: Sequence | None = None, budget: Budget = UNLIMITED) -> list[int]:
    """Power-basis coefficients from :func:`falling_frontier_counts` (Stirling numbers)."""
    return falling_to_power(falling_frontier_counts(graph, order, budget))
