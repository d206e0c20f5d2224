"""Speed and memory of the counting engine, printed as a table (targets of the counting issue).

Each case runs in its own child process so that its peak memory (``ru_maxrss``) is its own.

    /work/venv/bin/python benchmarks/counting.py            # every case
    /work/venv/bin/python benchmarks/counting.py grid       # cases whose name contains "grid"

The DIMACS graph-colouring instances are read from ``../shared/benchmarks/dimacs`` (or
``$TIMETABLER_DIMACS``) and never copied into the repository; the chromatic numbers they
are checked against are those listed in its ``index.tsv`` (published values, as recalled
there).
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
import time
from pathlib import Path

import networkx as nx

DIMACS = Path(os.environ.get("TIMETABLER_DIMACS", Path(__file__).resolve().parents[2] / "shared" / "benchmarks" / "dimacs"))


def truncated_icosahedron() -> nx.Graph:
    """The truncated icosahedron built from its definition: cut every vertex of the icosahedron.

    Each directed edge u→v of the icosahedron gives the new vertex near u on that edge; the
    two ends of an old edge stay joined, and around each old vertex u the five new vertices
    form a pentagon in the cyclic order of u's neighbours (consecutive neighbours of u are
    adjacent in the icosahedron). 60 vertices, 30 + 60 = 90 edges, all degrees 3.
    """
    ico = nx.icosahedral_graph()
    g = nx.Graph()
    for u, v in ico.edges():
        g.add_edge((u, v), (v, u))
    for u in ico:
        for v in ico[u]:
            for w in ico[u]:
                if v < w and ico.has_edge(v, w):
                    g.add_edge((u, v), (u, w))
    assert g.number_of_nodes() == 60 and g.number_of_edges() == 90
    assert all(d == 3 for _, d in g.degree())
    return g


def read_dimacs(name: str) -> nx.Graph:
    g = nx.Graph()
    with open(DIMACS / f"{name}.col") as handle:
        for line in handle:
            parts = line.split()
            if parts and parts[0] == "p":
                g.add_nodes_from(range(1, int(parts[2]) + 1))
            elif parts and parts[0] == "e":
                g.add_edge(int(parts[1]), int(parts[2]))
    return g


def published_chromatic_number(name: str) -> int | None:
    index = DIMACS / "index.tsv"
    if not index.exists():
        return None
    for line in index.read_text().splitlines()[1:]:
        parts = line.split("\t")
        if parts[0] == name:
            return int(parts[3])
    return None


CASES = {
    "G(10,0.3,seed 1) vs networkx": ("gnp_vs_networkx", "≥ 1000× faster than networkx"),
    "10x10 grid": ("grid", "≤ 5 s"),
    "random 3-regular, n=60 (seed 1)": ("cubic", "≤ 10 s"),
    "truncated icosahedron": ("truncated_icosahedron", "≤ 10 s"),
    "G(24,0.5,seed 1)": ("gnp24", "≤ 5 s"),
    "DIMACS jean": ("dimacs:jean", "χ as published"),
    "DIMACS huck": ("dimacs:huck", "χ as published"),
    "DIMACS anna": ("dimacs:anna", "χ as published"),
    "DIMACS david": ("dimacs:david", "χ as published"),
    "DIMACS myciel3": ("dimacs:myciel3", "χ as published"),
    "DIMACS myciel4": ("dimacs:myciel4", "χ as published"),
    "DIMACS miles250": ("dimacs:miles250", "χ as published"),
    "DIMACS school1, count at K=14": ("inexact:school1:14", "honest: bounds + estimate"),
}


def run_case(kind: str) -> dict:
    """Run one case in this process and return its figures."""
    from timetabler.counting import BudgetExceeded, chromatic_polynomial

    out: dict = {}
    if kind == "gnp_vs_networkx":
        g = nx.gnp_random_graph(10, 0.3, seed=1)
        reps = 200
        t = time.perf_counter()
        for _ in range(reps):
            mine = chromatic_polynomial(g)
        ours = (time.perf_counter() - t) / reps
        t = time.perf_counter()
        ref = nx.chromatic_polynomial(g)
        theirs = time.perf_counter() - t
        import sympy

        symbol = next(iter(ref.free_symbols))
        agree = [int(c) for c in reversed(sympy.Poly(ref, symbol).all_coeffs())] == mine.power
        out.update(n=10, m=g.number_of_edges(), seconds=ours, method=mine.method,
                   note=f"networkx {theirs:.2f} s; ours {ours * 1e3:.2f} ms; speed-up {theirs / ours:,.0f}×; "
                        f"{'same polynomial' if agree else 'DIFFERENT POLYNOMIAL'}")
        return out
    if kind.startswith("inexact:"):
        from timetabler.counting import count_timetables

        _, name, k = kind.split(":")
        g = read_dimacs(name)
        t = time.perf_counter()
        report = count_timetables(g, [int(k)], budget_seconds=5.0, what_if=False)
        c = report.counts[0]
        out.update(n=g.number_of_nodes(), m=g.number_of_edges(), seconds=time.perf_counter() - t,
                   method="exact" if c.exact else "bounds + Knuth estimate",
                   note=(f"exact: {c.timetables}" if c.exact else
                         f"not exact; lower bound {c.lower if len(str(c.lower)) < 8 else str(len(str(c.lower))) + ' digits'}, "
                         f"{len(str(c.upper))}-digit upper bound, estimate 10^{c.estimate_log10:.2f} "
                         f"± {100 * (c.estimate_relative_error or 0):.0f}%"))
        return out
    if kind == "grid":
        g = nx.grid_2d_graph(10, 10)
    elif kind == "cubic":
        g = nx.random_regular_graph(3, 60, seed=1)
    elif kind == "truncated_icosahedron":
        g = truncated_icosahedron()
    elif kind == "gnp24":
        g = nx.gnp_random_graph(24, 0.5, seed=1)
    elif kind.startswith("dimacs:"):
        g = read_dimacs(kind.split(":", 1)[1])
    else:
        raise SystemExit(f"unknown case {kind}")
    out.update(n=g.number_of_nodes(), m=g.number_of_edges())
    t = time.perf_counter()
    try:
        p = chromatic_polynomial(g, budget_seconds=120)
    except BudgetExceeded as exc:
        out.update(seconds=time.perf_counter() - t, method="not exact", note=str(exc))
        return out
    out.update(seconds=time.perf_counter() - t, method=p.method, chromatic_number=p.chromatic_number)
    if kind.startswith("dimacs:"):
        published = published_chromatic_number(kind.split(":", 1)[1])
        out["note"] = f"χ = {p.chromatic_number} (published {published})"
    elif kind == "grid":
        out["note"] = f"P(3) = {p(3)}; χ = {p.chromatic_number}"
    else:
        out["note"] = f"χ = {p.chromatic_number}; P(χ) has {len(str(p(p.chromatic_number)))} digits"
    return out


def main(argv: list[str]) -> None:
    if argv and argv[0] == "--case":
        import resource

        figures = run_case(argv[1])
        figures["peak_mb"] = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
        print(json.dumps(figures))
        return
    wanted = [name for name in CASES if not argv or any(a.lower() in name.lower() for a in argv)]
    print(f"{'graph':34} {'n':>4} {'m':>5} {'seconds':>9} {'peak MB':>8}  {'target':28} notes")
    for name in wanted:
        kind, target = CASES[name]
        if kind.startswith("dimacs:") and not DIMACS.exists():
            continue
        proc = subprocess.run([sys.executable, __file__, "--case", kind], capture_output=True, text=True)
        if proc.returncode != 0:
            print(f"{name:34} failed: {proc.stderr.strip().splitlines()[-1] if proc.stderr.strip() else proc.returncode}")
            continue
        f = json.loads(proc.stdout.strip().splitlines()[-1])
        secs = f["seconds"]
        shown = f"{secs * 1e3:.2f} ms" if secs < 0.1 else f"{secs:.2f}"
        print(f"{name:34} {f['n']:>4} {f['m']:>5} {shown:>9} {f['peak_mb']:>8.0f}  {target:28} "
              f"{f.get('note', '')} [{f['method']}]")


if __name__ == "__main__":
    main(sys.argv[1:])
