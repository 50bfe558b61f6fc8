#!/usr/bin/python3
# SPDX-License-Identifier: GPL-3.0-or-later
"""Integration tests: a real weftd, real HTTP on 127.0.0.1, bad input on purpose.

Run from the repository root with /usr/bin/python3 (make check-integration).
Each test_* function is one case; the runner prints "ok N - name" or
"not ok N - name" with the reason, exits non-zero if any failed, and bounds
every case in time (CASE_TIMEOUT_S) besides the per-request timeouts.

Expected values come from outside weft: optima derived by hand on tiny
networks (the derivation is beside each network), the instance counts
published with SNDlib (tests/data/PROVENANCE.md), and an LP solved with
scipy's HiGHS from an independent reading of the SNDlib file.
"""
import http.client
import json
import os
import re
import signal
import sys
import time

ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
sys.path.insert(0, os.path.join(ROOT, "tests", "lib"))
from weftd import Daemon  # noqa: E402
import cases  # noqa: E402
from cases import Fail, Skip, check  # noqa: E402

CASE_TIMEOUT_S = 120
MAX_BODY = 256 * 1024          # --max-body of the shared daemon
REL = 1e-6                     # relative tolerance for plan numbers
EXTERNAL = bool(os.environ.get("WEFT_TEST_ADDR"))

# ---------------------------------------------------------------------------
# The hand-made network used by most cases: four sites of a fictional
# operator, two disjoint routes from A to D.
#
#        L_AB (10G, metric 1)     L_BD (10G, metric 1)
#     A ---------------------- B ---------------------- D
#      \                                               /
#       `-- L_AC (10G, metric 2) -- C -- L_CD (10G, metric 2)
#
# One demand A -> D of 15 Gbit/s, priority 0.
#
# Cost objective (min sum metric x flow): the route A-B-D costs 2 per bit/s,
# A-C-D costs 4.  Fill the cheap route to its capacity, 10G, and send the
# remaining 5G over A-C-D: cost 10e9*2 + 5e9*4 = 40e9; L_AB and L_BD are
# full (utilisation 1), L_AC and L_CD carry 5G (0.5).  Any other split moves
# traffic from cost 2 to cost 4, so this optimum is unique.
#
# Balance objective (min max utilisation U, then min cost): the cut
# {L_AB, L_AC} around A has 20G and must carry 15G, so U >= 0.75; the split
# 7.5G / 7.5G reaches it, and it is the only split with both routes at
# <= 7.5G.  Cost 7.5e9*2 + 7.5e9*4 = 45e9; all four links carry 7.5G.
#
# With L_AB down only A-C-D remains, 10G: 10G carried, 5G unserved
# (status partial, all of it priority 0).
#
# With L_AB's metric raised to 21 (burst case), A-B-D costs 22 and A-C-D 4:
# A-C-D is filled with 10G and 5G go over A-B-D: cost 10e9*4 + 5e9*22 =
# 150e9.
# ---------------------------------------------------------------------------
TOPO4 = {
    "nodes": [{"id": "A", "name": "Ashgrove", "lat": 51.5, "lon": -0.12},
              {"id": "B", "name": "Brackenfield"},
              {"id": "C", "name": "Coldmoor"},
              {"id": "D", "name": "Dunmere"}],
    "links": [
        {"id": "L_AB", "a": "A", "b": "B", "capacity_bps": 1e10, "te_metric": 1},
        {"id": "L_BD", "a": "B", "b": "D", "capacity_bps": 1e10, "te_metric": 1},
        {"id": "L_AC", "a": "A", "b": "C", "capacity_bps": 1e10, "te_metric": 2},
        {"id": "L_CD", "a": "C", "b": "D", "capacity_bps": 1e10, "te_metric": 2, "state": "up"},
    ],
}
TM = {"demands": [{"src": "A", "dst": "D", "rate_bps": 15e9, "priority": 0}]}

D = None        # the shared daemon, started by main()


def own_daemon_needed():
    if EXTERNAL:
        raise Skip("needs a daemon of its own; WEFT_TEST_ADDR is set")


def near(got, want, what, rel=REL):
    check(got is not None and abs(got - want) <= rel * max(1.0, abs(want)),
          "%s: got %r, want %r (rel %g)" % (what, got, want, rel))


def ok200(r, what):
    check(r.status == 200, "%s: status %d, body %r" % (what, r.status, r.body[:400]))
    return r.json()


def health(d=None):
    return ok200((d or D).get("/v1/health"), "health")


def setup_tiny(d, objective="cost"):
    """Installs TOPO4, matrix tm and a policy; returns the last revision."""
    ok200(d.put("/v1/topology", TOPO4), "put topology")
    ok200(d.put("/v1/matrices/tm", TM), "put matrix")
    return ok200(d.put("/v1/policy", {"objective": objective, "headroom": 1.0,
                                      "matrix": "tm"}), "put policy")["model_revision"]


def loads_by_id(d):
    j = ok200(d.get("/v1/plan/loads"), "loads")
    return j, {l["id"]: l for l in j["links"]}


def snapshot(d=None):
    """What a rejected request must leave alone: revision and stored state."""
    d = d or D
    return (health(d)["model_revision"], d.get("/v1/topology").body,
            d.get("/v1/matrices").body, d.get("/v1/policy").body)


def expect_error(r, status, code, where=None, where_re=None):
    check(r.status == status, "status %d, want %d; body %r" % (r.status, status, r.body[:300]))
    check(r.headers.get("Content-Type", "").startswith("application/json"),
          "error Content-Type %r" % r.headers.get("Content-Type"))
    j = r.json()
    check(set(j) == {"error"}, "error body keys %r" % list(j))
    e = j["error"]
    check(set(e) == {"code", "message", "where"}, "error keys %r" % list(e))
    check(e["code"] == code, "code %r, want %r" % (e["code"], code))
    check(isinstance(e["message"], str) and e["message"], "empty message")
    if where is not None:
        check(e["where"] == where, "where %r, want %r (message %r)" % (e["where"], where, e["message"]))
    if where_re is not None:
        check(re.fullmatch(where_re, e["where"]), "where %r !~ %r" % (e["where"], where_re))
    return e


def rejected(method, path, body, status, code, where=None, where_re=None,
             ctype="application/json", headers=None):
    """Sends a bad request; checks the error reply and that nothing changed."""
    before = snapshot()
    r = D.request(method, path, body, ctype=ctype, headers=headers)
    e = expect_error(r, status, code, where, where_re)
    after = snapshot()
    check(after == before, "%s %s changed the stored model: revision %d -> %d"
          % (method, path, before[0], after[0]))
    return e


def topo_with(**changes):
    """A deep copy of TOPO4 with one link's fields replaced (link=index)."""
    t = json.loads(json.dumps(TOPO4))
    i = changes.pop("link", 0)
    t["links"][i].update(changes)
    return t


# ---------------------------------------------------------------------------
# Cases on the shared daemon
# ---------------------------------------------------------------------------

def test_health():
    j = health()
    check(j["status"] == "ok", "status %r" % j)
    check(isinstance(j["model_revision"], int) and j["model_revision"] >= 0, "model_revision %r" % j)
    check(isinstance(j["plan_revision"], int), "plan_revision %r" % j)
    r = D.get("/v1/health")
    check(re.fullmatch(r"[0-9a-f]+-[0-9]+", r.headers.get("X-Request-Id", "")),
          "X-Request-Id %r" % r.headers.get("X-Request-Id"))


def test_cost_plan():
    rev = setup_tiny(D, "cost")
    p = D.wait_plan(rev, timeout=60)
    check(p["model_revision"] == rev, "plan for revision %d, want %d" % (p["model_revision"], rev))
    check(p["status"] == "optimal", "status %r" % p["status"])
    check(p["objective"] == "cost" and p["matrix"] == "tm", "objective/matrix %r" % p)
    near(p["total_cost"], 40e9, "total cost (hand-derived)")
    near(p["max_utilization"], 1.0, "max utilisation")
    near(p["demand_bps"], 15e9, "demand")
    near(p["carried_bps"], 15e9, "carried")
    near(p["unserved_bps"], 0, "unserved")
    check(sorted(p["unserved_by_priority"]) == [str(i) for i in range(8)], "priorities %r" % p)
    check(p["stages"] and all(set(s) == {"name", "objective", "lp_objective", "iterations", "ms"}
                              for s in p["stages"]), "stages %r" % p["stages"])
    check(all(isinstance(s["lp_objective"], float) for s in p["stages"]),
          "lp_objective is a number: %r" % p["stages"])
    check(p["unplaced_demands"] == 0 and p["unplaced_bps"] == 0 and "warnings" not in p,
          "nothing unplaced: %r" % p)
    _, by = loads_by_id(D)
    for lid, want in (("L_AB", 10e9), ("L_BD", 10e9), ("L_AC", 5e9), ("L_CD", 5e9)):
        near(by[lid]["a_to_b"]["load_bps"], want, lid + " a->b load")
        near(by[lid]["b_to_a"]["load_bps"], 0, lid + " b->a load")
        near(by[lid]["a_to_b"]["utilization"], want / 1e10, lid + " utilisation")
        near(by[lid]["a_to_b"]["headroom_bps"], 1e10 - want, lid + " headroom")


def test_balance_plan():
    rev = ok200(D.put("/v1/policy", {"objective": "balance", "headroom": 1.0, "matrix": "tm",
                                      "balance_tolerance": 1e-7}), "policy")["model_revision"]
    p = D.wait_plan(rev, timeout=60)
    check(p["objective"] == "balance", "objective %r" % p["objective"])
    near(p["max_utilization"], 0.75, "max utilisation (cut bound 15/20)")
    near(p["total_cost"], 45e9, "cost at U = 0.75")
    _, by = loads_by_id(D)
    for lid in ("L_AB", "L_BD", "L_AC", "L_CD"):
        near(by[lid]["a_to_b"]["load_bps"], 7.5e9, lid + " load")
    pol = ok200(D.get("/v1/policy"), "get policy")
    check(pol["objective"] == "balance" and pol["matrix"] == "tm", "policy %r" % pol)
    near(pol["headroom"], 1.0, "headroom")
    near(pol["balance_tolerance"], 1e-7, "tolerance")
    ok200(D.put("/v1/policy", {"objective": "cost", "headroom": 1.0, "matrix": "tm"}), "policy back")


