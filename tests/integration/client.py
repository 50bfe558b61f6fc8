#!/usr/bin/python3
# SPDX-License-Identifier: GPL-3.0-or-later
"""The command-line client, build/weft, against a daemon of its own.

Run from the repository root with /usr/bin/python3 (make check-client).
Starts one weftd on 127.0.0.1 (tests/lib/weftd.py, a free port, a
temporary database), drives it with build/weft and checks every command
against the daemon's own API answers, fetched here over HTTP without the
client: the link table against GET /v1/plan/loads, link up/down against
GET /v1/links/ID, the what-if against POST /v1/whatif, the sweep views
against GET /v1/sweeps/ID, and so on.  Exit codes are checked for success,
a refusal (4xx), an unreachable or silent daemon and bad usage (weft(1),
EXIT STATUS).  Plan numbers on the tiny network are also held against the
optima derived by hand below.

The offline solve (weft solve) is checked twice from outside the client:
against the daemon's plan of the same file and policy (same field names as
GET /v1/plan; max_utilization, total_cost and carried_bps within 1e-9
relative), and against scipy's HiGHS on the node-arc LPs of
tests/lib/refmodel.py, built from an independent reading of the SNDlib
file (tests/lib/sndlib.py), as tests/reference/run.py builds its balance
reference (check 1).

Each test_* function is one case; the runner prints TAP ("ok N - name"),
bounds every case in time (CASE_TIMEOUT_S) and exits 1 if any failed.
"""
import json
import math
import os
import re
import shutil
import socket
import subprocess
import sys
import tempfile
import time

ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
sys.path.insert(0, os.path.join(ROOT, "tests", "lib"))
# These cases change the daemon's whole state: they always start their own.
os.environ.pop("WEFT_TEST_ADDR", None)
from weftd import Daemon  # noqa: E402
import cases  # noqa: E402
from cases import check  # noqa: E402
import refmodel  # noqa: E402
import sndlib  # noqa: E402

WEFT = os.environ.get("WEFT", os.path.join(ROOT, "build", "weft"))
DATA = os.path.join(ROOT, "tests", "data", "sndlib")
CASE_TIMEOUT_S = 120
RUN_TIMEOUT_S = 90             # one weft process
REL = 1e-6                     # plan numbers against HiGHS (as tests/reference)
SAME = 1e-9                    # the client's plan against the daemon's
NOTICE_S = 15                  # bound on the daemon noticing a new token

# ---------------------------------------------------------------------------
# The tiny network of tests/integration/run.py, as a network CSV
# (docs/csv-format.md):
#
#        L_AB (10G, metric 1)     L_BD (10G, metric 1)
#     A ---------------------- B ---------------------- D
#      \                                               /
#       `-- L_AC (10G, metric 2) -- C -- L_CD (10G, metric 2)
#
# One demand A -> D of 15 Gbit/s.  Cost objective, headroom 1: A-B-D costs
# 2 per bit/s and A-C-D 4, so A-B-D is filled to 10G and 5G go over A-C-D:
# L_AB and L_BD at utilisation 1, L_AC and L_CD at 0.5, cost 40e9, the
# reverse directions empty.  With L_AB down only A-C-D is left: 10G carried,
# 5G unserved (partial).  Every single link failure leaves one route of
# 10G, so each of the 4 scenarios of a links sweep leaves 5G unserved.  At
# scale 0.5 (7.5G) A-B-D carries it all: L_AB at 0.75, cost 15e9.
# ---------------------------------------------------------------------------
TINY_CSV = """# kind,id,a,b,capacity,te_metric
node,A
node,B
node,C
node,D
link,L_AB,A,B,10G,1
link,L_BD,B,D,10G,1
link,L_AC,A,C,10G,2
link,L_CD,C,D,10G,2
demand,A,D,15G,0
"""

D = None        # the daemon, started by main()
TMP = None      # a scratch directory


def near(got, want, what, rel=REL):
    check(got is not None and abs(got - want) <= rel * max(1.0, abs(want)),
          "%s: got %r, want %r (rel %g)" % (what, got, want, rel))


def same(got, want, what):
    """Relative SAME, scaled by the value itself (numbers may be 1e12)."""
    check(got is not None and want is not None and
          abs(got - want) <= SAME * max(abs(got), abs(want), 1e-300),
          "%s: client %r, daemon %r (rel %g)" % (what, got, want, SAME))


def weft(*args, url=True, env=None, stdin=None):
    """Runs build/weft; returns (exit code, stdout, stderr).  WEFT_URL
    points at the test daemon unless url is False or env overrides it."""
    e = dict(os.environ)
    e.pop("WEFT_URL", None)
    e.pop("WEFT_TOKEN", None)
    if url:
        e["WEFT_URL"] = D.base
    e.update(env or {})
    p = subprocess.run([WEFT] + [str(a) for a in args], env=e, input=stdin,
                       capture_output=True, text=True, timeout=RUN_TIMEOUT_S)
    return p.returncode, p.stdout, p.stderr


def ok(args, want_rc=0, **kw):
    rc, out, err = weft(*args, **kw)
    check(rc == want_rc, "weft %s: exit %d, want %d; stderr %r; stdout %r"
          % (" ".join(map(str, args)), rc, want_rc, err[-400:], out[-400:]))
    return out, err


def okjson(args, want_rc=0, **kw):
    out, _ = ok(["--json"] + list(args), want_rc, **kw)
    lines = out.splitlines()
    check(len(lines) == 1, "--json printed %d lines, want 1: %r" % (len(lines), out[:300]))
    return json.loads(out)


def api(method, path, body=None, ctype="application/json", status=200):
    r = D.request(method, path, body, ctype=ctype)
    check(r.status == status, "%s %s: HTTP %d, want %d: %r" % (method, path, r.status, status, r.body[:300]))
    return r.json() if r.body else None


