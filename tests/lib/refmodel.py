# SPDX-License-Identifier: GPL-3.0-or-later
"""Reference node-arc LPs, built here and solved by scipy's HiGHS.

DESIGN.  These models are written from the textbook node-arc formulation of
the multicommodity flow problem, independently of weft's engine: one flow
variable per (commodity, arc), one conservation row per (commodity, node),
one capacity row per arc.  Commodities with the same source are aggregated
into one source-rooted flow (the optimum of every objective used here is
unchanged by that, since carried amounts are per demand and costs and loads
are linear in arc flow).  Rates and capacities are scaled by 1 / (largest
capacity) before they reach the solver, so the LP's numbers are O(1) even on
instances with 1e10 bit/s links; results are scaled back to bit/s.

A Problem holds plain data: node names, arcs (tail, head, capacity_bps,
metric, link id) and demands (src, dst, rate_bps, priority).  Helpers build
it from a tests/lib/sndlib.Network with the two-arcs-per-link convention.

Solved models:
  min_max_util()   min U  s.t. sum_s f[s,a] <= U c_a, all demand routed
  min_cost(h)      min sum_a metric_a sum_s f[s,a] s.t. load_a <= h c_a
  max_carried(h)   lexicographic by priority class: max carried of class 0,
                   fix it, then class 1, ...; each demand k carries
                   x_k in [0, d_k]
Each returns values in bit/s (or metric x bit/s) plus the HiGHS wall time.
"""
import math
import time

import numpy as np
import scipy.sparse as sp
from scipy.optimize import linprog

# Tight HiGHS tolerances: the checks compare to 1e-6 relative, so the
# references must be well inside that.
HIGHS_OPTIONS = {"primal_feasibility_tolerance": 1e-9,
                 "dual_feasibility_tolerance": 1e-9}


class SolveError(Exception):
    pass


class Problem:
    def __init__(self, nodes, arcs, demands):
        self.nodes = list(nodes)
        self.index = {v: i for i, v in enumerate(self.nodes)}
        # arcs: [(tail, head, capacity_bps, metric, link_id)]
        self.arcs = list(arcs)
        # demands: [(src, dst, rate_bps, priority)], zero rates dropped
        self.demands = [d for d in demands if d[2] > 0]
        caps = [a[2] for a in self.arcs]
        self.scale = 1.0 / max(caps) if caps and max(caps) > 0 else 1.0
        self.last_ms = 0.0


def from_network(net, cap_factor=1.0, demand_factor=1.0, priorities=None):
    """Two arcs per link, each with the link's capacity (times cap_factor)."""
    arcs = []
    for l in net.links:
        c = l.capacity_bps * cap_factor
        arcs.append((l.a, l.b, c, l.te_metric, l.id))
        arcs.append((l.b, l.a, c, l.te_metric, l.id))
    dem = []
    for i, d in enumerate(net.demands):
        p = priorities[i] if priorities is not None else 0
        dem.append((d.src, d.dst, d.rate_bps * demand_factor, p))
    return Problem(net.nodes, arcs, dem)


def from_weft(topology, demands):
    """From weft's JSON topology ({"nodes","links"}) and a demand list."""
    arcs = []
    for l in topology["links"]:
        if l.get("state", "up") != "up":
            continue
        arcs.append((l["a"], l["b"], float(l["capacity_bps"]), float(l["te_metric"]), l["id"]))
        arcs.append((l["b"], l["a"], float(l["capacity_bps"]), float(l["te_metric"]), l["id"]))
    dem = [(d["src"], d["dst"], float(d["rate_bps"]), int(d.get("priority", 0)))
           for d in demands]
    return Problem([n["id"] for n in topology["nodes"]], arcs, dem)