def test_routes_and_loads_shape():
    rev = health()["model_revision"]
    p = D.wait_plan(rev, timeout=60)
    r = D.get("/v1/plan/routes")
    j = ok200(r, "routes")
    check(r.headers.get("ETag") == '"%d"' % j["revision"], "ETag %r" % r.headers.get("ETag"))
    check(j["revision"] >= p["revision"], "routes as new as the summary")
    check(set(j) == {"revision", "model_revision", "routes"}, "keys %r" % list(j))
    check(len(j["routes"]) == 1, "one route per demand")
    rt = j["routes"][0]
    check(set(rt) == {"src", "dst", "priority", "rate_bps", "carried_bps", "unserved_bps", "paths"},
          "route keys %r" % list(rt))
    check((rt["src"], rt["dst"], rt["priority"]) == ("A", "D", 0), "route ends %r" % rt)
    near(sum(x["rate_bps"] for x in rt["paths"]), rt["carried_bps"], "paths add up")
    links = {l["id"]: l for l in TOPO4["links"]}
    for path in rt["paths"]:
        check(set(path) == {"rate_bps", "nodes", "links"}, "path keys %r" % list(path))
        check(path["nodes"][0] == "A" and path["nodes"][-1] == "D", "path ends %r" % path)
        check(len(path["nodes"]) == len(path["links"]) + 1, "path lengths %r" % path)
        for k, lid in enumerate(path["links"]):
            l = links[lid]
            check({l["a"], l["b"]} == {path["nodes"][k], path["nodes"][k + 1]},
                  "link %s does not join %s and %s" % (lid, path["nodes"][k], path["nodes"][k + 1]))
    got = sorted((tuple(x["nodes"]), round(x["rate_bps"])) for x in rt["paths"])
    check(got == [(("A", "B", "D"), 10000000000), (("A", "C", "D"), 5000000000)], "paths %r" % got)
    lj, by = loads_by_id(D)
    check(set(lj) == {"revision", "model_revision", "links", "max_utilization"}, "loads keys %r" % list(lj))
    check([l["id"] for l in lj["links"]] == [l["id"] for l in TOPO4["links"]], "links in topology order")
    for l in lj["links"]:
        check(set(l) == {"id", "a", "b", "state", "capacity_bps", "te_metric", "a_to_b", "b_to_a"},
              "load keys %r" % list(l))
        for side in ("a_to_b", "b_to_a"):
            check(set(l[side]) == {"load_bps", "utilization", "headroom_bps", "shadow_price", "saturated"},
                  "arc keys %r" % list(l[side]))
            check(isinstance(l[side]["saturated"], bool), "saturated is a bool")


def test_patch_link_down_changes_plan():
    ok200(D.put("/v1/policy", {"objective": "cost", "headroom": 1.0, "matrix": "tm"}), "policy")
    j = ok200(D.request("PATCH", "/v1/links/L_AB", {"state": "down"}), "patch down")
    rev = j["model_revision"]
    check(health()["model_revision"] == rev, "health shows the write's revision")
    link = ok200(D.get("/v1/links/L_AB"), "get link")
    check(link["state"] == "down" and link["a"] == "A" and link["b"] == "B", "link %r" % link)
    p = D.wait_plan(rev, timeout=60)
    check(p["model_revision"] >= rev, "plan reflects the write")
    check(p["status"] == "partial", "status %r, want partial" % p["status"])
    near(p["carried_bps"], 10e9, "carried with L_AB down (only A-C-D)")
    near(p["unserved_bps"], 5e9, "unserved")
    near(p["unserved_by_priority"]["0"], 5e9, "unserved at priority 0")
    near(p["total_cost"], 40e9, "cost 10e9 * 4")
    check(p["saturated_links"] and set(p["saturated_links"]) <= {"L_AC", "L_CD"},
          "saturated links %r" % p["saturated_links"])
    _, by = loads_by_id(D)
    check(by["L_AB"]["state"] == "down", "loads show L_AB down")
    near(by["L_AB"]["a_to_b"]["load_bps"], 0, "no load on a down link")
    near(by["L_AC"]["a_to_b"]["load_bps"], 10e9, "L_AC full")
    j = ok200(D.request("PATCH", "/v1/links/L_AB", {"state": "up", "capacity_bps": 1e10}), "patch up")
    p = D.wait_plan(j["model_revision"], timeout=60)
    near(p["total_cost"], 40e9, "cost back to the two-route optimum")
    check(p["status"] == "optimal", "status back to optimal")


def test_matrices_list_get_delete():
    ok200(D.put("/v1/matrices/spare-1.b", {"demands": [
        {"src": "B", "dst": "C", "rate_bps": 1e9},
        {"src": "C", "dst": "B", "rate_bps": 2.5e8, "priority": 4}]}), "put spare")
    j = ok200(D.get("/v1/matrices"), "list")
    by = {m["name"]: m for m in j["matrices"]}
    check(set(by) >= {"tm", "spare-1.b"}, "names %r" % list(by))
    check(by["spare-1.b"]["demands"] == 2, "count")
    near(by["spare-1.b"]["total_bps"], 1.25e9, "total")
    near(by["tm"]["total_bps"], 15e9, "tm total")
    m = ok200(D.get("/v1/matrices/spare-1.b"), "get")
    check([(x["src"], x["dst"], x["priority"]) for x in m["demands"]] == [("B", "C", 0), ("C", "B", 4)],
          "demands %r" % m)
    rev = health()["model_revision"]
    j = ok200(D.request("DELETE", "/v1/matrices/spare-1.b"), "delete")
    check(j["model_revision"] == rev + 1, "delete makes one revision")
    expect_error(D.get("/v1/matrices/spare-1.b"), 404, "not_found")
    rejected("DELETE", "/v1/matrices/spare-1.b", None, 404, "not_found")


def test_topology_roundtrip():
    t = ok200(D.get("/v1/topology"), "get topology")
    check([n["id"] for n in t["nodes"]] == ["A", "B", "C", "D"], "nodes %r" % t["nodes"])
    check(t["nodes"][0].get("name") == "Ashgrove", "name kept")
    near(t["nodes"][0]["lat"], 51.5, "lat")
    for got, want in zip(t["links"], TOPO4["links"]):
        check((got["id"], got["a"], got["b"]) == (want["id"], want["a"], want["b"]), "link %r" % got)
        near(got["capacity_bps"], want["capacity_bps"], "capacity")
        near(got["te_metric"], want["te_metric"], "metric")
        check(got["state"] == "up", "state")
    # The charset parameter is allowed, and PUTting what GET gave is a no-op
    # apart from the revision.
    r = D.put("/v1/topology", json.dumps(t), ctype="application/json; charset=UTF-8")
    ok200(r, "put back")
    check(ok200(D.get("/v1/topology"), "get again") == t, "round trip")


def test_model_export():
    r = D.get("/v1/model?format=lp")
    check(r.status == 200, "lp status %d %r" % (r.status, r.body[:200]))
    check(r.headers.get("Content-Type", "").startswith("text/plain"), "lp ctype")
    text = r.body.decode()
    check("Subject To" in text and ("Minimize" in text or "Maximize" in text), "LP text format sections")
    r = D.get("/v1/model?format=mps&stage=0")
    check(r.status == 200, "mps status %d %r" % (r.status, r.body[:200]))
    text = r.body.decode()
    check("ROWS" in text and "COLUMNS" in text and "RHS" in text, "MPS sections")
    expect_error(D.get("/v1/model?format=xlsx"), 400, "invalid", "format")
    expect_error(D.get("/v1/model?stage=99"), 400, "invalid", "stage")


def test_concurrent_readers_during_writes():
    # Plan replies borrow the published texts under a reference; readers
    # racing with re-solves must always get a whole, parseable plan.
    import threading
    errors = []

    def reader():
        try:
            for _ in range(40):
                for path in ("/v1/plan", "/v1/plan/routes", "/v1/plan/loads"):
                    r = D.get(path, timeout=30)
                    if r.status != 200:
                        errors.append("%s: %d" % (path, r.status))
                        continue
                    j = r.json()
                    if r.headers.get("ETag") != '"%d"' % j["revision"]:
                        errors.append("%s: ETag %r for revision %d" % (path, r.headers.get("ETag"),
                                                                      j["revision"]))
        except Exception as exc:
            errors.append(repr(exc))
    threads = [threading.Thread(target=reader) for _ in range(4)]
    for t in threads:
        t.start()
    for i in range(10):
        ok200(D.request("PATCH", "/v1/links/L_CD", {"te_metric": 2 + (i % 2)}), "patch")
        time.sleep(0.02)
    for t in threads:
        t.join(timeout=90)
    check(not any(t.is_alive() for t in threads), "readers finished")
    check(not errors, "reader errors: %r" % errors[:5])
    ok200(D.request("PATCH", "/v1/links/L_CD", {"te_metric": 2}), "restore metric")


# ---- bad input: one case per kind, each checking nothing changed ----------

def test_broken_json():
    rejected("PUT", "/v1/topology", '{"nodes": [\n {"id": "A",}]', 400, "invalid", where_re=r"2:\d+")
    rejected("PUT", "/v1/matrices/tm", '{"demands": [', 400, "invalid", where_re=r"1:\d+")
    rejected("PUT", "/v1/policy", "", 400, "invalid", where="")
    rejected("PATCH", "/v1/links/L_AB", '{"state": "down"} trailing', 400, "invalid", where_re=r"1:\d+")


def test_wrong_types():
    rejected("PUT", "/v1/topology", topo_with(capacity_bps="10G"), 400, "invalid", "links[0].capacity_bps")
    rejected("PUT", "/v1/topology", {"nodes": [{"id": 5}], "links": []}, 400, "invalid", "nodes[0].id")
    rejected("PUT", "/v1/topology", {"nodes": {}, "links": []}, 400, "invalid", "nodes")
    rejected("PUT", "/v1/topology", [1, 2], 400, "invalid", "")
    rejected("PUT", "/v1/matrices/tm", {"demands": [{"src": "A", "dst": "D", "rate_bps": 1,
                                                     "priority": "high"}]},
             400, "invalid", "demands[0].priority")
    rejected("PUT", "/v1/policy", {"objective": "cost", "headroom": "all", "matrix": "tm"},
             400, "invalid", "headroom")
    rejected("PATCH", "/v1/links/L_AB", {"state": False}, 400, "invalid", "state")


def test_unknown_fields():
    t = topo_with(link=2, colour="blue")
    rejected("PUT", "/v1/topology", t, 400, "invalid", "links[2].colour")
    rejected("PUT", "/v1/policy", {"objective": "cost", "headroom": 1, "matrix": "tm", "speed": 3},
             400, "invalid", "speed")


