# SPDX-License-Identifier: GPL-3.0-or-later
"""Independent references for what-if scenarios and survivability sweeps.

DESIGN.  A what-if (POST /v1/whatif, docs/api.md) plans a changed copy of
the model.  This module rebuilds that copy from the request alone, reading
the API description and nothing of weft's code:

  scenario(topology, demands, request) -> Scenario
      links failed by fail.links, by fail.nodes (every link of the node)
      and by fail.srlgs (every link in one of the groups), links[] changes
      (capacity, TE metric, state), add_links, and the demand rates times
      `scale`, then times each scale_demands factor whose from/to sets
      hold the demand's ends (absent: every node).

  reference(sc, policy) -> Ref
      networkx decides which demands are cut off (no path of up links
      joins their ends); the rest go to the node-arc LPs of
      tests/lib/refmodel.py, solved by scipy's HiGHS:
        U* = min max utilisation with all of it routed; when U* <= headroom
        everything fits: balance plans have max_utilization U*, cost plans
        the min-cost optimum under capacity x headroom;
        otherwise the lexicographic max carried traffic per priority class
        under capacity x headroom (admission), and the plan's largest
        utilisation is the headroom itself: a demand left partly unserved
        while it has a path has every path blocked by a direction loaded
        to capacity x headroom.

  check_reply(sc, policy, reply, ref, live) -> [(check, weft, ref, ok, note)]
      the reply against the reference and against itself: the rules of
      tests/lib/plancheck.py restated for the reply's per-link loads
      (loads within capacity x headroom, failed links empty, utilisation,
      max_utilization and total_cost recomputed, carried + unserved =
      demand), flow conservation at every node from the loads and the
      unserved list, cut_off and plan.explain against networkx, the
      compare block against the live plan, rising_links against the live
      loads.

Numbers: relative 1e-6 for optima (REL), 1e-9 for recomputed sums.
"""

import networkx as nx

import refmodel

REL = 1e-6
REL_SUM = 1e-9
ABS_BPS = 1e-3
REL_CAP = 1e-7


def _close(a, b, rel, abs_=0.0):
    return a is not None and b is not None and \
        abs(float(a) - float(b)) <= max(rel * max(abs(float(a)), abs(float(b))), abs_)


class Scenario:
    """nodes: [id]; links: {id: {a, b, capacity_bps, te_metric, up, srlgs, added}};
    order: link ids, topology order then added; demands: [(src, dst, rate, prio)];
    failed: link ids taken down by fail.*; down: every link not up."""

    def __init__(self):
        self.nodes = []
        self.links = {}
        self.order = []
        self.demands = []
        self.failed = set()
        self.added = []
        self.down = set()
        self.policy_override = {}
        self.matrix = None


def srlg_links(topology):
    """{srlg: set(link id)} from a topology's optional "srlgs" members."""
    out = {}
    for l in topology["links"]:
        for s in l.get("srlgs") or []:
            out.setdefault(int(s), set()).add(l["id"])
    return out


def failed_by(topology, fail):
    """The link ids a "fail" member takes down (docs: a failed node takes
    all its links down; an SRLG takes down every link in it)."""
    fail = fail or {}
    out = set(fail.get("links", []))
    nodes = set(fail.get("nodes", []))
    groups = srlg_links(topology)
    for l in topology["links"]:
        if l["a"] in nodes or l["b"] in nodes:
            out.add(l["id"])
    for s in fail.get("srlgs", []):
        out |= groups.get(int(s), set())
    return out