def rev():
    return api("GET", "/v1/health")["model_revision"]


def scratch(name, text):
    path = os.path.join(TMP, name)
    with open(path, "w", encoding="utf-8") as f:
        f.write(text)
    return path


def tiny(objective="cost"):
    """Installs the tiny network through the API (not the client), with
    matrix tiny planned; returns the plan of that model."""
    api("POST", "/v1/import?format=csv&matrix=tiny", TINY_CSV, ctype="text/csv")
    r = api("PUT", "/v1/policy", {"objective": objective, "headroom": 1.0, "matrix": "tiny"})
    return D.wait_plan(r["model_revision"], timeout=60)


def closed_port():
    with socket.socket(socket.AF_INET, socket.SOCK_STREAM) as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def directions(loads):
    """(link, from, to) -> the direction's object, from GET /v1/plan/loads."""
    out = {}
    for l in loads["links"]:
        out[(l["id"], l["a"], l["b"])] = dict(l["a_to_b"], capacity_bps=l["capacity_bps"], state=l["state"])
        out[(l["id"], l["b"], l["a"])] = dict(l["b_to_a"], capacity_bps=l["capacity_bps"], state=l["state"])
    return out


def table_rows(out, first_head):
    """Rows of the table whose header line starts with first_head."""
    lines = out.splitlines()
    start = [i for i, l in enumerate(lines) if l.split()[:1] == [first_head]]
    check(start, "no table headed %s in %r" % (first_head, out[:300]))
    return [l.split() for l in lines[start[0] + 1:] if l.strip()]


# ---- usage, addresses, exit codes ------------------------------------------

def test_usage_errors_exit_1():
    # weft(1), EXIT STATUS: 1 for a bad command line, before any request.
    for args in ([], ["frobnicate"], ["sweep"], ["sweep", "frob"],
                 ["loads", "--top", "x"], ["loads", "--top", "0"],
                 ["loads", "extra"], ["routes", "A"], ["--timeout", "0", "status"],
                 ["--timeout"], ["link", "down"], ["whatif", "--scale", "-1"],
                 ["sweep", "start", "everything"], ["sweep", "watch", "x"],
                 ["solve"], ["solve", "--objective", "speed", "x.txt"],
                 ["status", "--bogus"]):
        rc, out, err = weft(*args)
        check(rc == 1, "weft %s: exit %d, want 1 (stderr %r)" % (" ".join(args), rc, err))
        check(err.startswith("weft: ") or err.startswith("usage: "),
              "weft %s: stderr %r" % (" ".join(args), err[:200]))
    rc, _, _ = weft("--url", "ftp://x", "status")
    check(rc == 1, "a URL that is not http(s): exit %d" % rc)
    rc, _, _ = weft("solve", "/nonexistent/net.txt")
    check(rc == 1, "an unreadable file: exit %d" % rc)


def test_help_lists_every_command():
    out, _ = ok(["help"])
    for cmd in ("status", "loads", "routes", "link show", "link down", "link up",
                "matrix list", "matrix put", "matrix rm", "import", "policy",
                "whatif", "sweep start", "sweep watch", "sweep report",
                "sweep list", "sweep cancel", "sweep rm", "solve"):
        check(("weft " + cmd) in out, "help does not list %r" % cmd)
    out, _ = ok(["sweep", "watch", "--help"])
    check("weft sweep watch" in out, "sweep watch --help: %r" % out)


def test_unreachable_daemon_exit_3():
    port = closed_port()
    rc, out, err = weft("status", url=False, env={"WEFT_URL": "http://127.0.0.1:%d" % port})
    check(rc == 3, "unreachable via WEFT_URL: exit %d, stderr %r" % (rc, err))
    check("cannot reach" in err and out == "", "stderr %r stdout %r" % (err, out))
    rc, _, err = weft("--url", "http://127.0.0.1:%d" % port, "loads")
    check(rc == 3, "unreachable via --url: exit %d (%r)" % (rc, err))
    # --url wins over WEFT_URL.
    rc, _, err = weft("--url", D.base, "matrix", "list", url=False,
                      env={"WEFT_URL": "http://127.0.0.1:%d" % port})
    check(rc == 0, "--url over a dead WEFT_URL: exit %d (%r)" % (rc, err))


def test_silent_daemon_times_out_exit_3():
    # A socket that accepts connections (the kernel's backlog) but never
    # answers: --timeout must end the request, exit 3.
    with socket.socket(socket.AF_INET, socket.SOCK_STREAM) as s:
        s.bind(("127.0.0.1", 0))
        s.listen(4)
        rc, out, err = weft("--timeout", "0.5", "--url", "http://127.0.0.1:%d" % s.getsockname()[1],
                            "status", url=False)
    check(rc == 3 and "no answer" in err, "silent daemon: exit %d, stderr %r" % (rc, err))


# ---- writes: import, policy, matrices, links --------------------------------

