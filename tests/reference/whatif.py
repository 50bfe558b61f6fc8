# SPDX-License-Identifier: GPL-3.0-or-later
"""What-ifs and survivability sweeps through the daemon, against HiGHS and networkx.

DESIGN.  Starts one real weftd (tests/lib/weftd.py) on 127.0.0.1 and, for
each instance of INSTANCES: imports the SNDlib file, multiplies every
capacity by the instance's factor, gives a few links SRLGs (GET
/v1/topology, add "srlgs", PUT it back), stores a second matrix and sets
the live policy.  Then a seeded sample of scenarios is sent to
POST /v1/whatif: the network itself, single link failures, a node failure,
a link pair, the two links of a node of degree 2 (cut off), an SRLG
failure, scale 1.3 and 0.5, scale_demands between chosen sites, a capacity
and TE metric change, a link set down, an added link, a combined scenario
with a policy override, the other matrix and the other objective.  For each:

  - carried traffic (per priority class when classes differ or traffic is
    left unserved), max_utilization (balance) or total_cost (cost) against
    the node-arc LPs of tests/lib/refmodel.py solved by scipy's HiGHS on
    the scenario network, rebuilt from the request by
    tests/lib/scenario_ref.py (its DESIGN gives the references);
  - unserved_demands[].cut_off and plan.explain.cut_off against
    networkx.has_path on the scenario's up links;
  - the reply's link loads by the rules of tests/lib/plancheck.py, and
    flow conservation at every node (Kirchhoff) from loads and unserved;
  - nothing changes: GET /v1/health revisions and the GET /v1/plan text
    are the same before and after.

When the live plan leaves traffic unserved (geant), its explain: nothing
cut off (networkx), every bottleneck tight in GET /v1/plan/loads.

On abilene survivability sweeps of the four kinds, "links", "nodes",
"srlgs" and "link-pairs"; "links" on polska and germany50, "nodes" on
geant (every scenario through admission).  Every scenario's result
against HiGHS as above; total against the family's size (links, nodes, distinct SRLGs,
n(n-1)/2); the report against the results (docs/api.md: unserved worst
first, worst_max_utilization, needed_capacity_bps = worst_load_bps /
headroom, worst_index a scenario that does not fail the link);
results.csv and links.csv read by Python's csv module (RFC 4180) against
the JSON.

Before any of it, a self-test runs the references and the reply checker on
a four-site network whose optima are derived by hand, and shows the
checker rejects corrupted replies.

Relative tolerance 1e-6 for optima.  Exits 0 when every check passed, 1
when one failed, 2 when the daemon could not be run, 3 when the daemon
does not serve POST /v1/whatif (404/405) or refuses link SRLGs: a
failure too, reported apart.  About 35 s on two cores.

Usage: whatif.py [instance ...]   (environment: WEFTD, WEFT_SNDLIB_DIR)
"""
import copy
import csv
import io
import json
import os
import random
import signal
import sys
import time
import traceback

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.dirname(os.path.dirname(HERE))
sys.path.insert(0, os.path.join(ROOT, "tests", "lib"))
sys.path.insert(0, HERE)

import scenario_ref  # noqa: E402
from weftd import Daemon  # noqa: E402

DATA = os.environ.get("WEFT_SNDLIB_DIR", os.path.join(ROOT, "tests", "data", "sndlib"))
REL = 1e-6
MATRIX = "ref"
ALT = "alt"
TIMEOUT = 120.0          # one request or one plan, seconds
SWEEP_TIMEOUT = 180.0    # one sweep, seconds
TOTAL_TIMEOUT = 580      # the whole script (run.py gives it 600)
SRLG_IDS = (7, 12, 300, 4294967295)

# name, capacity factor (applied to the file's capacities), live policy,
# two priority classes, sweeps.  The factors put U* of the base network
# near 0.6-0.75 (abilene U* 60.4, polska 6.42, nobel-eu 10.7, germany50
# 3.24 at x 1; HiGHS); geant stays at x 1 (U* 9.2), so every scenario
# there goes through admission.
INSTANCES = (
    ("abilene", 80.0, {"objective": "balance", "headroom": 0.9}, False,
     ("links", "nodes", "srlgs", "link-pairs")),
    ("polska", 10.0, {"objective": "balance", "headroom": 0.8}, False, ("links",)),
    ("nobel-eu", 15.0, {"objective": "cost", "headroom": 1.0}, False, ()),
    ("geant", 1.0, {"objective": "balance", "headroom": 1.0}, False, ("nodes",)),
    ("germany50", 5.0, {"objective": "balance", "headroom": 1.0}, True, ("links",)),
)


class NotServed(Exception):
    pass


class Overtime(Exception):
    pass


def _json(r, what):
    if r.status // 100 != 2:
        raise RuntimeError("%s: HTTP %d %s" % (what, r.status, r.body[:300]))
    return r.json() if r.body else {}


