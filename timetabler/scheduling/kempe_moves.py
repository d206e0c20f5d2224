"""The compiled inner loop of the local search: Kempe-chain and slot-swap moves under annealing.

:mod:`.kempe_search` explains the moves, the incremental evaluation and the acceptance;
this module holds only the loop numba compiles (``cache=True``: compiled once per machine
and loaded from disk afterwards), kept apart so that changing the search's settings does
not make numba compile it again. The loop runs as plain Python when numba is missing.

Importing numba and compiling take a few seconds (longer on a loaded machine), so the solve
imports this module and calls :func:`compile_now` in a background thread as it starts, while
CP-SAT looks for the first timetable; nothing else imports numba.
"""

from __future__ import annotations

import math
from collections import namedtuple

import numpy as np

try:  # compiled speed when numba is installed (a dependency); the same code runs as Python without it
    from numba import njit
except ImportError:  # pragma: no cover - numba is a declared dependency
    def njit(*args, **kwargs):
        if args and callable(args[0]):
            return args[0]
        return lambda f: f


@njit(cache=True)
def seed_moves(seed):
    np.random.seed(seed)


#: The search's own arrays, changed in place by the loop (see :class:`.kempe_search` for each).
SearchArrays = namedtuple("SearchArrays", "x wn load occ alone_in gload best_x mark members stats")
#: The problem's arrays, read only: costs, allowed slots, neighbours, resources, rules, daily cap, days
#: (:class:`.penalty_state.PenaltyState` holds them under these names).
RuleArrays = namedtuple("RuleArrays", "cost event_cost allowed adj_ptr adj_idx adj_w res_use res_cap before_ptr "
                                      "before_idx before_sign same_ptr same_idx apart_ptr apart_idx alone group_ptr "
                                      "group_idx daily_limit day")


