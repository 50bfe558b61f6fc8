# SPDX-License-Identifier: GPL-3.0-or-later
"""Checks of the checkers: the references against hand-derived optima.

Before any number from weft is compared with a reference, the reference
itself is run on instances small enough to solve by hand (the derivations
are in the comments), and the plan checker is shown to accept a correct
hand-made plan and to reject each of several corrupted copies of it.
run() returns a list of (name, got, want, ok) rows.
"""
import copy
import os
import tempfile

import networkx as nx

import refmodel
import plancheck
import solvers

G = 1e9


def _triangle(demands):
    # Nodes A, B, C; links ab, bc, ac; 10 Gbit/s each direction, metric 1.
    arcs = []
    for lid, x, y in (("ab", "A", "B"), ("bc", "B", "C"), ("ac", "A", "C")):
        arcs.append((x, y, 10 * G, 1.0, lid))
        arcs.append((y, x, 10 * G, 1.0, lid))
    return refmodel.Problem(["A", "B", "C"], arcs, demands)


def _square(demands):
    # A-B-D costs 1 + 1, A-C-D costs 2 + 2; 10 Gbit/s per arc.
    arcs = []
    for lid, x, y, m in (("ab", "A", "B", 1), ("bd", "B", "D", 1),
                         ("ac", "A", "C", 2), ("cd", "C", "D", 2)):
        arcs.append((x, y, 10 * G, float(m), lid))
        arcs.append((y, x, 10 * G, float(m), lid))
    return refmodel.Problem(["A", "B", "C", "D"], arcs, demands)


def _triangle_plan():
    """A correct plan for A->C 15 Gbit/s on the triangle under cost, h = 1:
    10 on the direct link, 5 via B (the min-cost optimum derived below)."""
    topo = {"nodes": [{"id": n} for n in "ABC"],
            "links": [{"id": lid, "a": a, "b": b, "capacity_bps": 10 * G,
                       "te_metric": 1.0, "state": "up"}
                      for lid, a, b in (("ab", "A", "B"), ("bc", "B", "C"), ("ac", "A", "C"))]}
    demands = [{"src": "A", "dst": "C", "rate_bps": 15 * G, "priority": 0}]
    policy = {"objective": "cost", "headroom": 1.0}
    plan = {"revision": 3, "model_revision": 2, "status": "optimal", "objective": 20 * G,
            "max_utilization": 1.0, "total_cost": 20 * G, "demand_bps": 15 * G,
            "carried_bps": 15 * G, "unserved_bps": 0.0, "solve_ms": 1.0,
            "saturated_links": [], "stages": []}
    routes = {"revision": 3, "routes": [
        {"src": "A", "dst": "C", "priority": 0, "rate_bps": 15 * G, "carried_bps": 15 * G,
         "unserved_bps": 0.0, "paths": [
             {"rate_bps": 10 * G, "nodes": ["A", "C"], "links": ["ac"]},
             {"rate_bps": 5 * G, "nodes": ["A", "B", "C"], "links": ["ab", "bc"]}]}]}

    def dirn(load, cap=10 * G):
        return {"load_bps": load, "utilization": load / cap, "headroom_bps": cap - load,
                "shadow_price": 0.0, "saturated": False}

    loads = {"revision": 3, "links": [
        {"id": "ab", "a": "A", "b": "B", "state": "up", "capacity_bps": 10 * G, "te_metric": 1.0,
         "a_to_b": dirn(5 * G), "b_to_a": dirn(0.0)},
        {"id": "bc", "a": "B", "b": "C", "state": "up", "capacity_bps": 10 * G, "te_metric": 1.0,
         "a_to_b": dirn(5 * G), "b_to_a": dirn(0.0)},
        {"id": "ac", "a": "A", "b": "C", "state": "up", "capacity_bps": 10 * G, "te_metric": 1.0,
         "a_to_b": dirn(10 * G), "b_to_a": dirn(0.0)}]}
    return topo, demands, policy, plan, routes, loads