class Rows:
    """Check rows: (instance, group, check, weft, reference, ok, note)."""

    def __init__(self):
        self.rows = []

    def add(self, inst, group, check, weft, ref, ok, note=""):
        self.rows.append((inst, group, check, weft, ref, bool(ok), note))

    def group(self, inst, group, rows):
        for r in rows:
            self.add(inst, group, *r)
        self.show(inst, group, len(rows), [r for r in rows if not r[3]])

    def show(self, inst, group, n, bad):
        if not bad:
            print("  [ok]   %-9s %-58s %d checks" % (inst, group, n), flush=True)
            return
        print("  [FAIL] %-9s %-58s %d of %d checks failed" % (inst, group, len(bad), n), flush=True)
        for check, weft, ref, _, note in bad[:8]:
            print("           %s: weft=%s ref=%s%s" % (check, _fmt(weft), _fmt(ref),
                                                     ("  (" + note + ")") if note else ""))

    def failed(self):
        return [r for r in self.rows if not r[5]]


def _fmt(v):
    if isinstance(v, float):
        return "%.10g" % v
    return str(v)


# ---- self-test: the references on hand-derived optima ----------------------

def selftest(rows):
    """The four-site network (tests/integration/run.py's hand derivation):
    A-B-D over L_AB, L_BD (10G each, metric 1), A-C-D over L_AC, L_CD (10G,
    metric 2); one demand A -> D of 15G.

      - L_AB failed: only A-C-D, 10G; 15G does not fit (U* = 1.5): 10G
        carried, max utilisation = headroom 1.
      - L_AB failed, scale 0.5: 7.5G on A-C-D: U* = 0.75, cost 7.5G x 4 = 30e9.
      - node B and L_AC failed: A and D are not connected: 15G cut off.
      - nothing failed, balance: U* = 15 / 20 = 0.75 (the cut around A).
      - scale_demands from A to D x 2: 30G on 20G of cut: U* = 1.5.
      - L_AB in SRLG 5, L_CD in SRLGs 5 and 6: SRLG 6 takes L_CD only.
    """
    topo = {"nodes": [{"id": x} for x in "ABCD"], "links": [
        {"id": "L_AB", "a": "A", "b": "B", "capacity_bps": 1e10, "te_metric": 1, "srlgs": [5]},
        {"id": "L_BD", "a": "B", "b": "D", "capacity_bps": 1e10, "te_metric": 1},
        {"id": "L_AC", "a": "A", "b": "C", "capacity_bps": 1e10, "te_metric": 2},
        {"id": "L_CD", "a": "C", "b": "D", "capacity_bps": 1e10, "te_metric": 2, "srlgs": [5, 6]}]}
    dem = [{"src": "A", "dst": "D", "rate_bps": 15e9, "priority": 0}]
    cost = {"objective": "cost", "headroom": 1.0}
    bal = {"objective": "balance", "headroom": 1.0}
    out = []

    def near(name, got, want):
        out.append((name, got, want, abs(got - want) <= 1e-9 * max(abs(want), 1.0), "hand-derived"))

    sc = scenario_ref.scenario(topo, dem, {"fail": {"links": ["L_AB"]}})
    r = scenario_ref.reference(sc, cost)
    out.append(("L_AB failed: does not fit", r.fits, False, r.fits is False, "hand-derived"))
    near("L_AB failed: HiGHS max carried", r.carried, 10e9)
    sc = scenario_ref.scenario(topo, dem, {"fail": {"links": ["L_AB"]}, "scale": 0.5})
    r = scenario_ref.reference(sc, cost)
    near("L_AB failed, x 0.5: HiGHS U*", r.ustar, 0.75)
    near("L_AB failed, x 0.5: HiGHS min cost", r.cost, 30e9)
    good_ref = r
    good_sc = sc
    sc = scenario_ref.scenario(topo, dem, {"fail": {"nodes": ["B"], "links": ["L_AC"]}})
    r = scenario_ref.reference(sc, cost)
    out.append(("B and L_AC failed: networkx cut off", len(r.cut), 1, len(r.cut) == 1, "hand-derived"))
    near("B and L_AC failed: carried", r.carried, 0.0)
    r = scenario_ref.reference(scenario_ref.scenario(topo, dem, {}), bal)
    near("base: HiGHS U*", r.ustar, 0.75)
    sc = scenario_ref.scenario(topo, dem, {"scale_demands": [{"from": ["A"], "to": ["D"], "factor": 2}]})
    near("scale_demands A->D x 2: demand", sc.demands[0][2], 30e9)
    near("scale_demands A->D x 2: HiGHS U*", scenario_ref.reference(sc, bal).ustar, 1.5)
    sc = scenario_ref.scenario(topo, dem, {"scale_demands": [{"from": ["B"], "factor": 2}]})
    near("scale_demands from B only: demand unchanged", sc.demands[0][2], 15e9)
    sc = scenario_ref.scenario(topo, dem, {"fail": {"srlgs": [6]}})
    out.append(("SRLG 6 takes L_CD only", sorted(sc.failed), ["L_CD"], sorted(sc.failed) == ["L_CD"],
                "hand-derived"))

    # The reply checker accepts a correct reply and rejects corrupted ones.
    def arc(load):
        return {"load_bps": load, "utilization": load / 1e10}
    plan = {"status": "optimal", "max_utilization": 0.75, "total_cost": 30e9, "demand_bps": 7.5e9,
            "carried_bps": 7.5e9, "unserved_bps": 0.0,
            "unserved_by_priority": {str(k): 0.0 for k in range(8)}}
    reply = {"scenario": {"failed_links": ["L_AB"], "added_links": [], "demand_bps": 7.5e9},
             "plan": plan, "unserved_demands": [], "unserved_demands_total": 0, "rising_links": [],
             "links": [{"link": "L_AB", "a_to_b": arc(0.0), "b_to_a": arc(0.0)},
                       {"link": "L_BD", "a_to_b": arc(0.0), "b_to_a": arc(0.0)},
                       {"link": "L_AC", "a_to_b": arc(7.5e9), "b_to_a": arc(0.0)},
                       {"link": "L_CD", "a_to_b": arc(7.5e9), "b_to_a": arc(0.0)}]}
    res = scenario_ref.check_reply(good_sc, cost, reply, good_ref)
    bad = [x for x in res if not x[3]]
    out.append(("checker accepts a correct reply", len(bad), 0, not bad, "; ".join(x[0] for x in bad)))
    corrupt = (
        ("load on the failed link", lambda x: x["links"][0]["a_to_b"].update(load_bps=1e9, utilization=0.1)),
        ("load over capacity", lambda x: x["links"][2]["a_to_b"].update(load_bps=1.2e10, utilization=1.2)),
        ("carried off the optimum", lambda x: x["plan"].update(carried_bps=7e9, unserved_bps=5e8)),
        ("flow not conserved", lambda x: x["links"][3]["a_to_b"].update(load_bps=5e9, utilization=0.5)),
        ("cut_off wrong", lambda x: x.update(unserved_demands=[
            {"src": "A", "dst": "D", "priority": 0, "rate_bps": 7.5e9, "unserved_bps": 1.0, "cut_off": True}],
            unserved_demands_total=1)),
        ("failed_links wrong", lambda x: x["scenario"].update(failed_links=[])),
    )
    for name, fn in corrupt:
        x = copy.deepcopy(reply)
        fn(x)
        res = scenario_ref.check_reply(good_sc, cost, x, good_ref)
        nbad = sum(1 for y in res if not y[3])
        out.append(("checker rejects: " + name, nbad, ">0", nbad > 0, ""))
    rows.group("selftest", "references and checker on hand-derived optima", out)