def test_import_counts_and_use():
    path = os.path.join(DATA, "abilene.txt")
    j = okjson(["import", path, "--matrix", "abl"])
    # Counts published with the instance (tests/data/PROVENANCE.md: 12/15/132).
    check((j["nodes"], j["links"], j["demands"], j["matrix"]) == (12, 15, 132, "abl"),
          "import reply %r" % j)
    check(j["model_revision"] == rev(), "revision %r, daemon %r" % (j["model_revision"], rev()))
    topo = api("GET", "/v1/topology")
    check(len(topo["nodes"]) == 12 and len(topo["links"]) == 15, "topology after import")
    out, _ = ok(["import", path])          # format and matrix from the name
    check("12 nodes, 15 links, 132 demands" in out and "matrix abilene" in out, out)
    check(api("GET", "/v1/matrices/abilene")["demands"], "matrix abilene missing")
    # The tiny network from a .csv name, made the planned matrix, --wait:
    # the hand-derived cost plan carries all 15G, so exit 0.
    api("PUT", "/v1/policy", {"objective": "cost", "headroom": 1.0, "matrix": None})
    csv = scratch("tiny.csv", TINY_CSV)
    out, _ = ok(["import", csv, "--use", "--wait"])
    check(api("GET", "/v1/policy")["matrix"] == "tiny", "--use did not plan matrix tiny")
    plan = api("GET", "/v1/plan")
    check(plan["matrix"] == "tiny" and plan["status"] == "optimal", "plan %r" % plan)
    near(plan["total_cost"], 40e9, "tiny cost plan (hand-derived)")
    check(("plan revision %d" % plan["revision"]) in out and "optimal" in out, out)
    # A file the daemon refuses: 400, exit 2, nothing changed.
    before = rev()
    bad = scratch("bad.csv", "node,A\nlink,L1,A,Z,10G\n")
    rc, out, err = weft("import", bad)
    check(rc == 2 and "400" in err and "line 2" in err, "bad import: %d %r" % (rc, err))
    check(rev() == before, "a refused import changed the revision")


def test_policy_show_and_change():
    tiny()
    check(okjson(["policy"]) == api("GET", "/v1/policy"), "policy --json differs from GET /v1/policy")
    out, _ = ok(["policy", "--objective", "balance", "--headroom", "0.8", "--wait"])
    p = api("GET", "/v1/policy")
    check(p["objective"] == "balance" and p["headroom"] == 0.8 and p["matrix"] == "tiny",
          "policy after change %r" % p)
    # Balance on the tiny network, hand-derived: U = 15/20 = 0.75 is what
    # the cut {L_AB, L_AC} allows; with headroom 0.8 that fits.
    plan = api("GET", "/v1/plan")
    near(plan["max_utilization"], 0.75, "balance max_utilization (hand-derived)")
    check("75.0%" in out, "the --wait line shows the plan: %r" % out)
    # The potential method with a 1 % gap target: the plan certifies its
    # maximum utilisation against the same hand-derived 0.75.
    ok(["policy", "--formulation", "potential", "--gap-target", "0.01", "--wait"])
    p = api("GET", "/v1/policy")
    check(p["formulation"] == "potential" and p["gap_target"] == 0.01, "policy after change %r" % p)
    plan = api("GET", "/v1/plan")
    check(plan["formulation"] == "potential" and plan["bound"] <= 0.75 * (1 + 1e-9)
          and plan["max_utilization"] >= 0.75 * (1 - 1e-9) and plan["gap"] <= 0.01,
          "potential plan against U* = 0.75: %r" % {k: plan.get(k) for k in
                                                   ("formulation", "bound", "max_utilization", "gap")})
    ok(["policy", "--objective", "cost", "--headroom", "1", "--formulation", "path",
        "--gap-target", "1e-7", "--wait"])
    check(api("GET", "/v1/policy")["objective"] == "cost", "objective not back to cost")
    rc, _, err = weft("policy", "--matrix", "no such!")
    check(rc == 2 and "400" in err, "bad matrix name: exit %d (%r)" % (rc, err))


def test_matrix_put_list_rm():
    tiny()
    # JSON, sent as it is.
    body = {"demands": [{"src": "A", "dst": "D", "rate_bps": 2.5e9, "priority": 1},
                        {"src": "B", "dst": "C", "rate_bps": 1e9}]}
    path = scratch("m2.json", json.dumps(body))
    j = okjson(["matrix", "put", "m2", path])
    check(j["name"] == "m2" and j["demands"] == 2, "put reply %r" % j)
    got = api("GET", "/v1/matrices/m2")["demands"]
    check([(d["src"], d["dst"], d["rate_bps"], d["priority"]) for d in got] ==
          [("A", "D", 2.5e9, 1), ("B", "C", 1e9, 0)], "stored m2 %r" % got)
    # CSV: only the demand rows are sent.  Expected: the rows read here by
    # the rules of docs/csv-format.md (SI suffix G = 1e9, priority 0 when
    # empty), not by weft's reader.
    csv = scratch("m3.csv", TINY_CSV + "demand,C,B,2.5M,3\ndemand,D,A,800,\n")
    out, _ = ok(["matrix", "put", "m3", csv])
    check("m3: 3 demands" in out, out)
    got = api("GET", "/v1/matrices/m3")["demands"]
    check([(d["src"], d["dst"], d["rate_bps"], d["priority"]) for d in got] ==
          [("A", "D", 15e9, 0), ("C", "B", 2.5e6, 3), ("D", "A", 800.0, 0)], "stored m3 %r" % got)
    lst = okjson(["matrix", "list"])
    check(lst == api("GET", "/v1/matrices"), "matrix list --json differs from GET /v1/matrices")
    out, _ = ok(["matrix", "list"])
    rows = {r[0]: r for r in table_rows(out, "NAME")}
    check(set(rows) == {m["name"] for m in lst["matrices"]}, "names in the table %r" % list(rows))
    check(rows["tiny"][-1] == "yes", "the planned matrix is not marked: %r" % rows["tiny"])
    check(rows["m3"][1] == "3", "m3 demands column %r" % rows["m3"])
    # A demand naming a node the topology lacks: 400, exit 2.
    bad = scratch("bad.json", json.dumps({"demands": [{"src": "A", "dst": "Z", "rate_bps": 1}]}))
    rc, _, err = weft("matrix", "put", "m4", bad)
    check(rc == 2 and "demands[0].dst" in err, "bad matrix: exit %d (%r)" % (rc, err))
    ok(["matrix", "rm", "m3"])
    api("GET", "/v1/matrices/m3", status=404)
    rc, _, err = weft("matrix", "rm", "m3")
    check(rc == 2 and "404" in err, "removing it again: exit %d (%r)" % (rc, err))


