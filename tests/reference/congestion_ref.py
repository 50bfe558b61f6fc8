# SPDX-License-Identifier: GPL-3.0-or-later
"""Reference optima of the congestion objective, by scipy's HiGHS.

DESIGN.  The congestion objective minimises sum over arcs of Phi(load,
capacity), the convex piecewise-linear link cost of Fortz & Thorup,
"Internet traffic engineering by optimizing OSPF weights", Proc. IEEE
INFOCOM 2000: Phi(0) = 0 and slope 1, 3, 10, 70, 500, 5000 on utilisation
[0, 1/3), [1/3, 2/3), [2/3, 9/10), [9/10, 1), [1, 11/10), [11/10, inf).
XXX These values are recalled from memory; the paper's text could not be
read from here.  Then, with sum Phi held within a relative tolerance (weft's
policy.balance_tol, 1e-7 by default) of its optimum, the TE-metric cost is
minimised.

The LP is written here from that definition, independently of weft's
engine, in the node-arc form of tests/lib/refmodel.py (flows aggregated
per source, rates scaled so the largest capacity is 1):

  min  sum_a phi_a
  s.t. conservation per (source, node), all demand routed
       load_a = sum_s f[s, a] <= h c_a
       slope_i load_a - phi_a <= b_i c_a   for each piece i, where
       b_i = b_{i-1} + (slope_i - slope_{i-1}) u_i, b_1 = 0, makes Phi
       continuous at each breakpoint u_i (so Phi = max_i of the lines)
  then min sum_a metric_a load_a with sum_a phi_a <= z (1 + tol) + 1e-12.

Phi at the optimum loads is also recomputed by integrating the slopes
(phi_of_loads), the form weft reports in its plan.

Run as a script, it prints the optima for INSTANCES, the values that
tests/unit/engine/congestion_test.c records; the C test quotes the command:

    /usr/bin/python3 tests/reference/congestion_ref.py

tests/reference/congestion.py uses the same functions to check the
daemon's plans over HTTP.
"""
import os
import sys

import numpy as np
import scipy.sparse as sp

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.dirname(os.path.dirname(HERE))
sys.path.insert(0, os.path.join(ROOT, "tests", "lib"))

import refmodel  # noqa: E402
import sndlib  # noqa: E402

# (utilisation where the piece begins, slope), Fortz & Thorup 2000.
PIECES = [(0.0, 1.0), (1.0 / 3, 3.0), (2.0 / 3, 10.0), (9.0 / 10, 70.0),
          (1.0, 500.0), (11.0 / 10, 5000.0)]

# Instances and the factor every capacity is multiplied by, chosen (as
# inputs, round numbers) so that all demand fits with the min max
# utilisation between 0.86 and 0.92: loads then reach the steep pieces.
INSTANCES = [("abilene", 70.0), ("atlanta", 2.5), ("geant", 10.0)]

TOL = 1e-7          # weft's default policy.balance_tol
PHI_ABS = 1e-12     # weft's absolute slack on the cap, LP units


def intercepts():
    """b_i making the lines meet at each breakpoint (derivation above)."""
    b = [0.0]
    for i in range(1, len(PIECES)):
        u, s = PIECES[i]
        b.append(b[-1] + (s - PIECES[i - 1][1]) * u)
    return b


def phi(load, cap):
    """Phi(load, cap) by integrating the slopes from 0 to load."""
    total = 0.0
    for i, (u, s) in enumerate(PIECES):
        lo = u * cap
        if load <= lo:
            break
        hi = PIECES[i + 1][0] * cap if i + 1 < len(PIECES) else load
        total += s * (min(load, hi) - lo)
    return total


def phi_of_loads(pb, loads_bps):
    return sum(phi(l, a[2]) for l, a in zip(loads_bps, pb.arcs))


def min_congestion(pb, headroom=1.0, tol=TOL):
    """Returns (Phi* bit/s, cost metric x bit/s, Phi of the final loads
    bit/s, final loads bit/s, HiGHS ms of both LPs)."""
    lay = refmodel._Layout(pb)
    na = lay.na
    n = lay.nflow + na
    phis = np.arange(lay.nflow, n)
    Aeq, beq = lay.conservation(n)
    L = lay.load_rows(n)
    blocks = [L]
    rhs = [headroom * lay.cap]
    b = intercepts()
    eye = sp.csr_matrix((np.ones(na), (np.arange(na), phis)), shape=(na, n))
    for (u, s), bi in zip(PIECES, b):
        blocks.append(s * L - eye)
        rhs.append(bi * lay.cap)
    A_ub = sp.vstack(blocks).tocsr()
    b_ub = np.concatenate(rhs)
    c = np.zeros(n)
    c[phis] = 1.0
    res = refmodel._solve(pb, c, A_ub, b_ub, Aeq, beq, (0, None))
    ms = pb.last_ms
    z = res.fun
    cap_row = np.zeros(n)
    cap_row[phis] = 1.0
    A2 = sp.vstack([A_ub, sp.csr_matrix(cap_row.reshape(1, -1))]).tocsr()
    b2 = np.concatenate([b_ub, [z * (1 + tol) + PHI_ABS]])
    c2 = np.zeros(n)
    c2[:lay.nflow] = np.tile(lay.metric, len(lay.sources))
    res2 = refmodel._solve(pb, c2, A2, b2, Aeq, beq, (0, None))
    ms += pb.last_ms
    loads = refmodel.arc_loads(pb, res2.x)
    return z / pb.scale, res2.fun / pb.scale, phi_of_loads(pb, loads), loads, ms


def instance(name, factor, data=None):
    data = data or os.path.join(ROOT, "tests", "data", "sndlib")
    net = sndlib.load(os.path.join(data, name + ".txt"))
    return net, refmodel.from_network(net, cap_factor=factor)


def main():
    print("# Phi intercepts b_i: %s" % ", ".join("%.17g" % x for x in intercepts()))
    print("# name factor min-max-util Phi*_bps cost_at_Phi* Phi(final loads)_bps")
    for name, factor in INSTANCES:
        net, pb = instance(name, factor)
        u, _ = refmodel.min_max_util(pb)
        z, cost, phi_final, _, ms = min_congestion(pb)
        print("%s %g %.9g %.17g %.17g %.17g  # %.0f ms" % (name, factor, u, z, cost,
                                                          phi_final, ms))
    return 0


if __name__ == "__main__":
    sys.exit(main())