def scenario(topology, demands, request):
    """topology: GET /v1/topology; demands: the matrix planned (as in
    GET /v1/matrices/NAME); request: the what-if body."""
    sc = Scenario()
    sc.nodes = [n["id"] for n in topology["nodes"]]
    for l in topology["links"]:
        sc.links[l["id"]] = {"a": l["a"], "b": l["b"],
                             "capacity_bps": float(l["capacity_bps"]),
                             "te_metric": float(l["te_metric"]),
                             "up": l.get("state", "up") == "up",
                             "srlgs": list(l.get("srlgs") or []), "added": False}
        sc.order.append(l["id"])
    sc.failed = failed_by(topology, request.get("fail"))
    for lid in sc.failed:
        sc.links[lid]["up"] = False
    for ch in request.get("links", []):
        l = sc.links[ch["id"]]
        if "capacity_bps" in ch:
            l["capacity_bps"] = float(ch["capacity_bps"])
        if "te_metric" in ch:
            l["te_metric"] = float(ch["te_metric"])
        if "state" in ch:
            l["up"] = ch["state"] == "up" and ch["id"] not in sc.failed
    for nl in request.get("add_links", []):
        sc.links[nl["id"]] = {"a": nl["a"], "b": nl["b"],
                              "capacity_bps": float(nl["capacity_bps"]),
                              "te_metric": float(nl["te_metric"]),
                              "up": nl.get("state", "up") == "up",
                              "srlgs": list(nl.get("srlgs") or []), "added": True}
        sc.order.append(nl["id"])
        sc.added.append(nl["id"])
    sc.down = {lid for lid, l in sc.links.items() if not l["up"]}
    scale = float(request.get("scale", 1.0))
    known = set(sc.nodes)
    for d in demands:
        if d["src"] not in known or d["dst"] not in known:
            continue        # unplaced (docs: left out of the plan)
        r = float(d["rate_bps"]) * scale
        for sd in request.get("scale_demands", []):
            if ("from" not in sd or d["src"] in sd["from"]) and \
                    ("to" not in sd or d["dst"] in sd["to"]):
                r *= float(sd["factor"])
        sc.demands.append((d["src"], d["dst"], r, int(d.get("priority", 0))))
    sc.policy_override = dict(request.get("policy", {}))
    sc.matrix = request.get("matrix")
    return sc


def graph(sc):
    g = nx.Graph()
    g.add_nodes_from(sc.nodes)
    for l in sc.links.values():
        if l["up"]:
            g.add_edge(l["a"], l["b"])
    return g


class Ref:
    pass


def reference(sc, policy):
    """policy: the policy in force for the scenario (live policy with the
    request's overrides)."""
    h = float(policy.get("headroom", 1.0))
    obj = policy.get("objective", "balance")
    g = graph(sc)
    ref = Ref()
    ref.headroom = h
    ref.objective = obj
    ref.cut = [d for d in sc.demands if d[2] > 0 and not nx.has_path(g, d[0], d[1])]
    ref.conn = [d for d in sc.demands if d[2] > 0 and nx.has_path(g, d[0], d[1])]
    ref.demand_bps = sum(d[2] for d in sc.demands)
    ref.class_demand = {}
    for d in sc.demands:
        ref.class_demand[d[3]] = ref.class_demand.get(d[3], 0.0) + d[2]
    ref.ms = 0.0
    ref.ustar = 0.0
    ref.cost = None
    ref.cost_bracket = None
    ref.fits = True
    ref.carried_by_class = {}
    if ref.conn:
        arcs = []
        for lid in sc.order:
            l = sc.links[lid]
            if l["up"]:
                arcs.append((l["a"], l["b"], l["capacity_bps"], l["te_metric"], lid))
                arcs.append((l["b"], l["a"], l["capacity_bps"], l["te_metric"], lid))
        pb = refmodel.Problem(sc.nodes, arcs, ref.conn)
        ref.ustar, _ = refmodel.min_max_util(pb)
        ref.ms += pb.last_ms
        ref.fits = ref.ustar <= h * (1 + 1e-9)
        if ref.fits:
            for d in ref.conn:
                ref.carried_by_class[d[3]] = ref.carried_by_class.get(d[3], 0.0) + d[2]
            if obj == "cost":
                ref.cost, _ = refmodel.min_cost(pb, h)
                ref.ms += pb.last_ms
            elif obj == "balance":
                tol = float(policy.get("balance_tolerance", 1e-7))
                lo, _ = refmodel.min_cost(pb, ref.ustar * (1 + tol))
                ref.ms += pb.last_ms
                hi, _ = refmodel.min_cost(pb, ref.ustar)
                ref.ms += pb.last_ms
                ref.cost_bracket = (lo, hi)
        else:
            ref.carried_by_class = refmodel.max_carried(pb, h)
            ref.ms += pb.last_ms
    ref.carried = sum(ref.carried_by_class.values())
    return ref