def test_bad_numbers():
    # JSON has no NaN or infinity; a text holding them is not JSON.
    body = json.dumps(TOPO4).replace('"capacity_bps": 10000000000.0', '"capacity_bps": NaN', 1)
    check("NaN" in body, "test body has NaN")
    rejected("PUT", "/v1/topology", body, 400, "invalid", where_re=r"1:\d+")
    body = json.dumps(TOPO4).replace('"capacity_bps": 10000000000.0', '"capacity_bps": 1e400', 1)
    rejected("PUT", "/v1/topology", body, 400, "invalid", where_re=r"1:\d+")
    rejected("PUT", "/v1/topology", topo_with(link=1, capacity_bps=-1), 400, "invalid",
             "links[1].capacity_bps")
    rejected("PUT", "/v1/topology", topo_with(link=3, capacity_bps=1e16), 400, "invalid",
             "links[3].capacity_bps")
    rejected("PUT", "/v1/topology", topo_with(te_metric=0), 400, "invalid", "links[0].te_metric")
    rejected("PUT", "/v1/topology", topo_with(te_metric=1e10), 400, "invalid", "links[0].te_metric")
    rejected("PUT", "/v1/matrices/tm", {"demands": [{"src": "A", "dst": "D", "rate_bps": -1}]},
             400, "invalid", "demands[0].rate_bps")
    rejected("PUT", "/v1/matrices/tm", {"demands": [{"src": "A", "dst": "D", "rate_bps": 2e15}]},
             400, "invalid", "demands[0].rate_bps")
    rejected("PUT", "/v1/matrices/tm", {"demands": [{"src": "A", "dst": "D", "rate_bps": 1,
                                                     "priority": 8}]},
             400, "invalid", "demands[0].priority")
    rejected("PUT", "/v1/policy", {"objective": "cost", "headroom": 0, "matrix": "tm"},
             400, "invalid", "headroom")
    rejected("PUT", "/v1/policy", {"objective": "cost", "headroom": 1.5, "matrix": "tm"},
             400, "invalid", "headroom")
    rejected("PATCH", "/v1/links/L_AB", {"capacity_bps": -1e9}, 400, "invalid", "capacity_bps")


def test_unknown_node_in_link():
    rejected("PUT", "/v1/topology", topo_with(link=1, b="Z"), 400, "invalid", "links[1].b")


def test_self_loop():
    rejected("PUT", "/v1/topology", topo_with(link=2, b="A"), 400, "invalid", "links[2].b")


def test_duplicate_ids():
    t = json.loads(json.dumps(TOPO4))
    t["nodes"].append({"id": "B"})
    rejected("PUT", "/v1/topology", t, 400, "invalid", "nodes[4].id")
    rejected("PUT", "/v1/topology", topo_with(link=3, id="L_AB"), 400, "invalid", "links[3].id")
    rejected("PUT", "/v1/topology", '{"nodes":[],"nodes":[],"links":[]}', 400, "invalid",
             where_re=r"1:\d+")


def test_overlong_id():
    t = json.loads(json.dumps(TOPO4))
    t["nodes"].append({"id": "N" * 129})
    rejected("PUT", "/v1/topology", t, 400, "invalid", "nodes[4].id")


def test_matrix_with_unknown_nodes():
    # The topology has A..D; the store checks the matrix against it.
    e = rejected("PUT", "/v1/matrices/tm", {"demands": [
        {"src": "A", "dst": "D", "rate_bps": 1e9},
        {"src": "A", "dst": "Q", "rate_bps": 1e9}]}, 400, "invalid", "demands[1].dst")
    check("Q" in e["message"], "message names the node: %r" % e["message"])
    rejected("PUT", "/v1/matrices/other", {"demands": [{"src": "X", "dst": "A", "rate_bps": 1}]},
             400, "invalid", "demands[0].src")
    rejected("PUT", "/v1/matrices/tm", {"demands": [{"src": "A", "dst": "A", "rate_bps": 1}]},
             400, "invalid", "demands[0].dst")


def test_topology_dropping_used_node():
    # Matrix tm's one demand (A -> D, 15 Gbit/s) names D.  A topology
    # without D is stored all the same; tm is kept whole, and the plan
    # leaves its demand out and says so: 1 demand, 15e9 bit/s unplaced, no
    # demand planned, so status "empty" (docs/api.md).
    ok200(D.put("/v1/policy", {"objective": "cost", "headroom": 1.0, "matrix": "tm"}), "policy")
    tm_before = ok200(D.get("/v1/matrices/tm"), "tm before")
    t = {"nodes": [n for n in TOPO4["nodes"] if n["id"] != "D"],
         "links": [l for l in TOPO4["links"] if "D" not in (l["a"], l["b"])]}
    j = ok200(D.put("/v1/topology", t), "topology without D")
    check((j["nodes"], j["links"]) == (3, 2), "counts %r" % j)
    p = D.wait_plan(j["model_revision"], timeout=60)
    check(p["unplaced_demands"] == 1, "unplaced_demands %r" % p)
    near(p["unplaced_bps"], 15e9, "unplaced rate (tm's A -> D)")
    check(p["status"] == "empty", "status %r" % p["status"])
    near(p["demand_bps"], 0, "nothing planned")
    w = p.get("warnings")
    check(isinstance(w, list) and len(w) == 1 and '"tm"' in w[0] and "not planned" in w[0],
          "warnings %r" % w)
    rt = ok200(D.get("/v1/plan/routes"), "routes")
    check(rt["routes"] == [], "no route for an unplaced demand: %r" % rt["routes"])
    # The stored matrix comes back as it was put.
    tm = ok200(D.get("/v1/matrices/tm"), "tm after")
    check(tm == tm_before, "tm changed: %r -> %r" % (tm_before, tm))
    check([(x["src"], x["dst"], x["priority"]) for x in tm["demands"]] == [("A", "D", 0)], "tm %r" % tm)
    near(tm["demands"][0]["rate_bps"], 15e9, "tm rate")
    # A matrix put now is still checked against the topology now stored.
    rejected("PUT", "/v1/matrices/tm", TM, 400, "invalid", "demands[0].dst")
    # With D back, the demand is planned again: the cost optimum 40e9 of
    # the hand-derived case at the top of this file.
    j = ok200(D.put("/v1/topology", TOPO4), "topology with D")
    p = D.wait_plan(j["model_revision"], timeout=60)
    check(p["unplaced_demands"] == 0 and p["unplaced_bps"] == 0 and "warnings" not in p,
          "nothing unplaced: %r" % p)
    check(p["status"] == "optimal", "status %r" % p["status"])
    near(p["carried_bps"], 15e9, "carried")
    near(p["total_cost"], 40e9, "cost (hand-derived)")


