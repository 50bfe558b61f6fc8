# SPDX-License-Identifier: GPL-3.0-or-later
"""An independent checker of a weft plan, from its JSON documents alone.

DESIGN.  check() recomputes everything a plan claims from the routes and the
inputs, in Python, without trusting any total the daemon reports:

- each path is a contiguous walk of existing, up links from the demand's
  source to its destination, with "nodes" and "links" consistent and no node
  visited twice (every policy ends with a cost stage over positive TE
  metrics, so an optimal flow carries no cycles);
- per demand: sum of path rates == carried and carried + unserved == rate
  (relative 1e-9 of the rate, at least 1e-3 bit/s), and the routes match the
  traffic matrix as a multiset of (src, dst, priority, rate);
- per arc: the reported load equals the sum of the rates of the paths over
  it (so flow conservation per demand follows from the contiguous paths);
  utilisation = load / capacity and headroom_bps = capacity x headroom -
  load; no arc above capacity x headroom (relative 1e-7), whatever the
  status, since admission respects headroom too;
- the plan summary: max_utilization = max load / capacity, total_cost =
  sum TE metric x load, demand/carried/unserved totals, status "optimal"
  iff nothing is unserved ("partial" otherwise, "empty" with no demand),
  unserved_by_priority (when present) per class, and saturated links only
  when traffic was left unserved, each of them with a direction loaded to
  capacity x headroom.

Used by tests/reference/run.py and the integration suite.  Returns a list of
failure messages; empty means the plan passed.
"""
import math

REL_RATE = 1e-9      # per-demand sums, relative to the demand's rate
ABS_BPS = 1e-3       # absolute floor, bit/s
REL_CAP = 1e-7       # capacity x headroom may be exceeded by this, relative
REL_SUM = 1e-9       # recomputed totals


# The link cost of Fortz & Thorup (2000), "Internet traffic engineering by
# optimizing OSPF weights": slope 1, 3, 10, 70, 500, 5000 between
# utilisation breakpoints 1/3, 2/3, 9/10, 1, 11/10 (recalled from memory of
# the paper, as in daemon/engine/congestion.c; written here independently
# as an integral of the slopes).
_PHI_BREAKS = (1.0 / 3, 2.0 / 3, 9.0 / 10, 1.0, 11.0 / 10)
_PHI_SLOPES = (1, 3, 10, 70, 500, 5000)


def _phi(load, cap):
    u, lo, total = load / cap, 0.0, 0.0
    for i, slope in enumerate(_PHI_SLOPES):
        hi = _PHI_BREAKS[i] if i < len(_PHI_BREAKS) else float("inf")
        if u > lo:
            total += slope * (min(u, hi) - lo)
        lo = hi
    return total * cap


def _close(a, b, rel, abs_=ABS_BPS):
    return abs(a - b) <= max(rel * max(abs(a), abs(b)), abs_)