class _Layout:
    """Column layout: flow columns f[s, a] first, then extra columns."""

    def __init__(self, pb):
        self.pb = pb
        self.na = len(pb.arcs)
        self.nv = len(pb.nodes)
        self.sources = sorted({pb.index[d[0]] for d in pb.demands})
        self.spos = {s: i for i, s in enumerate(self.sources)}
        self.nflow = len(self.sources) * self.na
        self.tail = np.array([pb.index[a[0]] for a in pb.arcs], dtype=np.int64)
        self.head = np.array([pb.index[a[1]] for a in pb.arcs], dtype=np.int64)
        self.cap = np.array([a[2] for a in pb.arcs]) * pb.scale
        self.metric = np.array([a[3] for a in pb.arcs], dtype=float)

    def conservation(self, ncols_total, extra_cols=None):
        """Rows (s, v): out - in (- carried terms) = rhs.

        Without extra_cols, rhs holds the fixed demand.  With extra_cols
        (column index per demand), the demand's carried variable x_k enters
        with -1 at its source row and +1 at its target row and rhs is 0.
        """
        ns, na, nv = len(self.sources), self.na, self.nv
        # each flow column (s, a) has +1 in row (s, tail a), -1 in row (s, head a)
        sidx = np.repeat(np.arange(ns), na)
        aidx = np.tile(np.arange(na), ns)
        cols = np.arange(ns * na)
        rows = np.concatenate([sidx * nv + self.tail[aidx], sidx * nv + self.head[aidx]])
        vals = np.concatenate([np.ones(ns * na), -np.ones(ns * na)])
        cols = np.concatenate([cols, cols])
        rhs = np.zeros(ns * nv)
        pb = self.pb
        if extra_cols is None:
            for src, dst, rate, _ in pb.demands:
                r = rate * pb.scale
                s = self.spos[pb.index[src]]
                rhs[s * nv + pb.index[src]] += r
                rhs[s * nv + pb.index[dst]] -= r
        else:
            er, ec, ev = [], [], []
            for k, (src, dst, rate, _) in enumerate(pb.demands):
                s = self.spos[pb.index[src]]
                er += [s * nv + pb.index[src], s * nv + pb.index[dst]]
                ec += [extra_cols[k], extra_cols[k]]
                ev += [-1.0, 1.0]
            rows = np.concatenate([rows, np.array(er, dtype=np.int64)])
            cols = np.concatenate([cols, np.array(ec, dtype=np.int64)])
            vals = np.concatenate([vals, np.array(ev)])
        A = sp.csr_matrix((vals, (rows, cols)), shape=(ns * nv, ncols_total))
        return A, rhs

    def load_rows(self, ncols_total):
        """Row a: sum_s f[s, a]."""
        ns, na = len(self.sources), self.na
        cols = np.arange(ns * na)
        rows = np.tile(np.arange(na), ns)
        return sp.csr_matrix((np.ones(ns * na), (rows, cols)), shape=(na, ncols_total))


def _solve(pb, c, A_ub, b_ub, A_eq, b_eq, bounds):
    t0 = time.time()
    res = linprog(c, A_ub=A_ub, b_ub=b_ub, A_eq=A_eq, b_eq=b_eq, bounds=bounds,
                  method="highs", options=HIGHS_OPTIONS)
    pb.last_ms = (time.time() - t0) * 1000.0
    if res.status != 0:
        raise SolveError("HiGHS: status %d: %s" % (res.status, res.message))
    return res


def arc_loads(pb, x):
    """Per-arc load in bit/s from a solution vector."""
    lay = _Layout(pb)
    f = np.asarray(x[:lay.nflow]).reshape(len(lay.sources), lay.na)
    return f.sum(axis=0) / pb.scale


def min_max_util(pb):
    """U* = min max_a load_a / c_a with all demand routed, no cap on U.

    Returns (U*, solution vector).
    """
    lay = _Layout(pb)
    n = lay.nflow + 1
    Aeq, beq = lay.conservation(n)
    L = lay.load_rows(n)
    Ucol = sp.csr_matrix((-lay.cap, (np.arange(lay.na), np.full(lay.na, n - 1))),
                         shape=(lay.na, n))
    c = np.zeros(n)
    c[-1] = 1.0
    res = _solve(pb, c, L + Ucol, np.zeros(lay.na), Aeq, beq, (0, None))
    return res.fun, res.x


def min_cost(pb, headroom=1.0):
    """min sum metric x load (metric x bit/s) with load_a <= headroom c_a."""
    lay = _Layout(pb)
    n = lay.nflow
    Aeq, beq = lay.conservation(n)
    L = lay.load_rows(n)
    c = np.tile(lay.metric, len(lay.sources))
    res = _solve(pb, c, L, headroom * lay.cap, Aeq, beq, (0, None))
    return res.fun / pb.scale, res.x


