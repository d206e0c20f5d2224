"""The compiled inner loop of :mod:`.sequential_sampling`: populations of partial timetables.

One call runs ``groups`` independent populations of ``size`` particles each through the
whole placing order at ``k`` slots (placing, adaptive resampling, heat-bath moves) and
returns each population's ``ln Ẑ``. :mod:`.sequential_sampling` holds the method and the
reasons for it; this module holds only the arithmetic, compiled by numba (numpy's
whole-population steps, used before, spent most of their time building gathered arrays:
measured on car-s-91 at 35 slots, 8 populations of 1,256 particles took 27.1 s through
numpy and 3.2 s here).

Slots are bits of ``words`` unsigned 64-bit words, so any number of slots works. Each
population draws from its own xorshift64* stream (S. Vigna, "An experimental exploration
of Marsaglia's xorshift generators, scrambled", ACM TOMS 42 (2016)), seeded by the caller,
so a run gives the same numbers however many threads share the populations.
"""

from __future__ import annotations

import math

import numpy as np

try:  # numba is a declared dependency; without it the same code runs as (very slow) Python
    from numba import njit, prange
except ImportError:  # pragma: no cover
    prange = range

    def njit(*args, **kwargs):
        if args and callable(args[0]):
            return args[0]
        return lambda f: f

NO_SLOT = -1


@njit(cache=True, inline="always")
def _next(state: np.ndarray, g: int) -> np.uint64:
    x = state[g]
    x ^= x >> np.uint64(12)
    x ^= x << np.uint64(25)
    x ^= x >> np.uint64(27)
    state[g] = x
    return x * np.uint64(2685821657736338717)


@njit(cache=True, inline="always")
def _uniform(state: np.ndarray, g: int) -> float:
    return float(_next(state, g) >> np.uint64(11)) * (1.0 / 9007199254740992.0)


@njit(cache=True, inline="always")
def _popcount(x: np.uint64) -> int:
    x = x - ((x >> np.uint64(1)) & np.uint64(0x5555555555555555))
    x = (x & np.uint64(0x3333333333333333)) + ((x >> np.uint64(2)) & np.uint64(0x3333333333333333))
    x = (x + (x >> np.uint64(4))) & np.uint64(0x0F0F0F0F0F0F0F0F)
    return int((x * np.uint64(0x0101010101010101)) >> np.uint64(56))


@njit(cache=True)
def _free_slots(slot_row, nbrs, start, stop, upto, allowed, v, free) -> int:
    """Slots open to event ``v`` (bits in ``free``) given its neighbours placed before ``upto``; their number."""
    words = free.shape[0]
    for w in range(words):
        free[w] = allowed[v, w]
    for e in range(start, stop):
        u = nbrs[e]
        if u >= upto:
            break  # neighbours are sorted by place in the order
        s = slot_row[u]
        if s >= 0:
            free[s >> 6] &= ~(np.uint64(1) << np.uint64(s & 63))
    count = 0
    for w in range(words):
        count += _popcount(free[w])
    return count


@njit(cache=True)
def _pick(free, count: int, state, g: int) -> int:
    """A slot drawn uniformly from the ``count`` set bits of ``free``."""
    r = int(_uniform(state, g) * count)
    if r >= count:
        r = count - 1
    for w in range(free.shape[0]):
        x = free[w]
        c = _popcount(x)
        if r < c:
            for _ in range(r):
                x &= x - np.uint64(1)
            low = x & (~x + np.uint64(1))
            return 64 * w + _popcount(low - np.uint64(1))
        r -= c
    return NO_SLOT


@njit(cache=True)
def _one_population(indptr, nbrs, allowed, size, moves, state, g, log_table, slot, spare):
    n = indptr.shape[0] - 1
    words = allowed.shape[1]
    free = np.zeros(words, dtype=np.uint64)
    log_w = np.zeros(size)
    w = np.zeros(size)
    ancestor = np.zeros(size, dtype=np.int64)
    pool = np.zeros(n, dtype=np.int64)
    log_z = 0.0
    for i in range(n):
        start = indptr[i]
        for p in range(size):
            if log_w[p] == -np.inf:
                continue
            c = _free_slots(slot[p], nbrs, start, indptr[i + 1], i, allowed, i, free)
            if c == 0:
                log_w[p] = -np.inf
            else:
                slot[p, i] = _pick(free, c, state, g)
                log_w[p] += log_table[c]
        top = -np.inf
        for p in range(size):
            if log_w[p] > top:
                top = log_w[p]
        if top == -np.inf:
            return -np.inf, slot
        total = 0.0
        squares = 0.0
        for p in range(size):
            w[p] = math.exp(log_w[p] - top)
            total += w[p]
            squares += w[p] * w[p]
        last = i == n - 1
        if not last and total * total >= 0.5 * size * squares:
            continue  # effective sample size still above half the population
        log_z += math.log(total / size) + top
        # systematic resampling
        u = _uniform(state, g) / size
        acc = w[0] / total
        q = 0
        for p in range(size):
            target = u + p / size
            while acc < target and q < size - 1:
                q += 1
                acc += w[q] / total
            ancestor[p] = q
        for p in range(size):
            a = ancestor[p]
            for j in range(i + 1):
                spare[p, j] = slot[a, j]
        slot, spare = spare, slot
        for p in range(size):
            log_w[p] = 0.0
        if last:
            break
        # heat-bath moves of placed events, chosen without looking at the particles: the next
        # event's placed neighbours (its weight depends on them), or any placed event
        m = 0
        for e in range(indptr[i + 1], indptr[i + 2]):
            if nbrs[e] <= i:
                pool[m] = nbrs[e]
                m += 1
        if m == 0:
            for j in range(i + 1):
                pool[j] = j
            m = i + 1
        done = 0
        while done < moves:  # passes over the pool, each in a fresh random order (a partial one at the end)
            chosen = min(moves - done, m)
            for t in range(chosen):  # a partial Fisher-Yates shuffle: ``chosen`` distinct events
                r = t + int(_uniform(state, g) * (m - t))
                if r >= m:
                    r = m - 1
                pool[t], pool[r] = pool[r], pool[t]
            for t in range(chosen):
                j = pool[t]
                for p in range(size):
                    c = _free_slots(slot[p], nbrs, indptr[j], indptr[j + 1], i + 1, allowed, j, free)
                    if c > 0:
                        slot[p, j] = _pick(free, c, state, g)
            done += chosen
    return log_z, slot


@njit(cache=True, parallel=True)
def run_populations(indptr, nbrs, allowed, k, groups, size, moves, seeds):
    """``ln Ẑ`` of each of ``groups`` populations, and the first particle of each at the end.

    ``indptr``/``nbrs``: the graph in compressed rows, events numbered by their place in the
    order, each row sorted; ``allowed[v]``: the bits of the slots event ``v`` may take.
    A dead population (every particle met an event with no free slot) gives ``-inf``.
    """
    n = indptr.shape[0] - 1
    log_table = np.zeros(k + 2)
    for c in range(1, k + 2):
        log_table[c] = math.log(c)
    log_z = np.zeros(groups)
    first = np.full((groups, n), NO_SLOT, dtype=np.int16)
    state = seeds.copy()
    for g in prange(groups):
        slot = np.full((size, n), NO_SLOT, dtype=np.int16)
        spare = np.full((size, n), NO_SLOT, dtype=np.int16)
        value, final = _one_population(indptr, nbrs, allowed, size, moves, state, g, log_table, slot, spare)
        log_z[g] = value
        if value > -np.inf:
            for j in range(n):
                first[g, j] = final[0, j]
    return log_z, first