def test_link_down_up():
    tiny()
    out, _ = ok(["link", "down", "L_AB", "--wait"], want_rc=4)
    check(api("GET", "/v1/links/L_AB")["state"] == "down", "GET /v1/links/L_AB not down")
    plan = api("GET", "/v1/plan")
    # Hand-derived: only A-C-D is left, 10G carried, 5G unserved.
    check(plan["status"] == "partial", "plan %r" % plan["status"])
    near(plan["unserved_bps"], 5e9, "unserved with L_AB down (hand-derived)")
    check("partial" in out, out)
    check(okjson(["link", "show", "L_AB"]) == api("GET", "/v1/links/L_AB"),
          "link show --json differs from GET /v1/links/L_AB")
    out, _ = ok(["link", "show", "L_AB"])
    check(re.search(r"^state\s+down$", out, re.M) and "10.0 Gbit/s" in out, out)
    j = okjson(["link", "up", "L_AB"])
    check(j["id"] == "L_AB" and j["model_revision"] == rev(), "link up reply %r" % j)
    check(api("GET", "/v1/links/L_AB")["state"] == "up", "GET /v1/links/L_AB not up")
    D.wait_plan(rev(), timeout=60)
    rc, out, err = weft("link", "down", "NO_SUCH")
    check(rc == 2 and "404 not_found" in err and out == "", "unknown link: %d %r" % (rc, err))
    rc, out, err = weft("--json", "link", "show", "NO_SUCH")
    check(rc == 2 and out == "", "--json on a 404 prints nothing on stdout: %r" % out)


def add_token(db, role):
    """weftd token add (docs/operations.md): the token, printed alone."""
    p = subprocess.run([os.environ.get("WEFTD", os.path.join(ROOT, "build", "weftd")),
                        "token", "add", "--db", db, "--role", role],
                       capture_output=True, text=True, timeout=30)
    check(p.returncode == 0 and p.stdout.count("\n") == 1,
          "token add --role %s: %d %r" % (role, p.returncode, p.stderr))
    return p.stdout.strip()


def test_token_option_and_env():
    # docs/api.md, Authentication (RFC 6750 section 3): once a token
    # exists, a write without one is 401, one with a token of too low a
    # role 403; with auth_reads yes, reads need a read token too.  weft(1):
    # both are exit 2; --token wins over WEFT_TOKEN.  A daemon of its own:
    # once a token exists every write needs one, which the other cases
    # (they send none) must not meet.
    d = Daemon(extra_args=["--auth-reads", "yes"])
    try:
        # No token exists yet: nothing needs one (first start, loopback).
        r = d.request("POST", "/v1/import?format=csv&matrix=tiny", TINY_CSV, ctype="text/csv")
        check(r.status == 200, "import: %d %r" % (r.status, r.body[:200]))
        r = d.request("PUT", "/v1/policy", {"objective": "cost", "headroom": 1.0, "matrix": "tiny"})
        check(r.status == 200, "policy: %d %r" % (r.status, r.body[:200]))
        d.wait_plan(r.json()["model_revision"], timeout=60, verify=False)
        read, operate = add_token(d.db, "read"), add_token(d.db, "operate")

        def run(*args, token=None):
            env = {"WEFT_URL": d.base}
            if token is not None:
                env["WEFT_TOKEN"] = token
            return weft(*args, url=False, env=env)

        def state():
            r = d.request("GET", "/v1/links/L_AB", headers={"Authorization": "Bearer " + read})
            check(r.status == 200, "GET /v1/links/L_AB with the read token: %d" % r.status)
            return r.json()["state"]

        # The daemon re-reads its token list within about a second
        # (docs/api.md): wait, with a bound, until it knows the new ones.
        end = time.time() + NOTICE_S
        while any(d.request("GET", "/v1/health", headers={"Authorization": "Bearer " + t}).status != 200
                  for t in (read, operate)):
            check(time.time() < end, "the daemon did not take the new token in %d s" % NOTICE_S)
            time.sleep(0.1)
        rc, out, err = run("--token", read, "link", "down", "L_AB")
        check(rc == 2 and "403 forbidden" in err and "role" in err and out == "",
              "read token, link down: exit %d, stderr %r" % (rc, err))
        rc, out, err = run("link", "down", "L_AB")
        check(rc == 2 and "401 unauthorized" in err and "--token" in err and out == "",
              "no token, link down: exit %d, stderr %r" % (rc, err))
        rc, _, err = run("link", "show", "L_AB")
        check(rc == 2 and "401 unauthorized" in err, "no token, a read: exit %d, %r" % (rc, err))
        check(state() == "up", "L_AB changed by a refused request")
        # WEFT_TOKEN, sent also on the reads of --wait (auth_reads yes):
        # with L_AB down 5G of 15G are unserved (hand-derived, as in
        # test_link_down_up), exit 4.
        out, _ = ok(["link", "down", "L_AB", "--wait"], want_rc=4, url=False,
                    env={"WEFT_URL": d.base, "WEFT_TOKEN": operate})
        check("partial" in out and state() == "down", "link down with WEFT_TOKEN: %r" % out)
        # --token wins over WEFT_TOKEN.
        rc, _, err = run("--token", read, "link", "up", "L_AB", token=operate)
        check(rc == 2 and "403 forbidden" in err, "--token over WEFT_TOKEN: exit %d, %r" % (rc, err))
        check(state() == "down", "L_AB changed by a refused request")
        out, _ = ok(["link", "show", "L_AB"], url=False, env={"WEFT_URL": d.base, "WEFT_TOKEN": read})
        check(re.search(r"^state\s+down$", out, re.M), out)
        rc, _, err = run("--token=" + read + "x", "link", "show", "L_AB")
        check(rc == 2 and "401 unauthorized" in err and "not accept" in err,
              "an unknown token: exit %d, %r" % (rc, err))
        # A token that cannot go into a header: usage, nothing sent.
        for args, tok in ((["--token", ""], None), ([], "two words")):
            rc, _, err = run(*(args + ["link", "up", "L_AB"]), token=tok)
            check(rc == 1 and "token" in err, "bad token %r: exit %d, %r" % (args or tok, rc, err))
        ok(["link", "up", "L_AB"], url=False, env={"WEFT_URL": d.base, "WEFT_TOKEN": operate})
        check(state() == "up", "link up with WEFT_TOKEN")
    finally:
        d.stop()


