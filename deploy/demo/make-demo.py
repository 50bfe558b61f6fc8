#!/usr/bin/python3
# SPDX-License-Identifier: GPL-3.0-or-later
# Generates deploy/demo/network.csv, the invented Tarrowmere backbone.
#
# Everything here is made up: the island, the operator, the sites, their
# coordinates, the links and the traffic.  The script is deterministic
# (fixed seed), so running it again gives the same file byte for byte.
#
# The traffic matrix is a gravity model (rate ~ weight(s) * weight(t)),
# split into priority classes, then scaled so that the min-max-utilisation
# plan (node-arc LP, commodities aggregated per source, solved with scipy's
# HiGHS) has a maximum link utilisation of TARGET_UTIL.  The script then
# fails each link in turn and reports the utilisation the best plan would
# need: above the demo policy's headroom of 0.9, some traffic of the lowest
# classes goes unserved.
#
# Usage: /usr/bin/python3 deploy/demo/make-demo.py > deploy/demo/network.csv
# The summary goes to stderr.

import random
import sys

import numpy as np
from scipy.optimize import linprog
from scipy.sparse import lil_matrix

SEED = 4711
TARGET_UTIL = 0.62
HEADROOM = 0.9

# id, name, lat, lon, weight (relative traffic generated)
SITES = [
    ("ALD", "Aldersea", 58.40, -29.60, 10.0),
    ("CRB", "Corrow Bay", 58.95, -28.20, 4.0),
    ("DUN", "Dunmarrow", 59.55, -29.10, 3.0),
    ("ESK", "Eskerholt", 59.70, -30.80, 2.0),
    ("FAL", "Fallowmere", 59.10, -31.90, 2.5),
    ("GLN", "Glenhaska", 58.55, -32.70, 3.5),
    ("HOB", "Hobbenfirth", 57.85, -32.10, 2.0),
    ("IST", "Istrawick", 57.30, -31.10, 3.0),
    ("KEL", "Kelvaran", 57.15, -29.80, 6.0),
    ("LOR", "Lorrimoss", 57.45, -28.40, 2.5),
    ("MIR", "Mirrowdale", 57.95, -27.40, 4.5),
    ("NOR", "Norrowind", 58.80, -30.30, 2.0),
    ("OTT", "Ottersk", 58.05, -30.90, 3.0),
    ("PEL", "Pellinbrae", 58.60, -26.70, 1.5),
    ("QUA", "Quarvey", 57.70, -29.20, 2.0),
    ("VAR", "Vardelholm", 59.30, -27.40, 1.4),
]

G = 1e9
# a, b, capacity (bit/s), TE metric (about the fibre length in 10 km)
LINKS = [
    ("ALD", "CRB", 100 * G, 10),
    ("ALD", "NOR", 100 * G, 8),
    ("ALD", "OTT", 100 * G, 8),
    ("ALD", "QUA", 100 * G, 9),
    ("ALD", "MIR", 40 * G, 13),
    ("CRB", "DUN", 40 * G, 8),
    ("CRB", "VAR", 10 * G, 6),
    ("CRB", "PEL", 10 * G, 10),
    ("CRB", "MIR", 40 * G, 12),
    ("DUN", "ESK", 40 * G, 10),
    ("DUN", "NOR", 40 * G, 10),
    ("DUN", "VAR", 10 * G, 11),
    ("ESK", "FAL", 40 * G, 8),
    ("ESK", "NOR", 10 * G, 10),
    ("FAL", "GLN", 40 * G, 8),
    ("FAL", "NOR", 10 * G, 10),
    ("GLN", "HOB", 40 * G, 8),
    ("GLN", "OTT", 40 * G, 11),
    ("HOB", "IST", 40 * G, 8),
    ("HOB", "OTT", 10 * G, 9),
    ("IST", "KEL", 100 * G, 8),
    ("IST", "OTT", 40 * G, 10),
    ("KEL", "QUA", 100 * G, 7),
    ("KEL", "LOR", 40 * G, 9),
    ("LOR", "MIR", 40 * G, 9),
    ("LOR", "QUA", 10 * G, 8),
    ("MIR", "PEL", 10 * G, 9),
    ("MIR", "QUA", 40 * G, 11),
]

# Share of a pair's traffic in each priority class (0 most important).
CLASSES = [(0, 0.15), (1, 0.35), (2, 0.50)]


def round_rate(bps):
    """Rounds to three significant digits, at least 1 Mbit/s."""
    mbps = max(1.0, bps / 1e6)
    digits = 3 - len(str(int(mbps)))
    mbps = round(mbps, digits if digits > 0 else 0)
    if digits < 0:
        mbps = round(mbps, digits)
    return mbps * 1e6