def _rows_refmodel():
    rows = []

    def row(name, got, want, rel=1e-9):
        ok = abs(got - want) <= rel * max(abs(want), 1e-300)
        rows.append((name, got, want, ok))

    # Triangle, A->C 15: x on the direct link, 15 - x via B; the larger of
    # x / 10 and (15 - x) / 10 is least at x = 7.5, so U* = 0.75.
    u, _ = refmodel.min_max_util(_triangle([("A", "C", 15 * G, 0)]))
    row("HiGHS min max util, triangle (hand: 0.75)", u, 0.75)
    # Min cost: the 1-hop link takes its full 10, the other 5 go over 2
    # hops: 10 x 1 + 5 x 2 = 20 Gbit/s x metric.
    c, _ = refmodel.min_cost(_triangle([("A", "C", 15 * G, 0)]))
    row("HiGHS min cost, triangle (hand: 20e9)", c, 20 * G)
    # Max carried of A->C 25: the cut around A has 10 + 10 out of A.
    m = refmodel.max_carried(_triangle([("A", "C", 25 * G, 0)]))
    row("HiGHS max carried, triangle (hand: cut 20e9)", m[0], 20 * G)
    # Two classes: A->C 15 (class 0), B->C 15 (class 1).  The cut around C
    # admits 20; class 0 fits entirely (10 direct + 5 via B), class 1 gets
    # the remaining 20 - 15 = 5.
    m = refmodel.max_carried(_triangle([("A", "C", 15 * G, 0), ("B", "C", 15 * G, 1)]))
    row("HiGHS lexicographic class 0, triangle (hand: 15e9)", m[0], 15 * G)
    row("HiGHS lexicographic class 1, triangle (hand: 5e9)", m[1], 5 * G, rel=1e-8)
    # Square, A->D 15: the metric-2 path takes its cap of 10, the metric-4
    # path the other 5: 10 x 2 + 5 x 4 = 40.
    c, _ = refmodel.min_cost(_square([("A", "D", 15 * G, 0)]))
    row("HiGHS min cost, square (hand: 40e9)", c, 40 * G)
    # networkx on the same square, in Gbit/s units, as a third opinion.
    g = nx.DiGraph()
    for x, y, m_ in (("A", "B", 1), ("B", "D", 1), ("A", "C", 2), ("C", "D", 2)):
        g.add_edge(x, y, capacity=10, weight=m_)
        g.add_edge(y, x, capacity=10, weight=m_)
    g.nodes["A"]["demand"] = -15
    g.nodes["D"]["demand"] = 15
    row("networkx min cost, square (hand: 40)", nx.cost_of_flow(g, nx.min_cost_flow(g)), 40)
    return rows


def _rows_solvers():
    rows = []
    pb = _triangle([("A", "C", 15 * G, 0)])
    c, A_ub, b_ub, A_eq, b_eq = refmodel.min_max_util_matrices(pb)
    with tempfile.TemporaryDirectory(prefix="weft-ref-") as tmp:
        path = os.path.join(tmp, "tri.mps")
        refmodel.write_mps(path, c, A_ub, b_ub, A_eq, b_eq)
        for name, fn in (("CLP", lambda p: solvers.clp(p)),
                         ("CLP tight", lambda p: solvers.clp(p, tight=True)),
                         ("glpsol", solvers.glpsol),
                         ("HiGHS via read_mps", solvers.highs)):
            got, _ = fn(path)
            rows.append(("%s on our MPS, triangle (hand: 0.75)" % name, got, 0.75,
                         abs(got - 0.75) <= 1e-9))
    return rows


def _rows_plancheck():
    rows = []
    base = _triangle_plan()
    f = plancheck.check(*base)
    rows.append(("plancheck accepts the hand-made plan", len(f), 0, not f))
    if f:
        print("  plancheck failures on a correct plan:", f)

    def corrupt(name, fn):
        docs = copy.deepcopy(base)
        fn(*docs)
        f = plancheck.check(*docs)
        rows.append(("plancheck rejects: " + name, len(f), ">0", len(f) > 0))

    def bad_link(t, d, p, pl, r, l):
        r["routes"][0]["paths"][1]["links"] = ["ab", "ac"]

    def bad_load(t, d, p, pl, r, l):
        l["links"][0]["a_to_b"]["load_bps"] += 1e6

    def bad_util(t, d, p, pl, r, l):
        pl["max_utilization"] = 0.9

    def bad_cost(t, d, p, pl, r, l):
        pl["total_cost"] = 19 * G

    def bad_sum(t, d, p, pl, r, l):
        r["routes"][0]["unserved_bps"] = 1 * G

    def over_cap(t, d, p, pl, r, l):
        p["headroom"] = 0.9

    def bad_status(t, d, p, pl, r, l):
        pl["status"] = "partial"

    def bad_walk(t, d, p, pl, r, l):
        r["routes"][0]["paths"][1]["nodes"] = ["A", "C", "C"]

    def bad_matrix(t, d, p, pl, r, l):
        d[0]["rate_bps"] = 16 * G

    for name, fn in (("path link that does not join its nodes", bad_link),
                     ("arc load not the sum of its paths", bad_load),
                     ("wrong max_utilization", bad_util),
                     ("wrong total_cost", bad_cost),
                     ("carried + unserved != rate", bad_sum),
                     ("load above capacity x headroom", over_cap),
                     ("status partial with all carried", bad_status),
                     ("path nodes not a walk to dst", bad_walk),
                     ("routes that differ from the matrix", bad_matrix)):
        corrupt(name, fn)
    return rows


def run():
    return _rows_refmodel() + _rows_solvers() + _rows_plancheck()


if __name__ == "__main__":
    import sys
    bad = 0
    for name, got, want, ok in run():
        print("%-4s %-60s got %s want %s" % ("ok" if ok else "FAIL", name, got, want))
        bad += not ok
    sys.exit(1 if bad else 0)