# ---- reads: status, loads, routes --------------------------------------------

def test_status_matches_plan():
    tiny()
    j = okjson(["status"])
    plan = api("GET", "/v1/plan")
    check(j["plan"] == plan, "status --json plan differs from GET /v1/plan")
    check(set(j["health"]) == set(api("GET", "/v1/health")), "health members differ")
    out, _ = ok(["status"])
    check(re.search(r"^status\s+optimal$", out, re.M), out)
    check(re.search(r"^max utilisation\s+100\.0%$", out, re.M), "cost plan at 100%%: %r" % out)
    check(("revision %d of model revision %d" % (plan["revision"], plan["model_revision"])) in out, out)
    api("PATCH", "/v1/links/L_CD", {"state": "down"})
    D.wait_plan(rev(), timeout=60)
    j = okjson(["status"], want_rc=4)     # partial: exit 4
    check(j["plan"]["status"] == "partial", "status %r" % j["plan"]["status"])
    out, _ = ok(["status"], want_rc=4)
    check("bottlenecks" in out or "cut off" in out, "explain not shown: %r" % out)
    api("PATCH", "/v1/links/L_CD", {"state": "up"})
    D.wait_plan(rev(), timeout=60)


def test_loads_table_matches_api():
    tiny()
    loads = api("GET", "/v1/plan/loads")
    want = directions(loads)
    j = okjson(["loads"])
    check(j["revision"] == loads["revision"] and j["max_utilization"] == loads["max_utilization"],
          "loads --json head %r" % {k: j[k] for k in ("revision", "max_utilization")})
    got = j["directions"]
    check(len(got) == len(want) == 8, "%d directions, daemon %d" % (len(got), len(want)))
    for d in got:
        w = want[(d["link"], d["from"], d["to"])]
        for k in ("load_bps", "utilization", "headroom_bps", "shadow_price", "saturated",
                  "capacity_bps", "state"):
            check(d[k] == w[k], "%s %s->%s %s: %r, daemon %r" % (d["link"], d["from"], d["to"], k, d[k], w[k]))
    utils = [d["utilization"] for d in got]
    check(utils == sorted(utils, reverse=True), "not by utilisation, most first: %r" % utils)
    # Hand-derived cost plan: A-B-D full, A-C-D half.
    top = {(d["link"], d["from"]): d["utilization"] for d in got}
    near(top[("L_AB", "A")], 1.0, "L_AB A->B")
    near(top[("L_AC", "A")], 0.5, "L_AC A->C")
    # The table: same rows in the same order, utilisation to 0.1 %.
    out, _ = ok(["loads"])
    rows = table_rows(out, "LINK")
    check(len(rows) == 8, "%d table rows" % len(rows))
    for r, d in zip(rows, got):
        check((r[0], r[1], r[2]) == (d["link"], d["from"], d["to"]), "row %r vs %r" % (r, d))
        pct = float(r[7].rstrip("%"))
        check(abs(pct - 100 * d["utilization"]) <= 0.05 + 1e-9,
              "row %r: %s%%, daemon %r" % (r[0], pct, d["utilization"]))
    j2 = okjson(["loads", "--top", "3", "--ascending"])
    u2 = [d["utilization"] for d in j2["directions"]]
    check(len(u2) == 3 and u2 == sorted(utils)[:3], "--top 3 --ascending %r" % u2)
    out, _ = ok(["loads", "--top", "2"])
    check(len(table_rows(out, "LINK")) == 2, "--top 2: %r" % out)
    # --node and --link: the daemon's filters, against Python's filter of
    # the whole GET /v1/plan/loads.
    for args, keep in ((["--node", "B"], lambda l: "B" in (l["a"], l["b"])),
                       (["--link", "L_CD"], lambda l: l["id"] == "L_CD"),
                       (["--node", "A", "--link", "L_BD"], lambda l: False)):
        j3 = okjson(["loads"] + args)
        got3 = sorted((d["link"], d["from"], d["to"]) for d in j3["directions"])
        want3 = sorted(k for k in want if keep(next(l for l in loads["links"] if l["id"] == k[0])))
        check(got3 == want3, "loads %s: %r, want %r" % (" ".join(args), got3, want3))
    rc, _, err = weft("loads", "--node", "NOPE")
    check(rc == 2 and "not_found" in err, "unknown node: %d %r" % (rc, err))