# ---- one instance -------------------------------------------------------------

class Inst:
    def __init__(self, d, rows, name):
        self.d = d
        self.rows = rows
        self.name = name
        self.matrices = {}

    def get(self, path):
        return _json(self.d.get(path, timeout=TIMEOUT), "GET " + path)

    def demands(self, name):
        if name not in self.matrices:
            self.matrices[name] = self.get("/v1/matrices/" + name)["demands"]
        return self.matrices[name]

    def state(self):
        """What a what-if or a sweep must leave alone."""
        h = self.get("/v1/health")
        plan = self.d.get("/v1/plan", timeout=TIMEOUT).body
        return (h["model_revision"], h["plan_revision"], plan)


def setup(inst, factor, policy, classes, rng):
    d = inst.d
    body = open(os.path.join(DATA, inst.name + ".txt"), "rb").read()
    _json(d.request("POST", "/v1/import?format=sndlib&matrix=" + MATRIX, body,
                    ctype="text/plain", timeout=TIMEOUT), "import " + inst.name)
    topo = inst.get("/v1/topology")
    for l in topo["links"]:
        l["capacity_bps"] = l["capacity_bps"] * factor
    # SRLGs: each id on 2 or 3 links drawn at random; the first link of
    # the first group also joins the second group.
    ids = [l["id"] for l in topo["links"]]
    groups = {}
    for k, s in enumerate(SRLG_IDS):
        groups[s] = rng.sample(ids, 2 + k % 2)
    groups[SRLG_IDS[1]].append(groups[SRLG_IDS[0]][0])
    by = {l["id"]: l for l in topo["links"]}
    for s, members in groups.items():
        for lid in members:
            by[lid].setdefault("srlgs", [])
            if s not in by[lid]["srlgs"]:
                by[lid]["srlgs"].append(s)
    r = d.put("/v1/topology", topo, timeout=TIMEOUT)
    if r.status == 400 and b"srlgs" in r.body:
        raise NotServed("PUT /v1/topology with link srlgs: HTTP 400 %s" % r.body[:200])
    _json(r, "PUT /v1/topology with srlgs")
    m = inst.get("/v1/matrices/" + MATRIX)["demands"]
    if classes:
        for i, x in enumerate(m):
            x["priority"] = i % 2
        _json(d.put("/v1/matrices/" + MATRIX, {"demands": m}, timeout=TIMEOUT), "PUT matrix classes")
    alt = [{"src": x["dst"], "dst": x["src"], "rate_bps": x["rate_bps"] * 0.7,
            "priority": x.get("priority", 0)} for x in m[::2]]
    _json(d.put("/v1/matrices/" + ALT, {"demands": alt}, timeout=TIMEOUT), "PUT matrix alt")
    pol = dict(policy, matrix=MATRIX)
    rev = _json(d.put("/v1/policy", pol, timeout=TIMEOUT), "PUT /v1/policy")["model_revision"]
    d.wait_plan(rev, timeout=TIMEOUT, verify=True)
    got = inst.get("/v1/topology")
    # Reference: the SRLGs we put (the topology's "srlgs" member round trip).
    back = {l["id"]: sorted(l.get("srlgs") or []) for l in got["links"]}
    want = {l["id"]: sorted(l.get("srlgs") or []) for l in topo["links"]}
    inst.rows.group(inst.name, "topology srlgs round trip", [
        ("GET /v1/topology srlgs == PUT", sum(1 for k in want if back.get(k) != want[k]),
         0, back == want, "")])
    return got, groups