def check(topology, demands, policy, plan, routes, loads, max_msgs=20):
    """topology: GET /v1/topology; demands: the matrix's demand list;
    policy: the policy object in force; plan, routes, loads: GET /v1/plan,
    /v1/plan/routes, /v1/plan/loads.  Returns [failure message]."""
    fails = []

    def fail(msg):
        if len(fails) < max_msgs:
            fails.append(msg)
        elif len(fails) == max_msgs:
            fails.append("... more failures not shown")

    headroom = float(policy.get("headroom", 1.0))
    links = {}
    for l in topology["links"]:
        links[l["id"]] = l
    nodes = {n["id"] for n in topology["nodes"]}
    for l in links.values():
        if l["a"] not in nodes or l["b"] not in nodes:
            fail("topology link %s has an unknown end" % l["id"])

    # ---- routes against the matrix ----
    rts = routes["routes"]
    want = {}
    for d in demands:
        if float(d["rate_bps"]) <= 0:
            continue
        if d["src"] not in nodes or d["dst"] not in nodes:
            continue    # kept in the matrix, reported as unplaced
        key = (d["src"], d["dst"], int(d.get("priority", 0)))
        want.setdefault(key, []).append(float(d["rate_bps"]))
    got = {}
    for r in rts:
        if float(r["rate_bps"]) <= 0:
            continue
        key = (r["src"], r["dst"], int(r.get("priority", 0)))
        got.setdefault(key, []).append(float(r["rate_bps"]))
    for key in set(want) | set(got):
        a = sorted(want.get(key, []))
        b = sorted(got.get(key, []))
        if len(a) != len(b) or any(not _close(x, y, REL_RATE) for x, y in zip(a, b)):
            fail("demand %s->%s prio %d: matrix rates %s, routes %s" % (key + (a[:5], b[:5])))

    # ---- paths ----
    arc_load = {}        # (link id, "a_to_b"|"b_to_a") -> sum of path rates
    tot_rate = tot_carried = tot_unserved = 0.0
    for r in rts:
        rate = float(r["rate_bps"])
        carried = float(r["carried_bps"])
        unserved = float(r["unserved_bps"])
        tol = max(REL_RATE * rate, ABS_BPS)
        name = "route %s->%s prio %s" % (r["src"], r["dst"], r.get("priority", 0))
        tot_rate += rate
        tot_carried += carried
        tot_unserved += unserved
        if carried < -tol or unserved < -tol:
            fail("%s: negative carried %g or unserved %g" % (name, carried, unserved))
        if abs(carried + unserved - rate) > tol:
            fail("%s: carried %.17g + unserved %.17g != rate %.17g" % (name, carried, unserved, rate))
        psum = 0.0
        for p in r["paths"]:
            prate = float(p["rate_bps"])
            psum += prate
            if not prate > 0:
                fail("%s: path with rate %g" % (name, prate))
            pn, pl = p["nodes"], p["links"]
            if len(pn) != len(pl) + 1 or not pl:
                fail("%s: path has %d nodes and %d links" % (name, len(pn), len(pl)))
                continue
            if pn[0] != r["src"] or pn[-1] != r["dst"]:
                fail("%s: path runs %s..%s" % (name, pn[0], pn[-1]))
            if len(set(pn)) != len(pn):
                fail("%s: path revisits a node: %s" % (name, pn))
            for i, lid in enumerate(pl):
                l = links.get(lid)
                if l is None:
                    fail("%s: path uses unknown link %s" % (name, lid))
                    continue
                if l.get("state", "up") != "up":
                    fail("%s: path uses link %s in state %s" % (name, lid, l.get("state")))
                u, v = pn[i], pn[i + 1]
                if (u, v) == (l["a"], l["b"]):
                    d = "a_to_b"
                elif (u, v) == (l["b"], l["a"]):
                    d = "b_to_a"
                else:
                    fail("%s: link %s (%s-%s) does not join %s and %s" % (name, lid, l["a"], l["b"], u, v))
                    continue
                arc_load[(lid, d)] = arc_load.get((lid, d), 0.0) + prate
        if abs(psum - carried) > tol:
            fail("%s: paths sum to %.17g, carried %.17g" % (name, psum, carried))

    # ---- loads ----
    seen = set()
    max_util = 0.0
    cost = 0.0
    congestion = 0.0
    sat_arcs = set()
    for e in loads["links"]:
        lid = e["id"]
        seen.add(lid)
        l = links.get(lid)
        if l is None:
            fail("loads: unknown link %s" % lid)
            continue
        if (e["a"], e["b"]) != (l["a"], l["b"]):
            fail("loads: link %s ends %s-%s, topology %s-%s" % (lid, e["a"], e["b"], l["a"], l["b"]))
        up = l.get("state", "up") == "up"
        cap = float(l["capacity_bps"]) if up else 0.0
        metric = float(l["te_metric"])
        if not _close(float(e["te_metric"]), metric, 1e-12, 0):
            fail("loads: link %s metric %g, topology %g" % (lid, e["te_metric"], metric))
        for d in ("a_to_b", "b_to_a"):
            x = e[d]
            load = float(x["load_bps"])
            want_load = arc_load.get((lid, d), 0.0)
            tol = max(REL_RATE * max(load, cap), ABS_BPS)
            if abs(load - want_load) > tol:
                fail("loads: %s %s load %.17g, paths over it sum to %.17g" % (lid, d, load, want_load))
            if load > cap * headroom * (1 + REL_CAP) + ABS_BPS:
                fail("loads: %s %s load %.17g above capacity x headroom %.17g (status %s)"
                     % (lid, d, load, cap * headroom, plan.get("status")))
            if cap > 0:
                u = load / cap
                max_util = max(max_util, u)
                if not _close(float(x["utilization"]), u, 1e-9, 1e-12):
                    fail("loads: %s %s utilization %.17g, load/capacity %.17g" % (lid, d, x["utilization"], u))
            hb = cap * headroom - load
            if not _close(float(x["headroom_bps"]), hb, 1e-9, max(ABS_BPS, 1e-9 * cap)):
                fail("loads: %s %s headroom_bps %.17g, capacity x headroom - load %.17g" % (lid, d, x["headroom_bps"], hb))
            cost += metric * load
            if cap > 0:
                congestion += _phi(load, cap)
            if x.get("saturated"):
                sat_arcs.add(lid)
                if load < cap * headroom * (1 - 1e-6) - ABS_BPS:
                    fail("loads: %s %s saturated but load %.17g < capacity x headroom %.17g" % (lid, d, load, cap * headroom))
    for lid in links:
        if lid not in seen:
            fail("loads: link %s missing" % lid)
    for k in arc_load:
        if k[0] not in seen:
            fail("loads: link %s carries paths but has no load entry" % k[0])

    # ---- summary ----
    def cmp(field, mine, rel, abs_=ABS_BPS):
        v = plan.get(field)
        if v is None or not _close(float(v), mine, rel, abs_):
            fail("plan %s = %r, recomputed %.17g" % (field, v, mine))

    cmp("max_utilization", max_util, 1e-9, 1e-12)
    cmp("total_cost", cost, REL_SUM, 1e-6)
    if "congestion" in plan:
        cmp("congestion", congestion, 1e-9, 1e-6)
    # Carried and unserved are differences of nearly equal sums when almost
    # everything (or nothing) is carried: compare relative to the demand.
    floor = max(ABS_BPS, REL_SUM * tot_rate)
    cmp("demand_bps", tot_rate, REL_SUM)
    cmp("carried_bps", tot_carried, REL_SUM, floor)
    cmp("unserved_bps", tot_unserved, REL_SUM, floor)
    ubp = plan.get("unserved_by_priority")
    if ubp is not None:
        mine = {}
        for r in rts:
            k = str(int(r.get("priority", 0)))
            mine[k] = mine.get(k, 0.0) + float(r["unserved_bps"])
        for k in set(mine) | set(ubp):
            if not _close(float(ubp.get(k, 0.0)), mine.get(k, 0.0), REL_SUM, floor):
                fail("unserved_by_priority[%s] = %r, recomputed %.17g" % (k, ubp.get(k), mine.get(k, 0.0)))
    if not _close(tot_carried + tot_unserved, tot_rate, REL_SUM, floor):
        fail("carried + unserved %.17g != demand %.17g" % (tot_carried + tot_unserved, tot_rate))
    st = plan.get("status")
    if tot_rate <= 0:
        if st != "empty":
            fail("status %r with no demand" % st)
    elif tot_unserved > floor:
        if st != "partial":
            fail("status %r with %.17g bit/s unserved" % (st, tot_unserved))
    elif st != "optimal":
        fail("status %r with everything carried" % st)
    sl = set(plan.get("saturated_links", []))
    if sl != sat_arcs:
        fail("saturated_links %s, links with a saturated direction %s" % (sorted(sl)[:10], sorted(sat_arcs)[:10]))
    if st == "optimal" and sl:
        fail("status optimal but saturated links %s" % sorted(sl)[:10])
    if plan.get("revision") is not None and routes.get("revision") is not None \
            and routes["revision"] != plan["revision"]:
        fail("routes are of plan revision %s, plan %s" % (routes["revision"], plan["revision"]))
    if plan.get("revision") is not None and loads.get("revision") is not None \
            and loads["revision"] != plan["revision"]:
        fail("loads are of plan revision %s, plan %s" % (loads["revision"], plan["revision"]))
    if not math.isfinite(float(plan.get("solve_ms", 0))):
        fail("solve_ms is not finite")
    return fails