def test_routes_of_a_demand():
    tiny()
    routes = api("GET", "/v1/plan/routes")
    want = [r for r in routes["routes"] if (r["src"], r["dst"]) == ("A", "D")]
    j = okjson(["routes", "A", "D"])
    check(j["routes"] == want and j["revision"] == routes["revision"],
          "routes --json differs from GET /v1/plan/routes")
    # Hand-derived: 10G on A-B-D, 5G on A-C-D.
    paths = {tuple(p["nodes"]): p["rate_bps"] for p in j["routes"][0]["paths"]}
    near(paths.get(("A", "B", "D")), 10e9, "A-B-D rate")
    near(paths.get(("A", "C", "D")), 5e9, "A-C-D rate")
    out, _ = ok(["routes", "A", "D"])
    check("A > B > D" in out and "L_AB,L_BD" in out and "66.7%" in out, out)
    rc, _, err = weft("routes", "D", "A")
    check(rc == 2 and "no demand from D to A" in err, "no such demand: %d %r" % (rc, err))


# ---- what-if and sweeps -----------------------------------------------------

def test_whatif_matches_api():
    tiny()
    j = okjson(["whatif", "--fail-link", "L_AB"], want_rc=4)
    ref = api("POST", "/v1/whatif", {"fail": {"links": ["L_AB"]}})
    for k in ("status", "max_utilization", "total_cost", "carried_bps", "unserved_bps", "demand_bps"):
        check(j["plan"][k] == ref["plan"][k], "plan.%s: client %r, API %r" % (k, j["plan"][k], ref["plan"][k]))
    check(j["scenario"] == ref["scenario"] and j["compare"]["scenario"] == ref["compare"]["scenario"],
          "scenario or compare differ")
    near(j["plan"]["unserved_bps"], 5e9, "what-if unserved (hand-derived)")
    out, _ = ok(["whatif", "--fail-link", "L_AB"], want_rc=4)
    check("failed links L_AB" in out and "partial" in out and "A    D" in out, out)
    # Scale 0.5 with a balance override: U = 7.5/20 = 0.375 (hand-derived
    # as for balance above).
    j = okjson(["whatif", "--scale", "0.5", "--objective", "balance"])
    ref = api("POST", "/v1/whatif", {"scale": 0.5, "policy": {"objective": "balance"}})
    check(j["plan"]["status"] == ref["plan"]["status"] == "optimal", "scaled status")
    same(j["plan"]["max_utilization"], ref["plan"]["max_utilization"], "scaled max_utilization")
    near(j["plan"]["max_utilization"], 0.375, "scaled balance U (hand-derived)")
    rc, _, err = weft("whatif", "--fail-node", "Z")
    check(rc == 2 and "400" in err, "unknown node: exit %d (%r)" % (rc, err))


PROGRESS = re.compile(r"^sweep (\d+): (\d+)/(\d+) scenarios \((\d+)%\), .* elapsed, about .* left$")
FINAL = re.compile(r"^sweep (\d+): (\w+), (\d+)/(\d+) scenarios in .+$")


def progress_lines(out):
    lines = out.splitlines()
    prog = [PROGRESS.match(l) for l in lines if PROGRESS.match(l)]
    fin = [FINAL.match(l) for l in lines if FINAL.match(l)]
    return prog, fin


def test_sweep_watch_report_list():
    tiny()
    # Not a terminal (a pipe): plain progress lines, ending when done.
    out, _ = ok(["sweep", "start", "links", "--watch", "--interval", "0.1"], want_rc=4)
    m = re.search(r"^sweep (\d+) started: links, 4 scenarios$", out, re.M)
    check(m, "no start line: %r" % out)
    sid = int(m.group(1))
    check("\r" not in out and "\033" not in out, "terminal control characters in a pipe")
    # Four tiny scenarios may all finish before the first poll, so there
    # may be no progress line here (test_sweep_progress_lines has them);
    # the watch ends with the sweep done.
    prog, fin = progress_lines(out)
    check(len(fin) == 1, "final lines %d: %r" % (len(fin), out))
    done = [int(p.group(2)) for p in prog]
    check(done == sorted(done) and all(0 <= d <= 4 for d in done), "done counts %r" % done)
    check(fin[0].group(2) == "done" and fin[0].group(3) == fin[0].group(4) == "4", fin[0].group(0))
    sw = api("GET", "/v1/sweeps/%d" % sid)
    check(sw["state"] == "done" and sw["done"] == 4, "GET sweep %r" % sw["state"])
    # Hand-derived: every single link failure leaves 5G unserved, exit 4.
    check(len(sw["report"]["unserved"]) == 4, "report.unserved %r" % sw["report"]["unserved"])
    check(okjson(["sweep", "report", sid], want_rc=4) == sw, "sweep report --json differs from GET")
    out, _ = ok(["sweep", "report", sid], want_rc=4)
    check("4 scenarios leave traffic unserved" in out, out)
    rows = table_rows(out, "LINK")
    check(len(rows) == len(sw["report"]["links"]), "report rows %d" % len(rows))
    for r, l in zip(rows, sw["report"]["links"]):
        check((r[0], r[1], r[2]) == (l["link"], l["from"], l["to"]), "report row %r" % r)
    check(okjson(["sweep", "list"]) == api("GET", "/v1/sweeps"), "sweep list --json differs")
    out, _ = ok(["sweep", "list"])
    check(any(r[:3] == [str(sid), "links", "done"] for r in table_rows(out, "ID")), out)
    # Cancelling a finished sweep: 409, exit 2.
    rc, _, err = weft("sweep", "cancel", sid)
    check(rc == 2 and "409" in err, "cancel a done sweep: %d %r" % (rc, err))
    # Started without --watch (JSON), then watched on its own.
    j = okjson(["sweep", "start", "link-pairs"])
    check(j["total"] == 6 and j["state"] in ("running", "done"), "start reply %r" % j)
    out, _ = ok(["sweep", "watch", j["id"], "--interval", "0.1"], want_rc=4)
    prog, fin = progress_lines(out)
    check(len(fin) == 1 and fin[0].group(2) == "done" and fin[0].group(4) == "6", out)
    final = okjson(["sweep", "watch", j["id"]], want_rc=4)
    check(final == api("GET", "/v1/sweeps/%d" % j["id"]), "watch --json differs from GET")
    ok(["sweep", "rm", j["id"]])
    api("GET", "/v1/sweeps/%d" % j["id"], status=404)