def _arc_loads(sc, reply_links):
    """{(link, "a_to_b"|"b_to_a"): load} from the reply's links, plus the
    failures of the shape check."""
    out = {}
    bad = []
    seen = set()
    for e in reply_links:
        lid = e.get("link", e.get("id"))
        if lid not in sc.links:
            bad.append("links: unknown link %r" % lid)
            continue
        if lid in seen:
            bad.append("links: %s twice" % lid)
        seen.add(lid)
        for d in ("a_to_b", "b_to_a"):
            out[(lid, d)] = float(e[d]["load_bps"])
    missing = [lid for lid in sc.order if lid not in seen]
    if missing:
        bad.append("links: %d scenario links missing, e.g. %s" % (len(missing), missing[:3]))
    return out, bad


def summary_rows(p, ref):
    """A plan summary (or a sweep result) against the references: rows
    (check, weft, reference, ok, note)."""
    rows = []

    def row(check, weft, want, ok, note=""):
        rows.append((check, weft, want, bool(ok), note))

    h = ref.headroom
    tot = ref.demand_bps
    floor = max(ABS_BPS, REL_SUM * tot)
    carried = p.get("carried_bps")
    # Reference: HiGHS (U* and, when it does not fit, lexicographic max carried).
    row("carried_bps == HiGHS", carried, ref.carried,
        _close(carried, ref.carried, REL, max(floor, 1e-7 * tot)))
    ubp = p.get("unserved_by_priority")
    if ubp is not None and (len(ref.class_demand) > 1 or not ref.fits):
        for k in sorted(ref.class_demand):
            got = ref.class_demand[k] - float(ubp.get(str(k), float("nan")))
            # Reference: HiGHS lexicographic max carried, per class.
            row("class %d carried == HiGHS" % k, got, ref.carried_by_class.get(k, 0.0),
                _close(got, ref.carried_by_class.get(k, 0.0), REL, max(floor, 1e-7 * tot)))
    mu = p.get("max_utilization")
    if ref.fits and ref.objective == "balance":
        # Reference: HiGHS U*, min max utilisation (node-arc LP).
        row("max_utilization == HiGHS U*", mu, ref.ustar, _close(mu, ref.ustar, REL, 1e-12))
        if ref.cost_bracket is not None:
            lo, hi = ref.cost_bracket
            tc = p.get("total_cost")
            # Reference: HiGHS min cost at caps c U* (1 + tol) and c U*.
            row("total_cost in HiGHS [cost at U*(1+tol), at U*]", tc,
                "[%.10g, %.10g]" % (lo, hi),
                tc is not None and lo * (1 - REL) - 1e-6 <= tc <= hi * (1 + REL) + 1e-6)
    elif ref.fits and ref.objective == "cost":
        # Reference: HiGHS min cost under capacity x headroom.
        row("total_cost == HiGHS min cost", p.get("total_cost"), ref.cost,
            _close(p.get("total_cost"), ref.cost, REL, 1e-6))
        row("max_utilization <= headroom", mu, h,
            mu is not None and mu <= h * (1 + REL_CAP) + 1e-12)
    elif not ref.fits:
        # Reference: the admission argument in the DESIGN above (some
        # direction sits at capacity x headroom).
        row("max_utilization == headroom (traffic left unserved)", mu, h,
            mu is not None and h * (1 - REL) <= mu <= h * (1 + REL_CAP) + 1e-12)
    return rows