def scenarios(topo, groups, rng, live_policy):
    """A seeded sample of what-if requests: (label, body)."""
    links = topo["links"]
    ids = [l["id"] for l in links]
    nodes = [n["id"] for n in topo["nodes"]]
    adj = {}
    for l in links:
        adj.setdefault(l["a"], []).append(l["id"])
        adj.setdefault(l["b"], []).append(l["id"])
        adj.setdefault((l["a"], l["b"]), 1)
        adj.setdefault((l["b"], l["a"]), 1)
    out = [("network as is", {})]
    for lid in rng.sample(ids, 3):
        out.append(("fail link %s" % lid, {"fail": {"links": [lid]}}))
    n = rng.choice(nodes)
    out.append(("fail node %s" % n, {"fail": {"nodes": [n]}}))
    pair = rng.sample(ids, 2)
    out.append(("fail links %s" % "+".join(pair), {"fail": {"links": pair}}))
    deg2 = [v for v in nodes if len(adj.get(v, [])) == 2]
    if deg2:
        v = rng.choice(deg2)
        out.append(("fail both links of %s (cut off)" % v, {"fail": {"links": adj[v]}}))
    s = rng.choice(sorted(groups))
    out.append(("fail srlg %d" % s, {"fail": {"srlgs": [s]}}))
    out.append(("scale 1.3", {"scale": 1.3}))
    out.append(("scale 0.5", {"scale": 0.5}))
    src = rng.sample(nodes, 3)
    rest = [v for v in nodes if v not in src]
    dst = rng.sample(nodes, 3)
    out.append(("scale_demands %s->%s x2.5, from %s x0" % (",".join(src), ",".join(dst), rest[0]),
                {"scale_demands": [{"from": src, "to": dst, "factor": 2.5},
                                   {"from": [rest[0]], "factor": 0}]}))
    l = rng.choice(links)
    out.append(("link %s capacity /2, metric 7" % l["id"],
                {"links": [{"id": l["id"], "capacity_bps": l["capacity_bps"] / 2, "te_metric": 7}]}))
    l2 = rng.choice(links)
    out.append(("link %s state down" % l2["id"], {"links": [{"id": l2["id"], "state": "down"}]}))
    far = [(u, v) for u in nodes for v in nodes if u < v and (u, v) not in adj]
    u, v = rng.choice(far)
    caps = sorted(x["capacity_bps"] for x in links)
    out.append(("add link %s-%s" % (u, v),
                {"add_links": [{"id": "wi-new-1", "a": u, "b": v,
                                "capacity_bps": caps[len(caps) // 2], "te_metric": 1,
                                "srlgs": [SRLG_IDS[0]]}]}))
    lid = rng.choice(ids)
    h = float(live_policy["headroom"]) * 0.9
    out.append(("fail %s, scale 1.2, headroom %.2f" % (lid, h),
                {"fail": {"links": [lid]}, "scale": 1.2, "policy": {"headroom": h}}))
    out.append(("matrix %s" % ALT, {"matrix": ALT}))
    other = "cost" if live_policy["objective"] == "balance" else "balance"
    out.append(("objective %s" % other, {"policy": {"objective": other}}))
    return out


def check_live_explain(inst, topo, live, live_loads, policy):
    """GET /v1/plan's explain (docs/api.md: present when traffic is left
    unserved).  On the whole network networkx finds every demand's ends
    joined, so nothing is cut off; each bottleneck direction is loaded to
    capacity x headroom in GET /v1/plan/loads (complementary slackness:
    a positive dual needs a tight row)."""
    if not live.get("unserved_bps", 0) > 0:
        return
    sc = scenario_ref.scenario(topo, inst.demands(policy["matrix"]), {})
    g = scenario_ref.graph(sc)
    cut = [x for x in sc.demands if x[2] > 0 and not scenario_ref.nx.has_path(g, x[0], x[1])]
    ex = live.get("explain")
    out = [("explain present with traffic unserved", ex is not None, True, isinstance(ex, dict), "")]
    if isinstance(ex, dict):
        out.append(("explain.cut_off == networkx", ex.get("cut_off_total"), len(cut),
                    ex.get("cut_off_total") == len(cut) and len(ex.get("cut_off", [])) == len(cut), ""))
        h = float(policy["headroom"])
        arc = {}
        for e in live_loads["links"]:
            arc[(e["id"], e["a"], e["b"])] = (float(e["a_to_b"]["load_bps"]), float(e["capacity_bps"]))
            arc[(e["id"], e["b"], e["a"])] = (float(e["b_to_a"]["load_bps"]), float(e["capacity_bps"]))
        bad = []
        bn = ex.get("bottleneck", [])
        if not bn:
            bad.append("no bottleneck")
        for b in bn:
            k = (b["link"], b["from"], b["to"])
            if k not in arc:
                bad.append("bottleneck %s %s->%s is no link direction" % k)
            elif arc[k][0] < arc[k][1] * h * (1 - REL) or not b["shadow_price"] > 0:
                bad.append("bottleneck %s %s->%s load %.17g of capacity x headroom %.17g, price %r"
                           % (k + (arc[k][0], arc[k][1] * h, b["shadow_price"])))
        out.append(("explain.bottleneck tight in GET /v1/plan/loads", "%d fail" % len(bad), "0 fail",
                    not bad, "; ".join(bad[:3])))
    inst.rows.group(inst.name, "live plan explain (GET /v1/plan)", out)


def run_whatifs(inst, topo, groups, rng):
    d = inst.d
    live_policy = inst.get("/v1/policy")
    live = inst.get("/v1/plan")
    live_loads = inst.get("/v1/plan/loads")
    check_live_explain(inst, topo, live, live_loads, live_policy)
    for label, body in scenarios(topo, groups, rng, live_policy):
        before = inst.state()
        t0 = time.time()
        r = d.request("POST", "/v1/whatif", body, timeout=TIMEOUT)
        wms = (time.time() - t0) * 1000.0
        if r.status in (404, 405):
            raise NotServed("POST /v1/whatif: HTTP %d %s" % (r.status, r.body[:200]))
        after = inst.state()
        out = []
        # Reference: the state read before the request (docs: nothing is stored).
        out.append(("model and plan unchanged (health, GET /v1/plan)",
                    "rev %d/%d" % after[:2], "rev %d/%d" % before[:2], after == before,
                    "" if after[2] == before[2] else "GET /v1/plan text changed"))
        if r.status != 200:
            out.append(("POST /v1/whatif 200", r.status, 200, False, r.body[:300].decode("utf-8", "replace")))
            inst.rows.group(inst.name, label, out)
            continue
        reply = r.json()
        pol = dict(live_policy)
        pol.update(body.get("policy", {}))
        dem = inst.demands(body.get("matrix") or live_policy["matrix"])
        sc = scenario_ref.scenario(topo, dem, body)
        ref = scenario_ref.reference(sc, pol)
        out.extend(scenario_ref.check_reply(sc, pol, reply, ref, live, live_loads))
        out.append(("model_revision/plan_revision of the reply", "%s/%s" % (
            reply.get("model_revision"), reply.get("plan_revision")), "%d/%d" % before[:2],
            (reply.get("model_revision"), reply.get("plan_revision")) == before[:2], ""))
        inst.rows.group(inst.name, "%s (weft %.0f ms, HiGHS %.0f ms)" % (label, wms, ref.ms), out)
    # The stored topology and matrices are those set up, scenarios or not.
    got = inst.get("/v1/topology")
    inst.rows.group(inst.name, "topology after the what-ifs", [
        ("GET /v1/topology == before", "same" if got == topo else "changed", "same", got == topo, "")])


# ---- sweeps -------------------------------------------------------------------

def family(kind, topo, groups):
    """The scenarios a sweep kind must make, as sorted keys of "fail"."""
    ids = [l["id"] for l in topo["links"]]
    if kind == "links":
        return sorted((("links", (x,)),) for x in ids)
    if kind == "nodes":
        return sorted((("nodes", (n["id"],)),) for n in topo["nodes"])
    if kind == "srlgs":
        return sorted((("srlgs", (s,)),) for s in sorted(groups))
    if kind == "link-pairs":
        return sorted((("links", tuple(sorted((ids[i], ids[j])))),)
                      for i in range(len(ids)) for j in range(i + 1, len(ids)))
    raise ValueError(kind)


def fail_key(fail):
    return tuple(sorted((k, tuple(sorted(v))) for k, v in fail.items() if v))


def csv_rows(inst, path, what):
    r = inst.d.get(path, timeout=TIMEOUT)
    if r.status != 200:
        return None, "HTTP %d %s" % (r.status, r.body[:200])
    if not r.headers.get("Content-Type", "").startswith("text/csv"):
        return None, "Content-Type %r" % r.headers.get("Content-Type")
    try:
        # Reference: Python's csv module (RFC 4180 dialect), header first.
        rd = list(csv.reader(io.StringIO(r.body.decode("utf-8"), newline=""), strict=True))
    except csv.Error as e:
        return None, "csv: %s" % e
    if not rd:
        return None, "empty %s" % what
    if any(len(x) != len(rd[0]) for x in rd):
        return None, "rows of unequal length"
    return [dict(zip(rd[0], row)) for row in rd[1:]], ""


def cell_matches(cell, v):
    if v is None:
        return cell in ("", "null")
    if isinstance(v, bool):
        return cell.lower() in (str(v).lower(), str(int(v)))
    if isinstance(v, (int, float)):
        try:
            return scenario_ref._close(float(cell), float(v), 1e-15, 0.0)
        except ValueError:
            return False
    if isinstance(v, str):
        return cell == v
    return True


def compare_csv(rows_csv, items, item_key, row_key, required):
    """rows_csv: [{column: text}]; items: JSON objects, paired with the
    rows by item_key(item) == row_key(row).  Every column named like a
    scalar member of the item must agree with it, and every failed element
    of the item's "fail" must appear in some cell of its row."""
    bad = []
    if len(rows_csv) != len(items):
        bad.append("%d CSV rows, %d JSON items" % (len(rows_csv), len(items)))
    cols = set(rows_csv[0]) if rows_csv else set()
    miss = [c for c in required if rows_csv and c not in cols]
    if miss:
        return bad + ["columns %s missing (header %s)" % (miss, sorted(cols))]
    byk = {item_key(it): it for it in items}
    for i, row in enumerate(rows_csv):
        try:
            it = byk.get(row_key(row))
        except ValueError:
            it = None
        if it is None:
            bad.append("CSV row %d matches no JSON item: %r" % (i + 1, row))
            continue
        for c, cell in row.items():
            v = it.get(c)
            if c in it and not isinstance(v, (dict, list)) and not cell_matches(cell, v):
                bad.append("row %d column %s %r, JSON %r" % (i + 1, c, cell, v))
        for grp in (it.get("fail") or {}).values():
            for x in grp:
                if not any(str(x) in cell for cell in row.values()):
                    bad.append("row %d does not name failed element %s" % (i + 1, x))
        if len(bad) > 5:
            break
    return bad


def run_sweep(inst, kind, scale, topo, groups):
    d = inst.d
    label = "sweep %s x%g" % (kind, scale)
    live_policy = inst.get("/v1/policy")
    live_loads = inst.get("/v1/plan/loads")
    h = float(live_policy["headroom"])
    fam = family(kind, topo, groups)
    before = inst.state()
    out = []
    r = d.request("POST", "/v1/sweeps", {"kind": kind, "scale": scale}, timeout=TIMEOUT)
    if r.status in (404, 405):
        raise NotServed("POST /v1/sweeps: HTTP %d %s" % (r.status, r.body[:200]))
    if r.status != 202:
        inst.rows.group(inst.name, label, [("POST /v1/sweeps 202", r.status, 202, False,
                                            r.body[:300].decode("utf-8", "replace"))])
        return
    j = r.json()
    sid = j.get("id")
    # Reference: the family's size (links; nodes; distinct SRLGs; n(n-1)/2).
    out.append(("total == family size", j.get("total"), len(fam), j.get("total") == len(fam), ""))
    out.append(("202 reply", "%s %s" % (j.get("state"), j.get("href")), "running /v1/sweeps/%s" % sid,
                j.get("state") in ("running", "done") and j.get("href") == "/v1/sweeps/%s" % sid, ""))
    end = time.time() + SWEEP_TIMEOUT
    sw = None
    while time.time() < end:
        sw = inst.get("/v1/sweeps/%s" % sid)
        if sw.get("state") != "running":
            break
        time.sleep(0.2)
    t_all = SWEEP_TIMEOUT - max(0.0, end - time.time())
    if sw is None or sw.get("state") != "done":
        out.append(("state done within %.0f s" % SWEEP_TIMEOUT, sw and sw.get("state"), "done", False,
                    json.dumps(sw)[:300] if sw else ""))
        if sw is not None and sw.get("state") == "running":
            d.request("POST", "/v1/sweeps/%s/cancel" % sid, timeout=TIMEOUT)
        inst.rows.group(inst.name, label, out)
        return
    after = inst.state()
    out.append(("model and plan unchanged by the sweep", "rev %d/%d" % after[:2],
                "rev %d/%d" % before[:2], after == before, ""))
    res = sw.get("results", [])
    out.append(("done == total == results", "%s/%s/%d" % (sw.get("done"), sw.get("total"), len(res)),
                "%d" % len(fam), sw.get("done") == sw.get("total") == len(res) == len(fam), ""))
    out.append(("indices 0..total-1", sorted(x["index"] for x in res)[:3], [0, 1, 2][:len(res)],
                sorted(x["index"] for x in res) == list(range(len(res))), ""))
    keys = sorted(fail_key(x["fail"]) for x in res)
    out.append(("one scenario per element of the family", len(set(keys)), len(fam), keys == fam,
                "" if keys == fam else "first differences %s" % [k for k in keys if k not in fam][:3]))
    out.append(("model_revision/plan_revision", "%s/%s" % (sw.get("model_revision"), sw.get("plan_revision")),
                "%d/%d" % before[:2], (sw.get("model_revision"), sw.get("plan_revision")) == before[:2], ""))

    # Every scenario against HiGHS.
    dem = inst.demands(live_policy["matrix"])
    nbad = 0
    ref_ms = 0.0
    bad_notes = []
    byidx = {}
    for x in res:
        byidx[x["index"]] = x
        sc = scenario_ref.scenario(topo, dem, {"fail": x["fail"], "scale": scale})
        ref = scenario_ref.reference(sc, live_policy)
        ref_ms += ref.ms
        rr = scenario_ref.summary_rows(x, ref)
        if x.get("status") not in ("optimal", "partial", "empty"):
            rr.append(("status", x.get("status"), "optimal|partial", False, x.get("error", "")))
        cu = x.get("carried_bps", float("nan")) + x.get("unserved_bps", float("nan"))
        if not scenario_ref._close(cu, ref.demand_bps, 1e-9, 1e-3):
            rr.append(("carried + unserved == demand", cu, ref.demand_bps, False, ""))
        for c in rr:
            if not c[3]:
                nbad += 1
                if len(bad_notes) < 4:
                    bad_notes.append("#%d %s: %s weft=%s ref=%s" % (x["index"], json.dumps(x["fail"]),
                                                                  c[0], _fmt(c[1]), _fmt(c[2])))
    # Reference: HiGHS per scenario (scenario_ref.summary_rows).
    out.append(("every result == HiGHS (carried, U* or cost)", "%d fail" % nbad, "0 fail", nbad == 0,
                "; ".join(bad_notes)))

    # The report against the results.
    rep = sw.get("report")
    bad = []
    if not isinstance(rep, dict):
        bad.append("no report")
        rep = {}
    if not scenario_ref._close(rep.get("headroom"), h, 1e-12):
        bad.append("report headroom %r, policy %r" % (rep.get("headroom"), h))
    if res:
        wmu = max(x.get("max_utilization", 0.0) for x in res)
        w = rep.get("worst_max_utilization", {})
        if not scenario_ref._close(w.get("value"), wmu, 1e-12, 1e-15) or \
                w.get("index") not in byidx or \
                not scenario_ref._close(byidx[w["index"]]["max_utilization"], wmu, 1e-12, 1e-15):
            bad.append("worst_max_utilization %r, results' max %.17g" % (w, wmu))
    uns = rep.get("unserved", [])
    want = {x["index"] for x in res if x.get("unserved_bps", 0) > 0}
    if {u["index"] for u in uns} != want or len(uns) != len(want):
        bad.append("unserved lists %s, results with unserved_bps > 0: %s"
                   % (sorted(u["index"] for u in uns)[:8], sorted(want)[:8]))
    prev = float("inf")
    for u in uns:
        x = byidx.get(u["index"])
        if x is None:
            continue
        if not scenario_ref._close(u["unserved_bps"], x["unserved_bps"], 1e-12, 1e-9) or \
                not scenario_ref._close(u["max_utilization"], x["max_utilization"], 1e-12, 1e-15):
            bad.append("unserved entry %r, result %r" % (u, {k: x[k] for k in ("unserved_bps", "max_utilization")}))
        if u["unserved_bps"] > prev * (1 + 1e-12):
            bad.append("unserved not worst first at index %d" % u["index"])
        prev = u["unserved_bps"]
    tl = {l["id"]: l for l in topo["links"]}
    live_arc = {}
    for e in live_loads["links"]:
        live_arc[(e["id"], e["a"], e["b"])] = float(e["a_to_b"]["load_bps"])
        live_arc[(e["id"], e["b"], e["a"])] = float(e["b_to_a"]["load_bps"])
    prev = float("inf")
    seen = set()
    for e in rep.get("links", []):
        l = tl.get(e.get("link"))
        if l is None or {e.get("from"), e.get("to")} != {l["a"], l["b"]}:
            bad.append("report link %r is not a link direction of the topology" % e)
            continue
        k = (e["link"], e["from"], e["to"])
        if k in seen:
            bad.append("report link %s %s->%s twice" % k)
        seen.add(k)
        # Reference: docs/api.md, needed_capacity_bps = worst_load_bps / headroom.
        if not scenario_ref._close(e["needed_capacity_bps"], e["worst_load_bps"] / h, 1e-12, 1e-6):
            bad.append("%s needed %.17g, worst load / headroom %.17g" % (k, e["needed_capacity_bps"],
                                                                         e["worst_load_bps"] / h))
        if not scenario_ref._close(e["capacity_bps"], l["capacity_bps"], 1e-15):
            bad.append("%s capacity %r, topology %r" % (k, e["capacity_bps"], l["capacity_bps"]))
        if not scenario_ref._close(e["worst_utilization"], e["worst_load_bps"] / l["capacity_bps"], 1e-12, 1e-15):
            bad.append("%s worst_utilization %r != load/capacity" % (k, e["worst_utilization"]))
        if not e["worst_load_bps"] > 0:
            bad.append("%s listed with worst load %r" % (k, e["worst_load_bps"]))
        if e["worst_load_bps"] > l["capacity_bps"] * h * (1 + 1e-7) + 1e-3:
            bad.append("%s worst load %.17g above capacity x headroom" % (k, e["worst_load_bps"]))
        if not scenario_ref._close(e["live_load_bps"], live_arc.get(k, 0.0), 1e-12, 1e-6):
            bad.append("%s live_load_bps %r, GET /v1/plan/loads %r" % (k, e["live_load_bps"], live_arc.get(k)))
        x = byidx.get(e["worst_index"])
        if x is None:
            bad.append("%s worst_index %r names no result" % (k, e["worst_index"]))
        elif e["link"] in scenario_ref.failed_by(topo, x["fail"]):
            bad.append("%s worst_index %d fails the link itself (%s)" % (k, x["index"], json.dumps(x["fail"])))
        if e["worst_utilization"] > prev * (1 + 1e-12):
            bad.append("links not worst utilisation first at %s" % (k,))
        prev = e["worst_utilization"]
    out.append(("report == results (unserved, worst, links, needed = worst/headroom)",
                "%d fail" % len(bad), "0 fail", not bad, "; ".join(bad[:3])))

    rc, err = csv_rows(inst, "/v1/sweeps/%s/results.csv" % sid, "results.csv")
    bad = [err] if rc is None else compare_csv(
        rc, res, lambda x: x["index"], lambda r: int(r["index"]),
        ("index", "status", "max_utilization", "carried_bps", "unserved_bps"))
    out.append(("results.csv (csv module) == JSON results", "%d fail" % len(bad), "0 fail", not bad,
                "; ".join(str(b) for b in bad[:3])))
    lc, err = csv_rows(inst, "/v1/sweeps/%s/links.csv" % sid, "links.csv")
    bad = [err] if lc is None else compare_csv(
        lc, rep.get("links", []), lambda x: (x["link"], x["from"], x["to"]),
        lambda r: (r["link"], r["from"], r["to"]),
        ("link", "from", "to", "worst_load_bps", "needed_capacity_bps"))
    out.append(("links.csv (csv module) == report links", "%d fail" % len(bad), "0 fail", not bad,
                "; ".join(str(b) for b in bad[:3])))

    lst = inst.get("/v1/sweeps").get("sweeps", [])
    ok = bool(lst) and lst[0].get("id") == sid and lst[0].get("state") == "done" and \
        lst[0].get("kind") == kind and lst[0].get("done") == lst[0].get("total") == len(fam)
    ids = [x.get("id") for x in lst]
    out.append(("GET /v1/sweeps lists it first (newest first)", ids[:4], sid,
                ok and ids == sorted(ids, reverse=True), json.dumps(lst[:1])[:200]))
    inst.rows.group(inst.name, "%s: %d scenarios (sweep %.1f s, HiGHS %.1f s)"
                    % (label, len(fam), t_all, ref_ms / 1000.0), out)


def run_instance(d, rows, name, factor, policy, classes, sweeps):
    inst = Inst(d, rows, name)
    rng = random.Random("weft-whatif-" + name)
    t0 = time.time()
    print("== %s" % name, flush=True)
    topo, groups = setup(inst, factor, policy, classes, rng)
    run_whatifs(inst, topo, groups, rng)
    for k, kind in enumerate(sweeps):
        run_sweep(inst, kind, 1.0 if k % 2 == 0 else 1.1, topo, groups)
    print("   %s done in %.1f s" % (name, time.time() - t0), flush=True)


def main(argv):
    names = [a for a in argv if not a.startswith("-")]
    rows = Rows()

    def alarm(signum, frame):
        raise Overtime("whatif.py took longer than %d s" % TOTAL_TIMEOUT)

    signal.signal(signal.SIGALRM, alarm)
    signal.alarm(TOTAL_TIMEOUT)
    t_start = time.time()
    print("== self-test of the references (hand-derived optima)", flush=True)
    selftest(rows)
    try:
        d = Daemon()
    except Exception as e:
        print("cannot start weftd: %s" % e)
        return 2
    code = 0
    try:
        r = d.request("POST", "/v1/whatif", {}, timeout=TIMEOUT)
        if r.status in (404, 405):
            raise NotServed("POST /v1/whatif: HTTP %d %s" % (r.status, r.body[:200]))
        for name, factor, policy, classes, sweeps in INSTANCES:
            if names and name not in names:
                continue
            try:
                run_instance(d, rows, name, factor, policy, classes, sweeps)
            except (NotServed, Overtime):
                raise
            except Exception as e:
                rows.group(name, "exception", [("no exception", type(e).__name__, "-", False, str(e)[:300])])
                traceback.print_exc()
                if d.proc is not None and d.proc.poll() is not None:
                    print(d.log_text()[-3000:])
                    break
    except NotServed as e:
        print("the daemon does not offer what-ifs (or link SRLGs) yet: %s" % e)
        code = 3
    except Overtime as e:
        rows.add("-", "time", "whatif.py within %d s" % TOTAL_TIMEOUT, "over", "within", False, str(e))
        print(e)
    finally:
        signal.alarm(0)
        d.stop()
    bad = rows.failed()
    if code == 0 and bad:
        code = 1
    print("%d what-if checks, %d failed, %.1f s" % (len(rows.rows), len(bad), time.time() - t_start))
    return code


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