def test_sweep_progress_lines():
    # germany50's 3828 link pairs run for minutes: the watch (stdout a
    # pipe) prints a line each time the count of finished scenarios
    # changes; after two of them the sweep is cancelled through the API,
    # and the watch must end with the state the daemon reports.
    api("POST", "/v1/import?format=sndlib&matrix=g50", open(os.path.join(DATA, "germany50.txt"), "rb").read(),
        ctype="text/plain")
    r = api("PUT", "/v1/policy", {"objective": "cost", "headroom": 1.0, "matrix": "g50"})
    D.wait_plan(r["model_revision"], timeout=60, verify=False)
    e = dict(os.environ, WEFT_URL=D.base)
    p = subprocess.Popen([WEFT, "sweep", "start", "link-pairs", "--watch", "--interval", "0.1"], env=e,
                         stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    lines, sid = [], None
    try:
        for line in p.stdout:
            lines.append(line.rstrip("\n"))
            m = re.match(r"^sweep (\d+) started: link-pairs, 3828 scenarios$", lines[-1])
            if m:
                sid = int(m.group(1))
            if len([l for l in lines if PROGRESS.match(l)]) >= 2 or len(lines) > 50:
                break
        check(sid is not None, "no start line: %r" % lines)
        api("POST", "/v1/sweeps/%d/cancel" % sid)
        rest, err = p.communicate(timeout=RUN_TIMEOUT_S)
    finally:
        if p.poll() is None:
            p.kill()
            p.wait()
    out = "\n".join(lines) + "\n" + rest
    prog, fin = progress_lines(out)
    check(len(prog) >= 2, "progress lines %d: %r" % (len(prog), out[:500]))
    counts = [int(m.group(2)) for m in prog]
    check(counts == sorted(counts) and len(set(counts)) == len(counts),
          "a progress line per new count, rising: %r" % counts)
    check(all(m.group(3) == "3828" for m in prog), "totals in %r" % counts)
    sw = api("GET", "/v1/sweeps/%d" % sid)
    check(sw["state"] == "cancelled", "state %r" % sw["state"])
    check(len(fin) == 1 and fin[0].group(2) == "cancelled" and int(fin[0].group(3)) == sw["done"],
          "final line %r, daemon done %d" % ([f.group(0) for f in fin], sw["done"]))
    # weft(1): a cancelled sweep exits 3, or 4 when its finished scenarios
    # leave traffic unserved.
    want = 4 if sw["report"]["unserved"] else 3
    check(p.returncode == want, "exit %d, want %d (%r)" % (p.returncode, want, err))


def test_sweep_cancel():
    # abilene's 105 link pairs (15 links); the sweep may finish before the
    # cancel arrives (then 409, or 200 with the sweep done if it finished
    # while being stopped).  Either way the client's reply is the daemon's.
    api("POST", "/v1/import?format=sndlib&matrix=abl", open(os.path.join(DATA, "abilene.txt"), "rb").read(),
        ctype="text/plain")
    r = api("PUT", "/v1/policy", {"objective": "cost", "headroom": 1.0, "matrix": "abl"})
    D.wait_plan(r["model_revision"], timeout=60, verify=False)
    j = okjson(["sweep", "start", "link-pairs", "--time-limit", "5"])
    rc, out, err = weft("--json", "sweep", "cancel", j["id"])
    sw = api("GET", "/v1/sweeps/%d" % j["id"])
    if rc == 0:
        got = json.loads(out)
        check(got["state"] == sw["state"] and got["state"] in ("cancelled", "done")
              and got["done"] == sw["done"], "cancel reply %r, GET %r" % (out[:200], sw["state"]))
    else:
        check(rc == 2 and sw["state"] == "done", "cancel: exit %d (%r), state %s" % (rc, err, sw["state"]))


# ---- offline solve ------------------------------------------------------------

def test_solve_same_as_daemon():
    # The daemon's plan of abilene under balance is the reference: same
    # field names as GET /v1/plan, same numbers within 1e-9.  The policy is
    # set before the import, and the model before was another network, so
    # the daemon plans the file from scratch (not warm), as weft solve does.
    path = os.path.join(DATA, "abilene.txt")
    for form in ("path", "arc"):
        tiny()
        api("PUT", "/v1/policy", {"objective": "balance", "headroom": 1.0, "matrix": "same-" + form,
                                  "formulation": form})
        r = api("POST", "/v1/import?format=sndlib&matrix=same-" + form, open(path, "rb").read(),
                ctype="text/plain")
        plan = D.wait_plan(r["model_revision"], timeout=120, verify=False)
        check(plan["warm"] is False, "the daemon's plan is warm; not a like-for-like reference")
        # abilene does not fit (HiGHS U* = 60.4, tests/reference): exit 4.
        mine = okjson(["solve", path, "--objective", "balance", "--formulation", form], want_rc=4, url=False)
        check(sorted(mine) == sorted(plan), "%s: fields differ: client only %r, daemon only %r"
              % (form, sorted(set(mine) - set(plan)), sorted(set(plan) - set(mine))))
        check(mine["status"] == plan["status"] == "partial", "status %r / %r" % (mine["status"], plan["status"]))
        check(mine["formulation"] == plan["formulation"] == form, "formulation %r" % mine["formulation"])
        for k in ("max_utilization", "total_cost", "carried_bps", "unserved_bps", "demand_bps"):
            same(mine[k], plan[k], "%s %s" % (form, k))
        check(mine["revision"] == 0 and mine["matrix"] is None, "offline revision/matrix %r %r"
              % (mine["revision"], mine["matrix"]))


def csv_of(net, cap_factor):
    """A network CSV (docs/csv-format.md) of an SNDlib network read by
    tests/lib/sndlib.py, capacities x cap_factor; numbers to 17 digits."""
    def num(x):
        return ("%.17g" % x).replace("e+", "e")
    rows = ["node,%s" % n for n in net.nodes]
    rows += ["link,%s,%s,%s,%s,%s" % (l.id, l.a, l.b, num(l.capacity_bps * cap_factor), num(l.te_metric))
             for l in net.links]
    rows += ["demand,%s,%s,%s" % (d.src, d.dst, num(d.rate_bps)) for d in net.demands]
    return "\n".join(rows) + "\n"


def test_solve_against_highs():
    # Reference: scipy's HiGHS on the node-arc LPs of tests/lib/refmodel.py
    # (min max utilisation U*; lexicographic max carried), from polska.txt
    # read by tests/lib/sndlib.py, as check 1 of tests/reference/run.py.
    path = os.path.join(DATA, "polska.txt")
    net = sndlib.load(path)
    pb = refmodel.from_network(net)
    u, _ = refmodel.min_max_util(pb)
    check(u > 1, "polska's U* is %g; the case expects it not to fit" % u)
    mc = refmodel.max_carried(pb)[0]
    j = okjson(["solve", path, "--objective", "balance"], want_rc=4, url=False)
    check(j["status"] == "partial", "polska balance status %r" % j["status"])
    near(j["carried_bps"], mc, "polska balance carried_bps vs HiGHS max carried")
    # Capacities x F = 1.25 ceil(U*): everything fits and the balance
    # optimum is U*/F.  As a CSV file, so the CSV reader is used too.
    factor = 1.25 * math.ceil(u)
    csv = scratch("polska-scaled.csv", csv_of(net, factor))
    for form in ("path", "arc"):
        j = okjson(["solve", csv, "--objective", "balance", "--formulation", form], url=False)
        check(j["status"] == "optimal", "scaled polska status %r" % j["status"])
        near(j["max_utilization"], u / factor, "polska x%g %s max_utilization vs HiGHS U*/F" % (factor, form))
    # Cost with everything fitting: HiGHS min-cost LP on the scaled network.
    cost, _ = refmodel.min_cost(refmodel.from_network(net, cap_factor=factor))
    j = okjson(["solve", csv, "--format", "csv"], url=False)
    check(j["objective"] == "cost", "default objective %r" % j["objective"])
    near(j["total_cost"], cost, "polska x%g cost total_cost vs HiGHS min cost" % factor)
    # The text view and --loads: the table's rows are the plan's directions.
    out, _ = ok(["solve", csv, "--loads", "--top", "5"], url=False)
    check(re.search(r"^status\s+optimal$", out, re.M) and len(table_rows(out, "LINK")) == 5, out)
    both = okjson(["solve", csv, "--loads"], url=False)
    check(set(both) == {"plan", "loads"} and len(both["loads"]["links"]) == len(net.links),
          "solve --loads --json members %r" % list(both))
    # A file that does not parse: exit 2 with the line.
    bad = scratch("bad.txt", "NODES (\n  A ( 0 0 )\n)\nLINKS (\n  L1 ( A Z ) 10 0 1 0 ( )\n)\n")
    rc, _, err = weft("solve", bad, url=False)
    check(rc == 2 and "line" in err, "bad file: exit %d (%r)" % (rc, err))


# ---- the manual -----------------------------------------------------------

def test_man_page():
    page = os.path.join(ROOT, "docs", "weft.1")
    text = open(page, encoding="utf-8").read()
    # groff's own checks (-ww: all warnings) must find nothing, at the
    # default line length and at those of narrow and wide terminals.
    groff = shutil.which("groff")
    check(groff is not None, "groff is not installed (deploy/install-deps.sh installs groff-base)")
    for ll in (None, "60n", "78n", "100n"):
        p = subprocess.run([groff, "-man", "-Tutf8", "-ww", "-z"] + (["-rLL=" + ll] if ll else []) +
                           [page], capture_output=True, text=True, timeout=30)
        check(p.returncode == 0 and p.stderr == "", "groff (LL %s): %r" % (ll, p.stderr[:500]))
    # Every command and option of "weft help" is described.
    out, _ = ok(["help"])
    words = set(re.findall(r"^\s+weft ([a-z]+(?: [a-z]+)?)", out, re.M))
    opts = set(re.findall(r"--([a-z][a-z-]*)", out))
    plain = text.replace("\\-", "-").replace("\\fB", "").replace("\\fR", "").replace("\\fI", "")
    for w in words:
        check(w.split()[0] in plain, "command %r not in the man page" % w)
    for o in opts | {"url", "token", "json", "timeout"}:
        check("--" + o in plain, "option --%s not in the man page" % o)
    check("WEFT_URL" in plain and "WEFT_TOKEN" in plain and "EXIT STATUS" in plain,
          "environment or exit status missing")


# ---------------------------------------------------------------------------

def main():
    global D, TMP
    if not os.access(WEFT, os.X_OK):
        print("Bail out! %s is not built" % WEFT)
        return 2
    order = cases.select(globals(), sys.argv[1:])
    failed = 0
    TMP = tempfile.mkdtemp(prefix="weft-client-")
    D = Daemon()
    try:
        failed = cases.run(globals(), order, CASE_TIMEOUT_S)
    finally:
        if failed:
            cases.log_tail(D, 10)
        D.stop()
        shutil.rmtree(TMP, ignore_errors=True)
    return cases.finish(order, failed)


if __name__ == "__main__":
    sys.exit(main())