def check_reply(sc, policy, reply, ref, live=None, live_loads=None):
    """Returns rows (check, weft, reference, ok, note).  live: GET /v1/plan
    of the live plan; live_loads: GET /v1/plan/loads."""
    rows = []

    def row(check, weft, want, ok, note=""):
        rows.append((check, weft, want, bool(ok), note))

    h = ref.headroom
    p = reply.get("plan", {})
    tot = ref.demand_bps
    floor = max(ABS_BPS, REL_SUM * tot)

    rows.extend(summary_rows(p, ref))
    carried = p.get("carried_bps")
    mu = p.get("max_utilization")

    # ---- the reply's loads, plancheck's rules ----
    loads, bad = _arc_loads(sc, reply.get("links", []))
    umax = 0.0
    cost = 0.0
    out_minus_in = {v: 0.0 for v in sc.nodes}
    for e in reply.get("links", []):
        lid = e.get("link", e.get("id"))
        l = sc.links.get(lid)
        if l is None:
            continue
        cap = l["capacity_bps"] if l["up"] else 0.0
        for d, (x, y) in (("a_to_b", (l["a"], l["b"])), ("b_to_a", (l["b"], l["a"]))):
            load = float(e[d]["load_bps"])
            if load < -ABS_BPS:
                bad.append("%s %s negative load %.17g" % (lid, d, load))
            if not l["up"] and abs(load) > ABS_BPS:
                bad.append("%s %s is down in the scenario but carries %.17g" % (lid, d, load))
            if load > cap * h * (1 + REL_CAP) + ABS_BPS:
                bad.append("%s %s load %.17g above capacity x headroom %.17g"
                           % (lid, d, load, cap * h))
            if cap > 0:
                u = load / cap
                umax = max(umax, u)
                if "utilization" in e[d] and not _close(e[d]["utilization"], u, 1e-9, 1e-12):
                    bad.append("%s %s utilization %.17g, load/capacity %.17g"
                               % (lid, d, e[d]["utilization"], u))
            cost += l["te_metric"] * load
            out_minus_in[x] += load
            out_minus_in[y] -= load
    if mu is None or not _close(mu, umax, 1e-9, 1e-12):
        bad.append("plan max_utilization %r, recomputed from links %.17g" % (mu, umax))
    if not _close(p.get("total_cost"), cost, 1e-9, 1e-6):
        bad.append("plan total_cost %r, sum of TE metric x load %.17g" % (p.get("total_cost"), cost))
    if not _close(p.get("demand_bps"), tot, REL_SUM, floor):
        bad.append("plan demand_bps %r, scenario demand %.17g" % (p.get("demand_bps"), tot))
    un = p.get("unserved_bps")
    if carried is None or un is None or not _close(carried + un, tot, REL_SUM, floor):
        bad.append("carried %r + unserved %r != demand %.17g" % (carried, un, tot))
    st = p.get("status")
    want_st = "empty" if tot <= 0 else ("partial" if (un or 0) > floor else "optimal")
    if st != want_st:
        bad.append("status %r, want %r (unserved %r)" % (st, want_st, un))
    row("links: plancheck rules (within capacity x headroom, down links empty, sums)",
        "%d fail" % len(bad), "0 fail", not bad, "; ".join(bad[:4]))

    # ---- scenario block ----
    s = reply.get("scenario", {})
    bad = []
    fl = set(s.get("failed_links", []))
    if fl != sc.failed:
        bad.append("failed_links %s, want %s" % (sorted(fl)[:6], sorted(sc.failed)[:6]))
    if set(s.get("added_links", [])) != set(sc.added):
        bad.append("added_links %r, want %r" % (s.get("added_links"), sc.added))
    if not _close(s.get("demand_bps"), tot, REL_SUM, floor):
        bad.append("scenario demand_bps %r, want %.17g" % (s.get("demand_bps"), tot))
    row("scenario block == request expanded", "%d fail" % len(bad), "0 fail", not bad,
        "; ".join(bad[:3]))

    # ---- unserved demands, cut_off (networkx) and flow conservation ----
    g = graph(sc)
    ud = reply.get("unserved_demands", [])
    total_ud = reply.get("unserved_demands_total")
    bad = []
    if total_ud is None or total_ud < len(ud) or (len(ud) < 1000 and total_ud != len(ud)):
        bad.append("unserved_demands_total %r with %d listed" % (total_ud, len(ud)))
    prev = float("inf")
    by_key = {}
    for e in ud:
        x = float(e["unserved_bps"])
        if x > prev * (1 + 1e-12):
            bad.append("unserved_demands not most unserved first (%g after %g)" % (x, prev))
        prev = x
        if x > float(e["rate_bps"]) * (1 + REL_SUM) + ABS_BPS or x <= 0:
            bad.append("%s->%s unserved %g of rate %g" % (e["src"], e["dst"], x, e["rate_bps"]))
        # Reference: networkx.has_path on the scenario's up links.
        conn = nx.has_path(g, e["src"], e["dst"]) if e["src"] in g and e["dst"] in g else False
        if bool(e.get("cut_off")) != (not conn):
            bad.append("%s->%s cut_off %r, networkx has_path %r" % (e["src"], e["dst"], e.get("cut_off"), conn))
        if not conn and not _close(x, e["rate_bps"], REL_SUM, ABS_BPS):
            bad.append("%s->%s cut off but only %g of %g unserved" % (e["src"], e["dst"], x, e["rate_bps"]))
        k = (e["src"], e["dst"], int(e["priority"]))
        by_key[k] = by_key.get(k, 0.0) + x
    complete = total_ud is not None and total_ud == len(ud)
    if complete:
        s_ud = sum(by_key.values())
        if not _close(s_ud, un or 0.0, REL_SUM * 10, floor):
            bad.append("unserved_demands sum %.17g, plan unserved_bps %r" % (s_ud, un))
        for d in ref.cut:
            if (d[0], d[1], d[3]) not in by_key:
                bad.append("cut-off demand %s->%s (networkx) not in unserved_demands" % d[:2])
        # Flow conservation (Kirchhoff): out - in at v = carried from v -
        # carried to v, with carried = rate - unserved.
        net = {v: 0.0 for v in sc.nodes}
        for src, dst, r, _ in sc.demands:
            net[src] += r
            net[dst] -= r
        for (src, dst, _), x in by_key.items():
            if src in net:
                net[src] -= x
            if dst in net:
                net[dst] += x
        tol = max(1e-7 * tot, 1.0)
        worst = max(((abs(out_minus_in[v] - net[v]), v) for v in sc.nodes), default=(0.0, None))
        if worst[0] > tol:
            v = worst[1]
            bad.append("flow conservation at %s: links out - in %.17g, carried out - in %.17g"
                       % (v, out_minus_in[v], net[v]))
    row("unserved_demands: cut_off == networkx, conservation", "%d fail" % len(bad), "0 fail",
        not bad, "; ".join(bad[:3]))

    # ---- plan.explain ----
    ex = p.get("explain")
    if (un or 0) > floor or ref.cut:
        bad = []
        if not isinstance(ex, dict):
            bad.append("no explain with %r bit/s unserved" % un)
        else:
            got = sorted((c["src"], c["dst"], int(c["priority"]), round(float(c["rate_bps"]), 3))
                         for c in ex.get("cut_off", []))
            want = sorted((d[0], d[1], d[3], round(d[2], 3)) for d in ref.cut)
            if len(want) <= 1000 and [x[:3] for x in got] != [x[:3] for x in want]:
                bad.append("explain.cut_off %s, networkx %s" % (got[:4], want[:4]))
            elif any(not _close(a[3], b[3], REL_SUM, ABS_BPS) for a, b in zip(got, want)):
                bad.append("explain.cut_off rates %s, want %s" % (got[:4], want[:4]))
            if ex.get("cut_off_total") != len(ref.cut):
                bad.append("cut_off_total %r, networkx %d" % (ex.get("cut_off_total"), len(ref.cut)))
            if not _close(ex.get("cut_off_bps", 0.0), sum(d[2] for d in ref.cut), REL_SUM, floor):
                bad.append("cut_off_bps %r, want %.17g" % (ex.get("cut_off_bps"), sum(d[2] for d in ref.cut)))
            bn = ex.get("bottleneck", [])
            prev = float("inf")
            for b in bn:
                lid = b["link"]
                l = sc.links.get(lid)
                if l is None or not l["up"]:
                    bad.append("bottleneck %r is not an up link" % lid)
                    continue
                if (b["from"], b["to"]) == (l["a"], l["b"]):
                    d = "a_to_b"
                elif (b["from"], b["to"]) == (l["b"], l["a"]):
                    d = "b_to_a"
                else:
                    bad.append("bottleneck %s %s->%s does not match its ends" % (lid, b["from"], b["to"]))
                    continue
                sp_ = float(b["shadow_price"])
                if not sp_ > 0 or sp_ > prev * (1 + 1e-12):
                    bad.append("bottleneck shadow prices not positive, largest first: %r" % sp_)
                prev = sp_
                # Complementary slackness (LP duality): a positive dual
                # needs its capacity row tight.
                load = loads.get((lid, d), 0.0)
                if load < l["capacity_bps"] * h * (1 - REL) - ABS_BPS:
                    bad.append("bottleneck %s %s load %.17g below capacity x headroom %.17g"
                               % (lid, d, load, l["capacity_bps"] * h))
            # LP duality: connected traffic left unserved needs a positive
            # capacity dual somewhere.
            if not ref.fits and not bn:
                bad.append("traffic with a path left unserved, but no bottleneck")
        row("plan.explain: cut_off == networkx, bottlenecks tight", "%d fail" % len(bad),
            "0 fail", not bad, "; ".join(bad[:3]))

    # ---- compare and rising_links, against the live plan ----
    if live is not None:
        bad = []
        cp = reply.get("compare", {})
        for f in ("max_utilization", "total_cost", "carried_bps", "unserved_bps"):
            if not _close(cp.get("live", {}).get(f), live.get(f), 1e-12, 1e-9):
                bad.append("compare.live.%s %r, live plan %r" % (f, cp.get("live", {}).get(f), live.get(f)))
            if not _close(cp.get("scenario", {}).get(f), p.get(f), 1e-12, 1e-9):
                bad.append("compare.scenario.%s %r, plan %r" % (f, cp.get("scenario", {}).get(f), p.get(f)))
        mv = cp.get("moved_bps")
        if mv is None or not (mv == -1 or mv >= -ABS_BPS):
            bad.append("moved_bps %r" % mv)
        if live_loads is not None:
            lu = {}
            for e in live_loads["links"]:
                for d in ("a_to_b", "b_to_a"):
                    lu[(e["id"], d)] = float(e[d]["utilization"])
            su = {}
            for lid, l in sc.links.items():
                if l["up"] and l["capacity_bps"] > 0 and not l["added"]:
                    for d in ("a_to_b", "b_to_a"):
                        su[(lid, d)] = loads.get((lid, d), 0.0) / l["capacity_bps"]
            rl = reply.get("rising_links", [])
            if len(rl) > 10:
                bad.append("%d rising_links" % len(rl))
            prev = float("inf")
            listed = set()
            for r in rl:
                l = sc.links.get(r["link"])
                if l is None or r["link"] in sc.failed:
                    bad.append("rising link %r failed or unknown" % r["link"])
                    continue
                d = "a_to_b" if (r["from"], r["to"]) == (l["a"], l["b"]) else "b_to_a"
                listed.add((r["link"], d))
                if not _close(r["rise"], r["utilization"] - r["live_utilization"], 1e-9, 1e-12):
                    bad.append("rise %r != %r - %r" % (r["rise"], r["utilization"], r["live_utilization"]))
                if (r["link"], d) in lu and not _close(r["live_utilization"], lu[(r["link"], d)], 1e-9, 1e-12):
                    bad.append("%s live_utilization %r, live loads %r" % (r["link"], r["live_utilization"], lu[(r["link"], d)]))
                if (r["link"], d) in su and not _close(r["utilization"], su[(r["link"], d)], 1e-9, 1e-12):
                    bad.append("%s utilization %r, links[] %r" % (r["link"], r["utilization"], su[(r["link"], d)]))
                if r["rise"] > prev * (1 + 1e-12) + 1e-15:
                    bad.append("rising_links not largest rise first")
                prev = r["rise"]
            if len(rl) == 10:
                least = min(r["rise"] for r in rl)
                for k, u in su.items():
                    if k not in listed and k in lu and u - lu[k] > least + 1e-9:
                        bad.append("%s %s rises %.6g, more than listed %.6g" % (k[0], k[1], u - lu[k], least))
                        break
        row("compare and rising_links == live plan", "%d fail" % len(bad), "0 fail", not bad,
            "; ".join(bad[:3]))
    return rows