def max_carried(pb, headroom=1.0, rel_fix=1e-12):
    """Lexicographic max carried traffic by priority class (0 first).

    Returns ({class: carried_bps}, total HiGHS ms).  After class p is
    maximised its carried total is fixed (>= optimum x (1 - rel_fix)) for
    the classes that follow.
    """
    lay = _Layout(pb)
    K = len(pb.demands)
    n = lay.nflow + K
    xcols = np.arange(lay.nflow, n)
    Aeq, beq = lay.conservation(n, extra_cols=xcols)
    L = lay.load_rows(n)
    A_ub = [L]
    b_ub = [headroom * lay.cap]
    bounds = [(0, None)] * lay.nflow + [(0, d[2] * pb.scale) for d in pb.demands]
    prios = sorted({d[3] for d in pb.demands})
    out = {}
    total_ms = 0.0
    for p in prios:
        sel = np.array([1.0 if d[3] == p else 0.0 for d in pb.demands])
        c = np.zeros(n)
        c[lay.nflow:] = -sel
        res = _solve(pb, c, sp.vstack(A_ub).tocsr(), np.concatenate(b_ub), Aeq, beq, bounds)
        total_ms += pb.last_ms
        best = -res.fun
        out[p] = best / pb.scale
        row = np.zeros(n)
        row[lay.nflow:] = -sel
        A_ub.append(sp.csr_matrix(row.reshape(1, -1)))
        b_ub.append(np.array([-best * (1.0 - rel_fix)]))
    pb.last_ms = total_ms
    return out


def write_mps(path, c, A_ub, b_ub, A_eq, b_eq, lower=0.0, upper=None):
    """Writes min c'x s.t. A_ub x <= b_ub, A_eq x = b_eq, bounds, as free MPS.

    Used to validate the CLP and glpsol pipelines on models of our own.
    """
    A_ub = sp.csc_matrix(A_ub) if A_ub is not None else None
    A_eq = sp.csc_matrix(A_eq) if A_eq is not None else None
    n = len(c)
    with open(path, "w") as f:
        f.write("NAME REF\nROWS\n N OBJ\n")
        nub = A_ub.shape[0] if A_ub is not None else 0
        neq = A_eq.shape[0] if A_eq is not None else 0
        for i in range(nub):
            f.write(" L U%d\n" % i)
        for i in range(neq):
            f.write(" E E%d\n" % i)
        f.write("COLUMNS\n")
        for j in range(n):
            if c[j] != 0:
                f.write(" X%d OBJ %.17g\n" % (j, c[j]))
            for M, tag in ((A_ub, "U"), (A_eq, "E")):
                if M is None:
                    continue
                for p in range(M.indptr[j], M.indptr[j + 1]):
                    f.write(" X%d %s%d %.17g\n" % (j, tag, M.indices[p], M.data[p]))
        f.write("RHS\n")
        for i in range(nub):
            if b_ub[i] != 0:
                f.write(" RHS U%d %.17g\n" % (i, b_ub[i]))
        for i in range(neq):
            if b_eq[i] != 0:
                f.write(" RHS E%d %.17g\n" % (i, b_eq[i]))
        if upper is not None:
            f.write("BOUNDS\n")
            for j in range(n):
                if upper[j] is not None and not math.isinf(upper[j]):
                    f.write(" UP BND X%d %.17g\n" % (j, upper[j]))
        f.write("ENDATA\n")


def min_max_util_matrices(pb):
    """The min_max_util LP as (c, A_ub, b_ub, A_eq, b_eq), for write_mps."""
    lay = _Layout(pb)
    n = lay.nflow + 1
    Aeq, beq = lay.conservation(n)
    L = lay.load_rows(n)
    Ucol = sp.csr_matrix((-lay.cap, (np.arange(lay.na), np.full(lay.na, n - 1))),
                         shape=(lay.na, n))
    c = np.zeros(n)
    c[-1] = 1.0
    return c, (L + Ucol).tocsr(), np.zeros(lay.na), Aeq, beq