def test_body_over_limit():
    own_daemon_needed()     # relies on --max-body
    pad = " " * (MAX_BODY + 1 - len(json.dumps(TOPO4)))
    rejected("PUT", "/v1/topology", json.dumps(TOPO4) + pad, 413, "too_big", "body")
    # Without Content-Length (chunked): refused once the limit is passed.
    before = snapshot()
    conn = http.client.HTTPConnection("127.0.0.1", D.port, timeout=30)
    try:
        def chunks():
            yield json.dumps(TOPO4)[:-1].encode()
            for _ in range(MAX_BODY // 4096 + 2):
                yield b" " * 4096
            yield b"}"
        conn.request("PUT", "/v1/topology", body=chunks(), encode_chunked=True,
                     headers={"Content-Type": "application/json"})
        r = conn.getresponse()
        body = r.read()
        check(r.status == 413, "chunked: status %d %r" % (r.status, body[:200]))
        check(json.loads(body)["error"]["code"] == "too_big", "chunked code")
    finally:
        conn.close()
    check(snapshot() == before, "chunked body changed the model")
    # A small route has a smaller limit than the configured one.
    rejected("PATCH", "/v1/links/L_AB", '{"state":"down"' + " " * 20000 + "}", 413, "too_big", "body")
    # A route without a body refuses one.
    rejected("GET", "/v1/health", "{}", 413, "too_big", "body")


def test_deep_nesting():
    rejected("PUT", "/v1/topology", '{"nodes":' + "[" * 100 + "]" * 100 + ',"links":[]}',
             400, "invalid", where_re=r"1:\d+")


def test_unknown_routes():
    for path in ("/v1/nope", "/v1/plan/", "/v1/links", "/v2/health", "/ui/", "/index.html",
                 "/v1/matrices/a/b"):
        rejected("GET", path, None, 404, "not_found", "path")
    rejected("PUT", "/v1/nothing", TM, 404, "not_found", "path")


def test_wrong_methods():
    for method, path, allow in (("DELETE", "/v1/topology", "GET, PUT"),
                                ("POST", "/v1/plan", "GET"),
                                ("PUT", "/v1/links/L_AB", "GET, PATCH"),
                                ("POST", "/v1/matrices/tm", "GET, PUT, DELETE"),
                                ("GET", "/v1/import", "POST")):
        before = snapshot()
        body = TM if method in ("PUT", "POST") else None
        r = D.request(method, path, body)
        expect_error(r, 405, "method_not_allowed", "method")
        check(r.headers.get("Allow") == allow, "%s %s Allow %r, want %r"
              % (method, path, r.headers.get("Allow"), allow))
        check(snapshot() == before, "405 changed the model")


def test_wrong_content_type():
    rejected("PUT", "/v1/topology", json.dumps(TOPO4), 415, "unsupported_media_type", "Content-Type",
             ctype="text/plain")
    rejected("PUT", "/v1/topology", json.dumps(TOPO4), 415, "unsupported_media_type", "Content-Type",
             ctype=None)
    rejected("PUT", "/v1/matrices/tm", json.dumps(TM), 415, "unsupported_media_type", "Content-Type",
             ctype="application/json; charset=latin-1")
    rejected("PATCH", "/v1/links/L_AB", '{"state":"down"}', 415, "unsupported_media_type",
             "Content-Type", ctype="application/x-www-form-urlencoded")
    rejected("POST", "/v1/import?format=csv&matrix=x", "node,a\n", 415, "unsupported_media_type",
             "Content-Type", ctype="application/json")


def test_bad_names_and_ids():
    rejected("PUT", "/v1/matrices/bad%20name", TM, 400, "invalid", "name")
    rejected("PUT", "/v1/matrices/" + "m" * 65, TM, 400, "invalid", "name")
    rejected("PATCH", "/v1/links/NOPE", {"state": "down"}, 404, "not_found")
    expect_error(D.get("/v1/links/NOPE"), 404, "not_found")
    rejected("PUT", "/v1/policy", {"objective": "cost", "headroom": 1, "matrix": "no/slash"},
             400, "invalid", "matrix")
    rejected("PUT", "/v1/policy", {"objective": "fastest", "headroom": 1, "matrix": "tm"},
             400, "invalid", "objective")


def test_bad_imports():
    rejected("POST", "/v1/import?format=xml&matrix=x", "x", 400, "invalid", "format", ctype="text/plain")
    rejected("POST", "/v1/import?format=csv", "node,a\n", 400, "invalid", "matrix", ctype="text/csv")
    rejected("POST", "/v1/import?format=sndlib&matrix=x", "NODES (\n  A ( 0 0 )\n", 400, "invalid",
             where_re=r"line \d+", ctype="text/plain")
    rejected("POST", "/v1/import?format=csv&matrix=x", "node,a\nlink,l1,a,zz,1G\n", 400, "invalid",
             where_re=r"line \d+", ctype="text/csv")


# ---------------------------------------------------------------------------
# Cases with a daemon of their own
# ---------------------------------------------------------------------------

def read_sndlib(path):
    """An independent reading of an SNDlib native file: nodes, links
    (capacity: pre-installed if > 0, else the first module), demands, in
    bit/s from the META unit (SNDlib 1.0 format description)."""
    text = open(path).read()

    def section(name):
        m = re.search(r"^%s \($(.*?)^\)" % name, text, re.M | re.S)
        return [l.strip() for l in m.group(1).splitlines() if l.strip() and not l.strip().startswith("#")]
    unit = re.search(r"unit\s*=\s*(\w+)", text)
    scale = {"BITSPERSEC": 1, "KBITPERSEC": 1e3, "MBITPERSEC": 1e6, "GBITPERSEC": 1e9}[
        unit.group(1) if unit else "MBITPERSEC"]
    nodes = [l.split()[0] for l in section("NODES")]
    links = []
    for l in section("LINKS"):
        m = re.match(r"(\S+) \( (\S+) (\S+) \) (\S+) \S+ \S+ \S+ \( ([^)]*)\)", l)
        pre = float(m.group(4))
        mods = m.group(5).split()
        cap = pre if pre > 0 else float(mods[0])
        links.append((m.group(1), m.group(2), m.group(3), cap * scale))
    demands = []
    for l in section("DEMANDS"):
        m = re.match(r"(\S+) \( (\S+) (\S+) \) \S+ (\S+)", l)
        demands.append((m.group(2), m.group(3), float(m.group(4)) * scale))
    return nodes, links, demands


def highs_max_carried(nodes, links, demands):
    """Maximum total carried traffic under capacity: the node-arc LP, one
    flow per source, solved by scipy's HiGHS.  Rates scaled by the largest
    capacity."""
    import numpy as np
    from scipy.optimize import linprog
    from scipy.sparse import lil_matrix
    scale = max(l[3] for l in links)
    idx = {n: i for i, n in enumerate(nodes)}
    arcs = []
    for _, a, b, c in links:
        arcs += [(idx[a], idx[b], c / scale), (idx[b], idx[a], c / scale)]
    srcs = sorted({idx[s] for s, _, _ in demands})
    dem = [(idx[s], idx[t], d / scale) for s, t, d in demands]
    nf = len(srcs) * len(arcs)
    nv = nf + len(dem)
    si = {s: k for k, s in enumerate(srcs)}
    A_eq = lil_matrix((len(srcs) * len(nodes), nv))
    for k, s in enumerate(srcs):
        for j, (u, v, _) in enumerate(arcs):
            A_eq[k * len(nodes) + u, k * len(arcs) + j] += 1
            A_eq[k * len(nodes) + v, k * len(arcs) + j] -= 1
    for q, (s, t, _) in enumerate(dem):
        k = si[s]
        A_eq[k * len(nodes) + s, nf + q] -= 1
        A_eq[k * len(nodes) + t, nf + q] += 1
    A_ub = lil_matrix((len(arcs), nv))
    for k in range(len(srcs)):
        for j in range(len(arcs)):
            A_ub[j, k * len(arcs) + j] = 1
    c = np.zeros(nv)
    c[nf:] = -1
    bounds = [(0, None)] * nf + [(0, d) for _, _, d in dem]
    res = linprog(c, A_ub=A_ub.tocsr(), b_ub=[a[2] for a in arcs], A_eq=A_eq.tocsr(),
                  b_eq=np.zeros(A_eq.shape[0]), bounds=bounds, method="highs")
    check(res.status == 0, "HiGHS: %s" % res.message)
    return -res.fun * scale


def test_import_sndlib_abilene():
    path = os.path.join(ROOT, "tests", "data", "sndlib", "abilene.txt")
    own_daemon_needed()
    nodes, links, demands = read_sndlib(path)
    # Counts published with the instance (PROVENANCE.md: N/L/D 12/15/132).
    check((len(nodes), len(links), len(demands)) == (12, 15, 132), "independent reading of the file")
    with Daemon(extra_args=["--max-body", str(MAX_BODY)]) as d, open(path, "rb") as f:
        j = ok200(d.request("POST", "/v1/import?format=sndlib&matrix=abilene", f.read(),
                            ctype="text/plain"), "import")
        check((j["nodes"], j["links"], j["demands"]) == (12, 15, 132), "import counts %r" % j)
        check(health(d)["model_revision"] == j["model_revision"], "revision")
        t = ok200(d.get("/v1/topology"), "topology")
        check(sorted(n["id"] for n in t["nodes"]) == sorted(nodes), "node ids")
        caps = {l[0]: l[3] for l in links}
        for l in t["links"]:
            near(l["capacity_bps"], caps[l["id"]], "capacity of " + l["id"])
        m = ok200(d.get("/v1/matrices/abilene"), "matrix")
        check(len(m["demands"]) == 132, "demands stored")
        rev = ok200(d.put("/v1/policy", {"objective": "cost", "headroom": 1.0, "matrix": "abilene"}),
                    "policy")["model_revision"]
        p = d.wait_plan(rev, timeout=120)
        total = sum(x[2] for x in demands)
        near(p["demand_bps"], total, "demand total (from the file)")
        ref = highs_max_carried(nodes, links, demands)
        # Abilene's matrix does not fit its capacities: admission carries
        # the most it can, which the HiGHS LP gives independently.
        check(ref < total, "reference says the matrix does not fit")
        near(p["carried_bps"], ref, "carried traffic vs HiGHS max flow", rel=1e-6)
        check(p["status"] == "partial", "status %r" % p["status"])
        rt = ok200(d.get("/v1/plan/routes"), "routes")
        check(len(rt["routes"]) == 132, "one route per demand")


def test_import_over_another_matrix():
    # Abilene's and Germany50's node names are disjoint, so after the
    # second import every demand of "a" names nodes the topology lacks.
    # The expected counts and rates come from our own reading of the two
    # files (read_sndlib) and the counts published with them (PROVENANCE.md:
    # 12/15/132 and 50/88/662).
    own_daemon_needed()
    pa = os.path.join(ROOT, "tests", "data", "sndlib", "abilene.txt")
    pg = os.path.join(ROOT, "tests", "data", "sndlib", "germany50.txt")
    na, _, da = read_sndlib(pa)
    ng, lg, dg = read_sndlib(pg)
    check((len(ng), len(lg), len(dg)) == (50, 88, 662), "independent reading of germany50")
    gn = set(ng)
    out = [d for d in da if d[0] not in gn or d[1] not in gn]
    check(len(out) == 132, "abilene's nodes are not germany50's")
    with Daemon(extra_args=["--max-body", str(MAX_BODY)]) as d:
        with open(pa, "rb") as f:
            j = ok200(d.request("POST", "/v1/import?format=sndlib&matrix=a", f.read(),
                                ctype="text/plain"), "import abilene")
        check((j["nodes"], j["links"], j["demands"]) == (12, 15, 132), "abilene counts %r" % j)
        a_before = ok200(d.get("/v1/matrices/a"), "matrix a")
        ok200(d.put("/v1/policy", {"objective": "cost", "headroom": 1.0, "matrix": "a"}), "policy a")
        with open(pg, "rb") as f:
            j = ok200(d.request("POST", "/v1/import?format=sndlib&matrix=g", f.read(),
                                ctype="text/plain"), "import germany50 over matrix a")
        check((j["nodes"], j["links"], j["demands"]) == (50, 88, 662), "germany50 counts %r" % j)
        t = ok200(d.get("/v1/topology"), "topology")
        check(sorted(n["id"] for n in t["nodes"]) == sorted(ng), "germany50's nodes")
        check(ok200(d.get("/v1/matrices/a"), "matrix a after") == a_before, "matrix a kept whole")
        check(len(ok200(d.get("/v1/matrices/g"), "matrix g")["demands"]) == 662, "matrix g stored")
        p = d.wait_plan(j["model_revision"], timeout=120)
        check(p["matrix"] == "a" and p["unplaced_demands"] == 132, "unplaced %r" % p)
        near(p["unplaced_bps"], sum(x[2] for x in out), "unplaced rate (abilene's total)")
        check(p["status"] == "empty", "status %r" % p["status"])
        check(len(p["warnings"]) == 1 and p["warnings"][0].startswith('132 demands of matrix "a"'),
              "warnings %r" % p["warnings"])
        rev = ok200(d.put("/v1/policy", {"objective": "cost", "headroom": 1.0, "matrix": "g"}),
                    "policy g")["model_revision"]
        p = d.wait_plan(rev, timeout=120)
        check(p["unplaced_demands"] == 0 and "warnings" not in p, "g fits its topology: %r" % p)
        near(p["demand_bps"], sum(x[2] for x in dg), "germany50 demand total (from the file)")


# A fictional three-site network in the CSV format (docs/csv-format.md):
#   north --n-m (10G, metric 1)-- mill --m-q (2.5G, metric 2, down)-- quay
#   north --n-q (1G, metric 5)-- quay
# Demands: north -> quay 400M (priority 0), quay -> mill 1.5G (priority 3).
# With m-q down, north -> quay can only use n-q (1G, a->b): all 400M fit.
# quay -> mill must go quay -> north (n-q b->a, 1G) -> mill: 1G carried,
# 0.5G unserved at priority 3.  Carried 1.4G, cost 0.4e9*5 + 1e9*(5+1) = 8e9.
CSV_NET = """# fictional test network
node,north,North Yard,,
node,mill,"Mill Street, east"
node,quay,Quay
link,n-m,north,mill,10G,1
link,m-q,mill,quay,2.5G,2,down
link,n-q,north,quay,1G,5
demand,north,quay,400M,0
demand,quay,mill,1.5G,3
"""


def test_import_csv():
    own_daemon_needed()
    with Daemon() as d:
        j = ok200(d.request("POST", "/v1/import?format=csv&matrix=base", CSV_NET, ctype="text/csv"),
                  "import")
        check((j["nodes"], j["links"], j["demands"]) == (3, 3, 2), "counts %r" % j)
        t = ok200(d.get("/v1/topology"), "topology")
        by = {l["id"]: l for l in t["links"]}
        near(by["n-m"]["capacity_bps"], 1e10, "10G")
        near(by["m-q"]["capacity_bps"], 2.5e9, "2.5G")
        check(by["m-q"]["state"] == "down", "state down")
        check(t["nodes"][1].get("name") == "Mill Street, east", "quoted name %r" % t["nodes"][1])
        m = ok200(d.get("/v1/matrices/base"), "matrix")
        check([(x["src"], x["dst"], x["priority"]) for x in m["demands"]]
              == [("north", "quay", 0), ("quay", "mill", 3)], "demands %r" % m)
        near(m["demands"][1]["rate_bps"], 1.5e9, "1.5G")
        rev = ok200(d.put("/v1/policy", {"objective": "cost", "headroom": 1, "matrix": "base"}),
                    "policy")["model_revision"]
        p = d.wait_plan(rev, timeout=60)
        check(p["status"] == "partial", "status %r" % p["status"])
        near(p["carried_bps"], 1.4e9, "carried")
        near(p["unserved_by_priority"]["3"], 0.5e9, "unserved at priority 3")
        near(p["unserved_by_priority"]["0"], 0, "priority 0 all carried")
        near(p["total_cost"], 8e9, "cost")


def test_burst_of_patches_is_coalesced():
    own_daemon_needed()
    with Daemon(debounce_ms=400) as d:
        rev = setup_tiny(d, "cost")
        p0 = d.wait_plan(rev, timeout=60)
        # Let any solve still queued from the set-up finish.
        time.sleep(1.0)
        p0 = ok200(d.get("/v1/plan"), "plan")
        revs = []
        t0 = time.time()
        for i in range(20):
            j = ok200(d.request("PATCH", "/v1/links/L_AB", {"te_metric": 2 + i}), "patch %d" % i)
            revs.append(j["model_revision"])
        took = time.time() - t0
        check(revs == list(range(revs[0], revs[0] + 20)), "each PATCH makes one revision: %r" % revs)
        p = d.wait_plan(revs[-1], timeout=60)
        time.sleep(1.0)     # any further solve would show up by now
        p = ok200(d.get("/v1/plan"), "plan")
        solves = p["revision"] - p0["revision"]
        print("# 20 PATCHes in %.3f s gave %d new plans" % (took, solves))
        check(p["model_revision"] == revs[-1], "last plan reflects the last write")
        check(1 <= solves < 20, "%d plans for 20 writes" % solves)
        near(p["total_cost"], 150e9, "cost with L_AB metric 21 (hand-derived)")


def test_config_file_and_flags():
    """weftd -f FILE -T: the file fills options, the command line wins, an
    unknown key is reported as file:line (docs/config.md)."""
    import subprocess
    import tempfile
    weftd = os.environ.get("WEFTD", os.path.join(ROOT, "build", "weftd"))
    with tempfile.TemporaryDirectory(prefix="weft-conf-") as tmp:
        conf = os.path.join(tmp, "weft.conf")
        with open(conf, "w") as f:
            f.write("# comment\ndebounce_ms 75\nlisten 127.0.0.1:1\n\nhttp_threads 3  # trailing\n")
        out = subprocess.run([weftd, "-f", conf, "--listen", "127.0.0.1:2", "-T"],
                             capture_output=True, text=True, timeout=10)
        check(out.returncode == 0, "weftd -T exits 0: %r" % out.stderr)
        eff = dict(l.split(" ", 1) for l in out.stdout.splitlines())
        check(eff["debounce_ms"] == "75", "file sets debounce_ms: %r" % eff)
        check(eff["http_threads"] == "3", "file sets http_threads")
        check(eff["listen"] == "127.0.0.1:2", "command line wins over the file")
        check(eff["max_body_bytes"] == "33554432", "default fills the rest")
        with open(conf, "a") as f:
            f.write("no_such_key 1\n")
        out = subprocess.run([weftd, "-f", conf, "-t"], capture_output=True, text=True, timeout=10)
        check(out.returncode != 0, "unknown key is fatal")
        check("weft.conf:6" in out.stderr and "no_such_key" in out.stderr,
              "error names file:line and key: %r" % out.stderr)
        out = subprocess.run([weftd, "--debounce-ms", "-5", "-t"], capture_output=True, text=True, timeout=10)
        check(out.returncode != 0 and "outside" in out.stderr, "out-of-range value refused: %r" % out.stderr)



# ---- forwarding tables and plan diffs (docs/api.md) -----------------------

def replay_forwarding(fw, routes, links):
    """Loads per (link id, direction) from the forwarding tables alone:
    each route's carried rate is injected at its source and pushed along
    the next hops by their fractions, per destination in topological order
    (Kahn's algorithm), the way a router with weighted splitting would
    forward it.  Written independently of the daemon's code."""
    ends = {l["id"]: (l["a"], l["b"]) for l in links}
    tables = {}
    for t in fw["tables"]:
        check(abs(sum(h["fraction"] for h in t["next_hops"]) - 1) <= 1e-12,
              "fractions of %s -> %s sum to 1" % (t["node"], t["dst"]))
        tables.setdefault(t["dst"], {})[t["node"]] = t["next_hops"]
    inject = {}
    for rt in routes:
        if rt["carried_bps"] > 0:
            inj = inject.setdefault(rt["dst"], {})
            inj[rt["src"]] = inj.get(rt["src"], 0.0) + rt["carried_bps"]
    load = {}
    for dst, inj in inject.items():
        tab = tables.get(dst, {})
        x = dict(inj)
        indeg = {}
        for hops in tab.values():
            for h in hops:
                indeg[h["next"]] = indeg.get(h["next"], 0) + 1
        queue = [v for v in tab if indeg.get(v, 0) == 0]
        done = 0
        while queue:
            v = queue.pop()
            done += 1
            for h in tab[v]:
                push = x.get(v, 0.0) * h["fraction"]
                a, b = ends[h["link"]]
                side = "a_to_b" if (a, b) == (v, h["next"]) else "b_to_a"
                check({a, b} == {v, h["next"]}, "hop %r joins %s" % (h, v))
                load[(h["link"], side)] = load.get((h["link"], side), 0.0) + push
                x[h["next"]] = x.get(h["next"], 0.0) + push
                indeg[h["next"]] -= 1
                if indeg[h["next"]] == 0 and h["next"] in tab:
                    queue.append(h["next"])
            x[v] = 0.0
        check(done == len(tab), "next hops towards %s loop" % dst)
        stranded = [v for v, r in x.items() if v != dst and r > 0]
        check(not stranded, "traffic to %s stranded at %r" % (dst, stranded))
    return load


def check_forwarding_reproduces_loads(d, rel=1e-9):
    fw = ok200(d.get("/v1/plan/forwarding"), "forwarding")
    rt = ok200(d.get("/v1/plan/routes"), "routes")
    lj = ok200(d.get("/v1/plan/loads"), "loads")
    check(fw["revision"] == rt["revision"] == lj["revision"],
          "one plan revision: %d %d %d" % (fw["revision"], rt["revision"], lj["revision"]))
    check(fw["loops"] == [], "no loops in a cost-minimal plan: %r" % fw["loops"][:3])
    got = replay_forwarding(fw, rt["routes"], lj["links"])
    for l in lj["links"]:
        for side in ("a_to_b", "b_to_a"):
            near(got.get((l["id"], side), 0.0), l[side]["load_bps"],
                 "replayed load of %s %s" % (l["id"], side), rel=rel)
    return fw


def test_forwarding_tiny():
    # Cost plan on the four-site network (comment at the top): A sends
    # 10G over L_AB and 5G over L_AC towards D, so A's table for D splits
    # 2/3 and 1/3; B and C send everything on to D.
    rev = setup_tiny(D, "cost")
    D.wait_plan(rev, timeout=60)
    time.sleep(0.2)
    fw = check_forwarding_reproduces_loads(D)
    check(set(fw) == {"revision", "model_revision", "node", "dst", "tables", "loops"},
          "keys %r" % list(fw))
    by = {(t["node"], t["dst"]): t for t in fw["tables"]}
    check(sorted(by) == [("A", "D"), ("B", "D"), ("C", "D")], "entries %r" % sorted(by))
    a = {h["link"]: h for h in by[("A", "D")]["next_hops"]}
    check(set(a) == {"L_AB", "L_AC"} and a["L_AB"]["next"] == "B", "A's hops %r" % a)
    near(a["L_AB"]["fraction"], 2 / 3, "A -> B fraction (10G of 15G)", rel=1e-12)
    near(a["L_AC"]["fraction"], 1 / 3, "A -> C fraction (5G of 15G)", rel=1e-12)
    near(by[("A", "D")]["through_bps"], 15e9, "A's traffic to D")
    check(set(by[("B", "D")]["next_hops"][0]) == {"link", "next", "fraction", "rate_bps"},
          "hop keys %r" % by[("B", "D")]["next_hops"][0])
    one = ok200(D.get("/v1/plan/forwarding?node=A&dst=D"), "filtered")
    check(one["node"] == "A" and one["dst"] == "D" and one["tables"] == [by[("A", "D")]],
          "filter by node and dst %r" % one)
    check(ok200(D.get("/v1/plan/forwarding?dst=A"), "dst A")["tables"] == [], "nothing goes to A")
    check([t["node"] for t in ok200(D.get("/v1/plan/forwarding?node=B"), "node B")["tables"]] == ["B"],
          "filter by node")
    expect_error(D.get("/v1/plan/forwarding?node=NOPE"), 404, "not_found", where="node")
    expect_error(D.get("/v1/plan/forwarding?dst=NOPE"), 404, "not_found", where="dst")


def test_forwarding_sndlib_germany50():
    # 662 demands from 50 sources: aggregation per destination merges
    # many sources' paths; the replay must still give every planned load.
    own_daemon_needed()
    path = os.path.join(ROOT, "tests", "data", "sndlib", "germany50.txt")
    with Daemon(extra_args=["--max-body", str(MAX_BODY)]) as d, open(path, "rb") as f:
        ok200(d.request("POST", "/v1/import?format=sndlib&matrix=g", f.read(),
                        ctype="text/plain"), "import")
        for obj in ("cost", "balance"):
            rev = ok200(d.put("/v1/policy", {"objective": obj, "headroom": 1.0, "matrix": "g"}),
                        "policy")["model_revision"]
            d.wait_plan(rev, timeout=120)
            fw = check_forwarding_reproduces_loads(d)
            check(len(fw["tables"]) > 50, "%s: %d tables" % (obj, len(fw["tables"])))


def test_plan_diff_link_down():
    # Hand derivation on the four-site network (comment at the top).  Cost
    # plan before: A-B-D 10G, A-C-D 5G.  With L_AB down: A-C-D 10G, 5G
    # unserved.  The demand A -> D crossed L_AB, so it changed; moved =
    # half the L1 distance of its per-path rates = (|10 - 0| + |5 - 10|) / 2
    # = 7.5G; share 7.5G / max(15G, 10G) = 0.5.
    own_daemon_needed()
    with Daemon() as d:
        rev = setup_tiny(d, "cost")
        p1 = d.wait_plan(rev, timeout=60)
        j = ok200(d.request("PATCH", "/v1/links/L_AB", {"state": "down"}), "down")
        p2 = d.wait_plan(j["model_revision"], timeout=60)
        time.sleep(0.2)
        p2 = ok200(d.get("/v1/plan"), "plan")
        check(p2["revision"] > p1["revision"], "a new plan")
        df = ok200(d.get("/v1/plan/diff?from=%d" % p1["revision"]), "diff")
        check(set(df) == {"from", "to", "from_model_revision", "to_model_revision",
                          "demands_compared", "demands_changed", "demands_added",
                          "demands_removed", "moved_bps", "from_carried_bps",
                          "to_carried_bps", "moved_share", "changes"}, "keys %r" % list(df))
        check((df["from"], df["to"]) == (p1["revision"], p2["revision"]), "revisions %r" % df)
        check(df["demands_compared"] == 1 and df["demands_changed"] == 1, "counts %r" % df)
        check(df["demands_added"] == 0 and df["demands_removed"] == 0, "no added/removed")
        near(df["moved_bps"], 7.5e9, "moved (hand-derived)")
        near(df["moved_share"], 0.5, "moved share (hand-derived)")
        near(df["from_carried_bps"], 15e9, "carried before")
        near(df["to_carried_bps"], 10e9, "carried after")
        c = df["changes"][0]
        check((c["change"], c["src"], c["dst"], c["priority"], c["occurrence"])
              == ("changed", "A", "D", 0, 0), "change %r" % c)
        near(c["moved_bps"], 7.5e9, "demand's moved traffic")
        # Admission fixes the carried rate within a tiny tolerance, so
        # rates are compared with near(), not exactly.
        old = sorted((tuple(x["links"]), x["rate_bps"]) for x in c["from"]["paths"])
        new = sorted((tuple(x["links"]), x["rate_bps"]) for x in c["to"]["paths"])
        check([x[0] for x in old] == [("L_AB", "L_BD"), ("L_AC", "L_CD")], "old paths %r" % old)
        near(old[0][1], 10e9, "old A-B-D rate")
        near(old[1][1], 5e9, "old A-C-D rate")
        check([x[0] for x in new] == [("L_AC", "L_CD")], "new paths %r" % new)
        near(new[0][1], 10e9, "new A-C-D rate")
        check(any("L_AB" in x["links"] for x in c["from"]["paths"]), "it crossed L_AB")
        same = ok200(d.get("/v1/plan/diff?from=%d" % p2["revision"]), "diff with itself")
        check(same["demands_changed"] == 0 and same["changes"] == [] and same["moved_bps"] == 0,
              "nothing moved %r" % same)
        expect_error(d.get("/v1/plan/diff"), 400, "invalid", where="from")
        expect_error(d.get("/v1/plan/diff?from=x1"), 400, "invalid", where="from")
        e = expect_error(d.get("/v1/plan/diff?from=%d" % (p2["revision"] + 5)), 404, "not_found",
                         where="from")
        check("has not been published" in e["message"], "message %r" % e["message"])
        # 32 plans are kept: after 32 more, the first one is gone.
        last = p2["revision"]
        for i in range(32):
            j = ok200(d.request("PATCH", "/v1/links/L_AC", {"te_metric": 3 + i}), "patch %d" % i)
            p = d.wait_plan(j["model_revision"], timeout=60, verify=False)
            check(p["revision"] > last, "patch %d made a plan" % i)
            last = p["revision"]
        e = expect_error(d.get("/v1/plan/diff?from=%d" % p1["revision"]), 404, "not_found",
                         where="from")
        want = "plan revision %d is no longer kept; the oldest kept is %d" % (p1["revision"], last - 31)
        check(want in e["message"], "message %r, want %r" % (e["message"], want))
        ok200(d.get("/v1/plan/diff?from=%d" % (last - 31)), "the oldest kept plan")

# ---- what-ifs and survivability sweeps (docs/api.md: What-if, Sweeps) -----
#
# The four-site network at the top of this file, with SRLGs: L_AB in SRLG
# 7, L_BD in SRLGs 7 and 9.  Cost objective, headroom 1, matrix tm (A -> D,
# 15G).  Hand derivations, from the comment at the top:
#   - nothing failed: cost 40e9, all 15G carried.
#   - L_AB failed (or SRLG 9, which takes L_BD): only A-C-D, 10G carried,
#     5G unserved, cost 10e9 x 4 = 40e9, utilisation 1 on A->C and C->D.
#     By LP duality the admission duals along A-C-D sum to 1 (the carried
#     rate's objective coefficient), so the bottleneck shadow prices sum to 1.
#   - SRLG 7: L_AB and L_BD down, the same as above.
#   - node C and L_AB failed: A and D are not joined: 15G cut off, nothing
#     carried, no bottleneck (no capacity would help).
#   - scale 0.5 (or scale_demands A -> D x 0.5): 7.5G fit on A-B-D: cost 15e9.
#   - a new link A-D (10G, metric 1): 10G direct at cost 1, 5G over A-B-D at
#     cost 2: 20e9.
#   - L_AB and L_BD at 20G: all 15G over A-B-D: 30e9.
#   - objective balance: U = 0.75, cost 45e9 (top of the file).
#   - headroom 0.5: 5G per route, 10G carried, cost 5e9 x 2 + 5e9 x 4 = 30e9,
#     max utilisation 0.5.

TOPO4_SRLG = json.loads(json.dumps(TOPO4))
TOPO4_SRLG["links"][0]["srlgs"] = [7]
TOPO4_SRLG["links"][1]["srlgs"] = [7, 9]


def frozen(d=None):
    """What a what-if or a refused sweep request must leave alone."""
    d = d or D
    h = health(d)
    return snapshot(d) + (h["plan_revision"], d.get("/v1/plan").body, d.get("/v1/sweeps").body)


def setup_tiny_srlg(d):
    ok200(d.put("/v1/topology", TOPO4_SRLG), "put topology with srlgs")
    ok200(d.put("/v1/matrices/tm", TM), "put matrix")
    rev = ok200(d.put("/v1/policy", {"objective": "cost", "headroom": 1.0, "matrix": "tm"}),
                "put policy")["model_revision"]
    return d.wait_plan(rev, timeout=60)


def whatif(d, body, what):
    return ok200(d.request("POST", "/v1/whatif", body), "what-if " + what)


def whatif_rejected(body, status, code, where=None, where_re=None, path="/v1/whatif",
                    method="POST", ctype="application/json"):
    """A bad what-if or sweep request: the error reply, and nothing changed
    (model, plan, sweeps)."""
    before = frozen()
    r = D.request(method, path, body, ctype=ctype)
    e = expect_error(r, status, code, where, where_re)
    after = frozen()
    check(after[0] == before[0], "%s %s changed the model revision %d -> %d"
          % (method, path, before[0], after[0]))
    check(after == before, "%s %s changed the stored model, the plan or the sweeps" % (method, path))
    return e


def test_whatif_tiny():
    p0 = setup_tiny_srlg(D)
    before = frozen()
    j = whatif(D, {}, "as is")
    near(j["plan"]["total_cost"], 40e9, "as is: cost (hand-derived)")
    near(j["plan"]["carried_bps"], 15e9, "as is: carried")
    check(j["scenario"]["failed_links"] == [] and j["scenario"]["added_links"] == [],
          "as is: scenario %r" % j["scenario"])
    check(j["model_revision"] == before[0] and j["plan_revision"] == p0["revision"],
          "revisions %r" % {k: j[k] for k in ("model_revision", "plan_revision")})
    near(j["compare"]["live"]["total_cost"], p0["total_cost"], "compare.live is the live plan")

    for body, failed in (({"fail": {"links": ["L_AB"]}}, ["L_AB"]),
                         ({"fail": {"srlgs": [9]}}, ["L_BD"]),
                         ({"fail": {"srlgs": [7]}}, ["L_AB", "L_BD"])):
        j = whatif(D, body, json.dumps(body))
        p = j["plan"]
        check(sorted(j["scenario"]["failed_links"]) == failed, "failed_links %r, want %r"
              % (j["scenario"]["failed_links"], failed))
        check(p["status"] == "partial", "%s: status %r" % (body, p["status"]))
        near(p["carried_bps"], 10e9, "%s: carried (only A-C-D)" % body)
        near(p["unserved_bps"], 5e9, "%s: unserved" % body)
        near(p["total_cost"], 40e9, "%s: cost 10e9 x 4" % body)
        near(p["max_utilization"], 1.0, "%s: max utilisation" % body)
        ud = j["unserved_demands"]
        check(len(ud) == 1 and j["unserved_demands_total"] == 1, "unserved_demands %r" % ud)
        check((ud[0]["src"], ud[0]["dst"], ud[0]["priority"], ud[0]["cut_off"]) == ("A", "D", 0, False),
              "unserved demand %r" % ud[0])
        near(ud[0]["rate_bps"], 15e9, "rate")
        near(ud[0]["unserved_bps"], 5e9, "demand's unserved")
        ex = p["explain"]
        check(ex["cut_off"] == [] and ex["cut_off_total"] == 0, "nothing cut off: %r" % ex)
        near(ex["cut_off_bps"], 0, "cut_off_bps")
        bn = ex["bottleneck"]
        check(bn and all((b["link"], b["from"], b["to"]) in (("L_AC", "A", "C"), ("L_CD", "C", "D"))
                         for b in bn), "bottleneck %r on A-C-D" % bn)
        near(sum(b["shadow_price"] for b in bn), 1.0, "shadow prices along A-C-D sum to 1 (LP duality)")
        by = {l["link"]: l for l in j["links"]}
        for lid in failed:
            near(by[lid]["a_to_b"]["load_bps"] + by[lid]["b_to_a"]["load_bps"], 0, lid + " failed, empty")
        near(by["L_AC"]["a_to_b"]["load_bps"], 10e9, "L_AC full")
        check(all(r["link"] not in failed for r in j["rising_links"]), "failed links do not rise")

    j = whatif(D, {"fail": {"nodes": ["C"], "links": ["L_AB"]}}, "C and L_AB")
    p = j["plan"]
    check(sorted(j["scenario"]["failed_links"]) == ["L_AB", "L_AC", "L_CD"],
          "a failed node takes its links: %r" % j["scenario"]["failed_links"])
    near(p["carried_bps"], 0, "nothing carried")
    check(p["status"] == "partial", "status %r" % p["status"])
    ud = j["unserved_demands"]
    check(len(ud) == 1 and ud[0]["cut_off"] is True, "cut off %r" % ud)
    ex = p["explain"]
    check(len(ex["cut_off"]) == 1 and ex["cut_off_total"] == 1, "explain.cut_off %r" % ex)
    c = ex["cut_off"][0]
    check((c["src"], c["dst"], c["priority"]) == ("A", "D", 0), "cut off demand %r" % c)
    near(c["rate_bps"], 15e9, "cut off rate")
    near(ex["cut_off_bps"], 15e9, "cut_off_bps")
    check(ex["bottleneck"] == [], "no bottleneck when only cut off: %r" % ex["bottleneck"])

    for body, cost in (({"scale": 0.5}, 15e9),
                       ({"scale_demands": [{"from": ["A"], "to": ["D"], "factor": 0.5}]}, 15e9),
                       ({"scale_demands": [{"from": ["B"], "factor": 0.5}]}, 40e9),
                       ({"add_links": [{"id": "L_AD", "a": "A", "b": "D", "capacity_bps": 1e10,
                                        "te_metric": 1}]}, 20e9),
                       ({"links": [{"id": "L_AB", "capacity_bps": 2e10},
                                   {"id": "L_BD", "capacity_bps": 2e10}]}, 30e9),
                       ({"policy": {"objective": "balance"}}, 45e9),
                       ({"time_limit_s": 5}, 40e9)):
        j = whatif(D, body, json.dumps(body))
        check(j["plan"]["status"] == "optimal", "%s: status %r" % (body, j["plan"]["status"]))
        near(j["plan"]["total_cost"], cost, "%s: cost (hand-derived)" % body)
        check("explain" not in j["plan"] or not j["plan"]["explain"].get("cut_off"),
              "%s: nothing cut off" % body)
        if "add_links" in body:
            check(j["scenario"]["added_links"] == ["L_AD"], "added_links %r" % j["scenario"])
            check("L_AD" in [l["link"] for l in j["links"]], "the added link has loads")
    j = whatif(D, {"policy": {"objective": "balance"}}, "balance")
    near(j["plan"]["max_utilization"], 0.75, "balance: U (cut bound 15/20)")
    j = whatif(D, {"policy": {"headroom": 0.5}}, "headroom 0.5")
    near(j["plan"]["carried_bps"], 10e9, "headroom 0.5: carried")
    near(j["plan"]["total_cost"], 30e9, "headroom 0.5: cost")
    near(j["plan"]["max_utilization"], 0.5, "headroom 0.5: max utilisation")
    check(frozen() == before, "what-ifs changed the model, the plan or the sweeps")


# Bad what-if and sweep requests: (method, path, body, status, code, where
# or a regex for it, content type).  Unknown ids, out-of-range numbers and
# wrong types name the member (docs/api.md: What-if, Sweeps).
BAD_WHATIFS = (
    ("POST", "/v1/whatif", {"fail": {"links": ["L_AB", "NOPE"]}}, 400, "invalid",
     re.compile(r"fail\.links(\[1\])?"), None),
    ("POST", "/v1/whatif", {"fail": {"nodes": ["Z"]}}, 400, "invalid", re.compile(r"fail\.nodes(\[0\])?"), None),
    # SRLG 12 exists in no link; -1 and 2^32 are outside 0..4294967295.
    ("POST", "/v1/whatif", {"fail": {"srlgs": [7, 12]}}, 400, "invalid",
     re.compile(r"fail\.srlgs(\[1\])?"), None),
    ("POST", "/v1/whatif", {"fail": {"srlgs": [-1]}}, 400, "invalid", re.compile(r"fail\.srlgs(\[0\])?"), None),
    ("POST", "/v1/whatif", {"fail": {"srlgs": [4294967296]}}, 400, "invalid",
     re.compile(r"fail\.srlgs(\[0\])?"), None),
    ("POST", "/v1/whatif", {"fail": {"links": "L_AB"}}, 400, "invalid", "fail.links", None),
    ("POST", "/v1/whatif", {"scale": -1}, 400, "invalid", "scale", None),
    ("POST", "/v1/whatif", {"scale": "2"}, 400, "invalid", "scale", None),
    # JSON has no infinity: 1e999 overflows a double and is not JSON here.
    ("POST", "/v1/whatif", '{"scale": 1e999}', 400, "invalid", re.compile(r"1:\d+"), None),
    ("POST", "/v1/whatif", {"scale_demands": [{"from": ["A"], "to": ["D"], "factor": -0.5}]}, 400,
     "invalid", "scale_demands[0].factor", None),
    ("POST", "/v1/whatif", {"scale_demands": [{"from": ["A"], "to": ["D"]}]}, 400, "invalid",
     re.compile(r"scale_demands\[0\](\.factor)?"), None),
    ("POST", "/v1/whatif", {"scale_demands": [{"from": ["Q"], "factor": 1}]}, 400, "invalid",
     re.compile(r"scale_demands\[0\]\.from(\[0\])?"), None),
    ("POST", "/v1/whatif", {"matrix": "nope"}, 404, "not_found", "matrix", None),
    ("POST", "/v1/whatif", {"links": [{"id": "NOPE", "capacity_bps": 1e9}]}, 400, "invalid",
     "links[0].id", None),
    ("POST", "/v1/whatif", {"links": [{"id": "L_AB", "capacity_bps": -1}]}, 400, "invalid",
     "links[0].capacity_bps", None),
    ("POST", "/v1/whatif", {"links": [{"id": "L_AB", "state": "sideways"}]}, 400, "invalid",
     "links[0].state", None),
    ("POST", "/v1/whatif", {"add_links": [{"id": "L_AB", "a": "A", "b": "D", "capacity_bps": 1e9,
                                           "te_metric": 1}]}, 400, "invalid", "add_links[0].id", None),
    ("POST", "/v1/whatif", {"add_links": [{"id": "L_new", "a": "A", "b": "Z", "capacity_bps": 1e9,
                                           "te_metric": 1}]}, 400, "invalid", "add_links[0].b", None),
    ("POST", "/v1/whatif", {"policy": {"headroom": 1.5}}, 400, "invalid", "policy.headroom", None),
    ("POST", "/v1/whatif", {"policy": {"matrix": "tm"}}, 400, "invalid", "policy.matrix", None),
    ("POST", "/v1/whatif", {"time_limit_s": 0}, 400, "invalid", "time_limit_s", None),
    ("POST", "/v1/whatif", {"time_limit_s": 31}, 400, "invalid", "time_limit_s", None),  # limit 30
    ("POST", "/v1/whatif", {"colour": "blue"}, 400, "invalid", "colour", None),
    ("POST", "/v1/whatif", "{}", 415, "unsupported_media_type", "Content-Type", "text/plain"),
    ("POST", "/v1/sweeps", {"kind": "bogus"}, 400, "invalid", "kind", None),
    ("POST", "/v1/sweeps", {}, 400, "invalid", "kind", None),
    ("POST", "/v1/sweeps", {"kind": "links", "scale": -1}, 400, "invalid", "scale", None),
    ("GET", "/v1/sweeps/999", None, 404, "not_found", None, None),
    ("GET", "/v1/sweeps/999/results.csv", None, 404, "not_found", None, None),
    ("POST", "/v1/sweeps/999/cancel", None, 404, "not_found", None, None),
    ("DELETE", "/v1/sweeps/999", None, 404, "not_found", None, None),
    # Last: a sweep wrongly started here would change what the cases
    # above compare.
    ("POST", "/v1/sweeps", {"kind": "links", "time_limit_s": 31}, 400, "invalid", "time_limit_s", None),
)


def test_whatif_bad_input():
    # Every case runs; the failures are reported together.
    setup_tiny_srlg(D)
    fails = []
    for method, path, body, status, code, where, ctype in BAD_WHATIFS:
        kw = {"where_re": where.pattern} if hasattr(where, "pattern") else {"where": where}
        try:
            e = whatif_rejected(body, status, code, path=path, method=method,
                                ctype=ctype or "application/json", **kw)
            if "NOPE" in json.dumps(body):
                check("NOPE" in e["message"], "message names the link: %r" % e["message"])
        except Fail as exc:
            fails.append("%s %s %s: %s" % (method, path, body if isinstance(body, str) else json.dumps(body), exc))
    # A sweep started by mistake must end before the next case.
    for sw in sweeps(D):
        wait_sweep(D, sw["id"], lambda x: x["state"] != "running", 60)
    check(not fails, "%d of %d refused as documented:\n# " % (len(BAD_WHATIFS) - len(fails), len(BAD_WHATIFS))
          + "\n# ".join(fails))


def sweeps(d):
    return ok200(d.get("/v1/sweeps"), "list sweeps")["sweeps"]


def wait_sweep(d, sid, until, timeout=90.0, what="sweep"):
    """Polls GET /v1/sweeps/ID until until(sweep) holds; bounded."""
    end = time.time() + timeout
    while time.time() < end:
        sw = ok200(d.get("/v1/sweeps/%d" % sid), "get sweep")
        if until(sw):
            return sw
        time.sleep(0.05)
    raise Fail("%s %d: condition not reached in %.0f s: %r" % (what, sid, timeout, sw))


def import_germany50(d, objective="balance"):
    path = os.path.join(ROOT, "tests", "data", "sndlib", "germany50.txt")
    with open(path, "rb") as f:
        ok200(d.request("POST", "/v1/import?format=sndlib&matrix=g", f.read(), ctype="text/plain"),
              "import germany50")
    rev = ok200(d.put("/v1/policy", {"objective": objective, "headroom": 1.0, "matrix": "g"}),
                "policy")["model_revision"]
    return d.wait_plan(rev, timeout=90, verify=False)


def start_sweep(d, body, total):
    r = d.request("POST", "/v1/sweeps", body)
    check(r.status == 202, "POST /v1/sweeps %r: status %d %r" % (body, r.status, r.body[:300]))
    j = r.json()
    check(j["total"] == total, "total %r, want %d" % (j["total"], total))
    check(j["href"] == "/v1/sweeps/%d" % j["id"], "href %r" % j)
    return j["id"]


def test_whatif_config_defaults():
    # The defaults named with the feature: workers 2, whatif_queue 2,
    # whatif_time_limit_s 30, sweep_max_scenarios 5000.
    import subprocess
    weftd = os.environ.get("WEFTD", os.path.join(ROOT, "build", "weftd"))
    out = subprocess.run([weftd, "-T"], capture_output=True, text=True, timeout=10)
    check(out.returncode == 0, "weftd -T: %r" % out.stderr)
    eff = dict(l.split(" ", 1) for l in out.stdout.splitlines())
    for k, v in (("workers", "2"), ("whatif_queue", "2"), ("whatif_time_limit_s", "30"),
                 ("sweep_max_scenarios", "5000")):
        check(eff.get(k) == v, "%s %r, want %r" % (k, eff.get(k), v))


# Six sites on a ring, six links: link-pairs makes 6 x 5 / 2 = 15 scenarios.
RING6 = {"nodes": [{"id": "R%d" % i} for i in range(6)],
         "links": [{"id": "ring%d" % i, "a": "R%d" % i, "b": "R%d" % ((i + 1) % 6),
                    "capacity_bps": 1e10, "te_metric": 1} for i in range(6)]}


def test_sweep_over_the_limit():
    own_daemon_needed()
    with Daemon(extra_args=["--sweep-max-scenarios", "10"]) as d:
        ok200(d.put("/v1/topology", RING6), "ring")
        ok200(d.put("/v1/matrices/r", {"demands": [{"src": "R0", "dst": "R3", "rate_bps": 1e9}]}), "matrix")
        rev = ok200(d.put("/v1/policy", {"objective": "cost", "headroom": 1.0, "matrix": "r"}),
                    "policy")["model_revision"]
        d.wait_plan(rev, timeout=60)
        before = frozen(d)
        r = d.request("POST", "/v1/sweeps", {"kind": "link-pairs"})
        expect_error(r, 400, "invalid")
        check(sweeps(d) == [], "a refused sweep is not listed: %r" % sweeps(d))
        check(frozen(d) == before, "a refused sweep changed the model or the plan")
        # Control: 6 link scenarios are within the limit.
        sid = start_sweep(d, {"kind": "links"}, 6)
        sw = wait_sweep(d, sid, lambda s: s["state"] != "running", 60)
        check(sw["state"] == "done" and sw["done"] == 6 and len(sw["results"]) == 6, "links sweep %r" % sw)
        # Ring: one link down leaves the other way round, 1G always fits.
        for x in sw["results"]:
            near(x["carried_bps"], 1e9, "carried with %r failed" % x["fail"])


def test_sweep_cancel_and_conflict():
    own_daemon_needed()
    with Daemon(extra_args=["--workers", "1", "--max-body", str(MAX_BODY)]) as d:
        import_germany50(d)
        sid = start_sweep(d, {"kind": "link-pairs"}, 88 * 87 // 2)
        r = d.request("POST", "/v1/sweeps", {"kind": "links"})
        e = expect_error(r, 409, "conflict")
        check(str(sid) in e["message"], "409 names the running sweep %d: %r" % (sid, e["message"]))
        r = d.request("DELETE", "/v1/sweeps/%d" % sid)
        expect_error(r, 409, "conflict")
        check(len(sweeps(d)) == 1, "one sweep listed")
        running = wait_sweep(d, sid, lambda s: s["done"] >= 3, 60)
        r = d.request("POST", "/v1/sweeps/%d/cancel" % sid)
        j = ok200(r, "cancel")
        check(j["state"] == "cancelled", "state %r" % j["state"])
        check(j["done"] < j["total"] == 3828, "done %r of %r" % (j["done"], j["total"]))
        sw = ok200(d.get("/v1/sweeps/%d" % sid), "get cancelled")
        check(sw["state"] == "cancelled" and sw["done"] == len(sw["results"]) < 3828,
              "cancelled sweep %r" % {k: sw.get(k) for k in ("state", "done", "total")})
        check(isinstance(sw.get("report"), dict), "a cancelled sweep has a report")
        time.sleep(0.5)
        sw2 = ok200(d.get("/v1/sweeps/%d" % sid), "get cancelled again")
        check(sw2["done"] == sw["done"] and sw2["state"] == "cancelled", "nothing runs after cancel")
        expect_error(d.request("POST", "/v1/sweeps/%d/cancel" % sid), 409, "conflict")
        r = d.request("DELETE", "/v1/sweeps/%d" % sid)
        check(r.status in (200, 204), "delete: %d %r" % (r.status, r.body[:200]))
        expect_error(d.get("/v1/sweeps/%d" % sid), 404, "not_found")
        check(sweeps(d) == [], "deleted sweep not listed")
        # docs/api.md: results are "the scenarios finished so far", done
        # counts them.
        check(running["done"] == len(running["results"]),
              "a running sweep reported done %d with %d results"
              % (running["done"], len(running["results"])))


def test_whatif_busy_503():
    own_daemon_needed()
    with Daemon(extra_args=["--workers", "1", "--whatif-queue", "0", "--max-body", str(MAX_BODY)]) as d:
        import_germany50(d)
        sid = start_sweep(d, {"kind": "link-pairs"}, 3828)
        got = []
        for _ in range(5):
            r = d.request("POST", "/v1/whatif", {"fail": {"links": ["L1"]}})
            got.append(r.status)
            if r.status == 503:
                break
        check(got[-1] == 503, "what-ifs while the one worker runs a sweep: %r" % got)
        expect_error(r, 503, "busy")
        ra = r.headers.get("Retry-After", "")
        check(ra.isdigit() and int(ra) >= 1, "Retry-After %r" % ra)
        ok200(d.request("POST", "/v1/sweeps/%d/cancel" % sid), "cancel")
        wait_sweep(d, sid, lambda s: s["state"] != "running", 60)
        # Control: with the worker free, the same what-if runs.
        ok200(d.request("POST", "/v1/whatif", {"fail": {"links": ["L1"]}}), "what-if after the sweep")


def respawn(d, sig, extra_args=()):
    """Stops d's weftd with sig and starts a new one on the same database."""
    import subprocess
    from weftd import free_port
    d.proc.send_signal(sig)
    d.proc.wait(timeout=30)
    d.log.close()
    d.port = free_port()
    d.base = "http://127.0.0.1:%d" % d.port
    d.log = open(d.log_path, "ab")
    weftd = os.environ.get("WEFTD", os.path.join(ROOT, "build", "weftd"))
    d.proc = subprocess.Popen([weftd, "--db", d.db, "--listen", "127.0.0.1:%d" % d.port,
                               "--debounce-ms", "20"] + list(extra_args),
                              stdout=d.log, stderr=subprocess.STDOUT)
    d.wait_ready()


def test_sweep_survives_restart():
    own_daemon_needed()
    args = ["--workers", "1", "--max-body", str(MAX_BODY)]
    with Daemon(extra_args=args) as d:
        import_germany50(d)
        s1 = start_sweep(d, {"kind": "links"}, 88)
        done1 = wait_sweep(d, s1, lambda s: s["state"] != "running", 90)
        check(done1["state"] == "done" and len(done1["results"]) == 88, "links sweep %r" % done1["state"])
        s2 = start_sweep(d, {"kind": "link-pairs"}, 3828)
        seen = wait_sweep(d, s2, lambda s: len(s["results"]) >= 2, 60)
        check(seen["state"] == "running", "still running %r" % seen["state"])
        respawn(d, signal.SIGKILL, args)
        sw = ok200(d.get("/v1/sweeps/%d" % s2), "sweep after SIGKILL")
        check(sw["state"] == "interrupted", "state %r, want interrupted" % sw["state"])
        check(sw["done"] == len(sw["results"]) < 3828, "done %r, %d results" % (sw["done"], len(sw["results"])))
        idx = [x["index"] for x in sw["results"]]
        check(len(set(idx)) == len(idx) and all(0 <= i < 3828 for i in idx), "indices %r" % idx[:10])
        kept = {x["index"]: x for x in sw["results"]}
        for x in seen["results"]:
            check(kept.get(x["index"]) == x, "result %d, listed before the SIGKILL, kept as it was: %r"
                  % (x["index"], kept.get(x["index"])))
        d1 = ok200(d.get("/v1/sweeps/%d" % s1), "finished sweep after SIGKILL")
        check(d1["state"] == "done" and d1["results"] == done1["results"],
              "finished sweep's results kept over the restart")
        check(d1.get("report") == done1.get("report"), "finished sweep's report kept")
        lst = sweeps(d)
        check([x["id"] for x in lst] == [s2, s1], "listed newest first: %r" % lst)
        check([x["state"] for x in lst] == ["interrupted", "done"], "states %r" % lst)
        # An interrupted sweep does not block the next one; a clean stop
        # (SIGTERM) while one runs leaves it interrupted too, with every
        # result finished before the stop.
        d.wait_plan(health(d)["model_revision"], timeout=90, verify=False)   # sweeps need a plan
        s3 = start_sweep(d, {"kind": "link-pairs"}, 3828)
        seen = wait_sweep(d, s3, lambda s: len(s["results"]) >= 1, 60)
        respawn(d, signal.SIGTERM, args)
        sw = ok200(d.get("/v1/sweeps/%d" % s3), "sweep after SIGTERM")
        check(sw["state"] == "interrupted", "state after SIGTERM %r" % sw["state"])
        check(sw["done"] == len(sw["results"]) >= seen["done"],
              "after SIGTERM %d results (done %d); %d scenarios were done before the stop"
              % (len(sw["results"]), sw["done"], seen["done"]))


# ---------------------------------------------------------------------------

def tiny_installed(name):
    """Every case but the first sees the tiny network installed."""
    if name != "test_health" and health()["model_revision"] == 0:
        setup_tiny(D)


def main():
    global D
    order = cases.select(globals(), sys.argv[1:])
    D = Daemon(extra_args=["--max-body", str(MAX_BODY)])
    # Last case: the shared daemon stops cleanly on SIGTERM, and a
    # sanitizer build reports nothing (its report lands in the log).
    failed = cases.run_then_stop(D, globals(), order, CASE_TIMEOUT_S, before=tiny_installed)
    return cases.finish(order, failed)


if __name__ == "__main__":
    sys.exit(main())