@njit(cache=True)
def anneal_moves(search, rules, moves, t_start, t_end, swap_share, record):
    """``moves`` tries at temperatures falling from ``t_start`` to ``t_end``; the ``search`` arrays
    (:data:`SearchArrays`) change in place, the ``rules`` (:data:`RuleArrays`) are read.

    ``stats``: [current penalty, best penalty, stamp, tried, accepted, recorded]. With a
    non-empty ``record`` nothing is applied: the changes of feasible moves are recorded instead.
    """
    x, wn, load, occ, alone_in, gload, best_x, mark, members, stats = search
    (cost, event_cost, allowed, adj_ptr, adj_idx, adj_w, res_use, res_cap, before_ptr, before_idx, before_sign,
     same_ptr, same_idx, apart_ptr, apart_idx, alone, group_ptr, group_idx, daily_limit, day) = rules
    n = x.shape[0]
    k = cost.shape[0]
    n_res = res_use.shape[1]
    current = stats[0]
    best = stats[1]
    stamp = stats[2]
    accepted = 0
    recorded = stats[5]
    sampling = record.shape[0] > 0
    ratio = 1.0
    if moves > 1 and t_start > 0:
        ratio = (t_end / t_start) ** (1.0 / moves)
    temp = t_start
    for it in range(moves):
        temp *= ratio
        if k < 2 or n == 0:
            break
        stamp += 1
        m = 0
        if np.random.random() < swap_share:
            a = np.random.randint(k)
            b = np.random.randint(k - 1)
            if b >= a:
                b += 1
            for e in range(n):
                if x[e] == a or x[e] == b:
                    members[m] = e
                    mark[e] = stamp
                    m += 1
            if m == 0:
                continue
        else:
            e0 = np.random.randint(n)
            a = x[e0]
            b = np.random.randint(k - 1)
            if b >= a:
                b += 1
            if not allowed[e0, b]:
                continue
            members[0] = e0
            mark[e0] = stamp
            m = 1
            head = 0
            while head < m:
                e = members[head]
                head += 1
                for j in range(adj_ptr[e], adj_ptr[e + 1]):
                    f = adj_idx[j]
                    if mark[f] != stamp and (x[f] == a or x[f] == b):
                        mark[f] = stamp
                        members[m] = f
                        m += 1
                for j in range(same_ptr[e], same_ptr[e + 1]):
                    f = same_idx[j]
                    if mark[f] != stamp and (x[f] == a or x[f] == b):
                        mark[f] = stamp
                        members[m] = f
                        m += 1
        # hard rules on the chain
        ok = True
        in_a = 0
        alone_a = 0
        alone_b = 0
        for i in range(m):
            e = members[i]
            ns = b if x[e] == a else a
            if not allowed[e, ns]:
                ok = False
                break
            if x[e] == a:
                in_a += 1
                if alone[e]:
                    alone_a += 1
            elif alone[e]:
                alone_b += 1
        if not ok:
            continue
        in_b = m - in_a
        occ_a = occ[a] - in_a + in_b
        occ_b = occ[b] - in_b + in_a
        if (alone_in[a] - alone_a + alone_b > 0 and occ_a > 1) or (alone_in[b] - alone_b + alone_a > 0 and occ_b > 1):
            continue
        for r in range(n_res):
            la = load[a, r]
            lb = load[b, r]
            for i in range(m):
                e = members[i]
                u = res_use[e, r]
                if x[e] == a:
                    la -= u
                    lb += u
                else:
                    la += u
                    lb -= u
            if la > res_cap[a, r] or lb > res_cap[b, r]:
                ok = False
                break
        if not ok:
            continue
        for i in range(m):
            e = members[i]
            se = b if x[e] == a else a
            for j in range(before_ptr[e], before_ptr[e + 1]):
                f = before_idx[j]
                sf = x[f]
                if mark[f] == stamp:
                    sf = b if x[f] == a else a
                if (before_sign[j] > 0 and se >= sf) or (before_sign[j] < 0 and sf >= se):
                    ok = False
                    break
            if not ok:
                break
            for j in range(apart_ptr[e], apart_ptr[e + 1]):
                f = apart_idx[j]
                sf = x[f]
                if mark[f] == stamp:
                    sf = b if x[f] == a else a
                if day[se] == day[sf]:
                    ok = False
                    break
            if not ok:
                break
        if not ok:
            continue
        day_moves = daily_limit >= 0 and day[a] != day[b]
        if day_moves:
            for i in range(m):
                e = members[i]
                do = day[x[e]]
                dn = day[b] if x[e] == a else day[a]
                for j in range(group_ptr[e], group_ptr[e + 1]):
                    g = group_idx[j]
                    gload[g, do] -= 1
                    gload[g, dn] += 1
            for i in range(m):
                e = members[i]
                dn = day[b] if x[e] == a else day[a]
                for j in range(group_ptr[e], group_ptr[e + 1]):
                    if gload[group_idx[j], dn] > daily_limit:
                        ok = False
                        break
                if not ok:
                    break
        # the change in penalty
        delta = 0
        if ok:
            cab = cost[a, b]
            for i in range(m):
                e = members[i]
                o = x[e]
                ns = b if o == a else a
                delta += event_cost[e, ns] - event_cost[e, o] + cab * wn[e, ns]
                for t in range(k):
                    w = wn[e, t]
                    if w != 0:
                        delta += w * (cost[ns, t] - cost[o, t])
        take = False
        if ok and sampling:
            if recorded < record.shape[0]:
                record[recorded] = delta
                recorded += 1
        elif ok:
            take = delta <= 0 or (temp > 0 and np.random.random() < math.exp(-delta / temp))
        if day_moves and not take:  # undo the trial day counts
            for i in range(m):
                e = members[i]
                do = day[x[e]]
                dn = day[b] if x[e] == a else day[a]
                for j in range(group_ptr[e], group_ptr[e + 1]):
                    g = group_idx[j]
                    gload[g, do] += 1
                    gload[g, dn] -= 1
        if not take:
            continue
        for i in range(m):
            e = members[i]
            o = x[e]
            ns = b if o == a else a
            for j in range(adj_ptr[e], adj_ptr[e + 1]):
                f = adj_idx[j]
                wn[f, o] -= adj_w[j]
                wn[f, ns] += adj_w[j]
            for r in range(n_res):
                load[o, r] -= res_use[e, r]
                load[ns, r] += res_use[e, r]
        for i in range(m):
            e = members[i]
            x[e] = b if x[e] == a else a
        occ[a] = occ_a
        occ[b] = occ_b
        alone_in[a] += alone_b - alone_a
        alone_in[b] += alone_a - alone_b
        current += delta
        accepted += 1
        if current < best:
            best = current
            best_x[:] = x
    stats[0] = current
    stats[1] = best
    stats[2] = stamp
    stats[3] += moves
    stats[4] += accepted
    stats[5] = recorded


def compile_now() -> None:
    """Compile (or load from numba's cache) the loop by calling it once on a tiny state."""
    n, k = 2, 2
    i64 = np.int64
    z = np.zeros
    search = SearchArrays(z(n, i64), z((n, k), i64), z((k, 0), i64), z(k, i64), z(k, i64), z((1, 1), i64), z(n, i64),
                          z(n, i64), z(n, i64), z(6, i64))
    rules = RuleArrays(z((k, k), i64), z((n, k), i64), np.ones((n, k), np.bool_), z(n + 1, i64), z(0, i64), z(0, i64),
                       z((n, 0), i64), z((k, 0), i64), z(n + 1, i64), z(0, i64), z(0, i64), z(n + 1, i64), z(0, i64),
                       z(n + 1, i64), z(0, i64), z(n, np.bool_), z(n + 1, i64), z(0, i64), -1, z(k, i64))
    anneal_moves(search, rules, 1, 1.0, 1.0, 0.0, z(0, i64))
    seed_moves(0)