def fmt_rate(bps):
    for suffix, scale in (("G", 1e9), ("M", 1e6)):
        if bps >= scale:
            v = bps / scale
            s = ("%.3f" % v).rstrip("0").rstrip(".")
            if abs(float(s) * scale - bps) < 0.5:
                return s + suffix
    return "%d" % bps


def min_max_util(nodes, links, demands):
    """min U s.t. the demands fit with load <= U * capacity on every arc.

    Node-arc formulation, one commodity per source.  Returns U, or None
    if some demand has no path at all.
    """
    n = len(nodes)
    index = {v: i for i, v in enumerate(nodes)}
    arcs = []
    for a, b, cap, _ in links:
        arcs.append((index[a], index[b], cap))
        arcs.append((index[b], index[a], cap))
    supply = {}
    for s, t, rate, _ in demands:
        supply.setdefault(index[s], np.zeros(n))
        supply[index[s]][index[s]] += rate
        supply[index[s]][index[t]] -= rate
    sources = sorted(supply)
    na, ns = len(arcs), len(sources)
    nvar = ns * na + 1
    scale = max(cap for _, _, cap in arcs)
    a_eq = lil_matrix((ns * n, nvar))
    b_eq = np.zeros(ns * n)
    for k, s in enumerate(sources):
        for j, (u, v, _) in enumerate(arcs):
            a_eq[k * n + u, k * na + j] += 1
            a_eq[k * n + v, k * na + j] -= 1
        b_eq[k * n:(k + 1) * n] = supply[s] / scale
    a_ub = lil_matrix((na, nvar))
    for j, (_, _, cap) in enumerate(arcs):
        for k in range(ns):
            a_ub[j, k * na + j] = 1
        a_ub[j, nvar - 1] = -cap / scale
    c = np.zeros(nvar)
    c[-1] = 1
    res = linprog(c, A_ub=a_ub.tocsr(), b_ub=np.zeros(na),
                  A_eq=a_eq.tocsr(), b_eq=b_eq, method="highs")
    if res.status != 0:
        return None
    return res.x[-1]


def main():
    rng = random.Random(SEED)
    ids = [s[0] for s in SITES]
    weight = {s[0]: s[4] for s in SITES}

    # Gravity model with some noise, split into classes.  Not every pair
    # has every class: small sites carry little priority-0 traffic.
    raw = []
    for s in ids:
        for t in ids:
            if s == t:
                continue
            base = 1e8 * weight[s] * weight[t] * rng.uniform(0.6, 1.4)
            for prio, share in CLASSES:
                if prio == 0 and weight[s] * weight[t] < 8:
                    continue
                if prio == 1 and rng.random() < 0.4:
                    continue
                raw.append((s, t, base * share, prio))

    u = min_max_util(ids, LINKS, raw)
    factor = TARGET_UTIL / u
    demands = [(s, t, round_rate(r * factor), p) for s, t, r, p in raw]
    u = min_max_util(ids, LINKS, demands)

    out = sys.stdout
    out.write("# weft demo network: the Tarrowmere backbone of the "
              "fictional operator\n")
    out.write("# Brannock Fibre.  All names and numbers are invented; "
              "see deploy/demo/README.md.\n")
    out.write("# Generated by deploy/demo/make-demo.py (seed %d).\n" % SEED)
    out.write("# Format: docs/csv-format.md\n")
    out.write("# kind,id,name,lat,lon\n")
    for sid, name, lat, lon, _ in SITES:
        out.write("node,%s,%s,%.2f,%.2f\n" % (sid, name, lat, lon))
    out.write("# kind,id,a,b,capacity,te_metric,state\n")
    for a, b, cap, metric in LINKS:
        out.write("link,%s-%s,%s,%s,%s,%d,up\n"
                  % (a, b, a, b, fmt_rate(cap), metric))
    out.write("# kind,src,dst,rate,priority\n")
    for s, t, rate, prio in demands:
        out.write("demand,%s,%s,%s,%d\n" % (s, t, fmt_rate(rate), prio))

    err = sys.stderr
    total = sum(d[2] for d in demands)
    err.write("sites %d, links %d, demands %d, total %.1f Gbit/s\n"
              % (len(ids), len(LINKS), len(demands), total / 1e9))
    err.write("min max utilisation, all links up: %.4f\n" % u)
    over = []
    for i, link in enumerate(LINKS):
        rest = LINKS[:i] + LINKS[i + 1:]
        uf = min_max_util(ids, rest, demands)
        tag = ""
        if uf is None:
            tag = "  DISCONNECTS"
        elif uf > HEADROOM:
            tag = "  over headroom %.1f: partial service" % HEADROOM
            over.append(link)
        err.write("  fail %s-%s: %s%s\n"
                  % (link[0], link[1],
                     "-" if uf is None else "%.4f" % uf, tag))
    err.write("%d single link failures exceed the headroom\n" % len(over))


if __name__ == "__main__":
    main()
