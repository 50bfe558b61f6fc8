#!/usr/bin/python3
# SPDX-License-Identifier: GPL-3.0-or-later
"""weft-mpisweep under mpirun against the daemon's own sweeps.

Run from the repository root with /usr/bin/python3 (make check-mpi).
Starts one weftd on 127.0.0.1 (tests/lib/weftd.py) and loads abilene
(tests/data/sndlib/abilene.txt, capacities x 80, three links given SRLGs,
balance with headroom 0.9, the import's matrix) in writes close enough
together that the daemon solves the model once, from nothing, as
weft-mpisweep does (the plan's "warm" is false: a precondition checked).
`weft snapshot` writes the model snapshot.  Then, for the kinds links,
link-pairs, nodes and srlgs, the daemon's sweep (POST /v1/sweeps) is the
reference and `mpirun -np 2 weft-mpisweep` on the snapshot must give,
scenario by scenario, the same failure labels and statuses and the same
unserved_bps and max_utilization, and in the report the same worst load of
every link direction, the same unserved scenarios and the same worst
maximum utilisation, within 1e-6 relative.  Outside the project: for every
scenario networkx (has_path on the up links) finds the demands cut off,
and the unserved traffic must be at least their rate; results.csv and
links.csv are read with Python's csv module (RFC 4180) and must have the
daemon's columns and agree with sweep.json.

With --db the sweep is stored in the running daemon's database (SQLite in
WAL mode, the daemon still running) and read back through
GET /v1/sweeps/{id}, /v1/sweeps/{id}/results.csv and GET /v1/sweeps.
One rank and two ranks give the same results.  Bad command lines and bad
snapshots end with the documented exit codes (docs/operations.md): 1 bad
usage, 2 a bad snapshot, 3 a snapshot whose plan the model does not
solve to, 4 results that cannot be written; with two ranks too.

MPI runs on 127.0.0.1 only: --oversubscribe, the self and shared-memory
transports (--mca btl self,vader) and the out-of-band channel on the
loopback interface, so it works in a chroot with no network set up.
Each mpirun is bounded (MPIRUN_TIMEOUT_S), each case too (CASE_TIMEOUT_S).
Prints TAP and exits 1 if any case failed, 2 when a program is missing.
"""
import csv
import io
import json
import os
import shutil
import subprocess
import sys
import tempfile
import time

import networkx

ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
sys.path.insert(0, os.path.join(ROOT, "tests", "lib"))
os.environ.pop("WEFT_TEST_ADDR", None)     # the cases load their own model
from weftd import Daemon  # noqa: E402
import cases  # noqa: E402
from cases import check  # noqa: E402
import mpirun as mpi  # noqa: E402

WEFT = os.environ.get("WEFT", os.path.join(ROOT, "build", "weft"))
DATA = os.path.join(ROOT, "tests", "data", "sndlib")
REL = 1e-6
CASE_TIMEOUT_S = 240
MPIRUN_TIMEOUT_S = 120
SWEEP_TIMEOUT_S = 120
MATRIX = "ref"
RESULT_COLUMNS = ["index", "fail", "status", "max_utilization", "carried_bps",
                  "unserved_bps", "total_cost", "solve_ms", "moved_bps", "error"]

D = None
TMP = None
SNAP = None
DAEMON_SWEEPS = {}       # kind -> GET /v1/sweeps/{id} of the daemon's sweep


def close(a, b):
    return abs(a - b) <= REL * max(abs(a), abs(b)) + 1e-9


def mpirun(np, args):
    """Runs weft-mpisweep on np ranks (tests/lib/mpirun.py: 127.0.0.1,
    loopback and shared memory); returns (exit code, stdout, stderr)."""
    p = mpi.run(np, args, MPIRUN_TIMEOUT_S)
    return p.returncode, p.stdout.decode(), p.stderr.decode()


def ok_json(r, what):
    check(r.status // 100 == 2, "%s: HTTP %d %s" % (what, r.status, r.body[:300]))
    return r.json() if r.body else {}


def load(path):
    with open(path) as f:
        return json.load(f)


# ---- the reference: networkx's cut-off demands ---------------------------------

def cut_rate(topo, demands, fail):
    """Total rate of the demands whose ends no path of up links joins once
    fail ({"links": [...]}, {"nodes": [...]} or {"srlgs": [g]}) is down
    (networkx.has_path)."""
    g = networkx.Graph()
    g.add_nodes_from(n["id"] for n in topo["nodes"])
    down = set(fail.get("links", []))
    dead = set(fail.get("nodes", []))
    srlgs = set(fail.get("srlgs", []))
    for l in topo["links"]:
        if l.get("state", "up") != "up" or l["id"] in down:
            continue
        if l["a"] in dead or l["b"] in dead or srlgs & set(l.get("srlgs") or []):
            continue
        g.add_edge(l["a"], l["b"])
    return sum(d["rate_bps"] for d in demands
               if d["rate_bps"] > 0 and not networkx.has_path(g, d["src"], d["dst"]))


# ---- comparing two sweeps -------------------------------------------------------

def compare(ref, got, what):
    """Checks sweep got (weft-mpisweep's sweep.json or a stored sweep)
    against the daemon's sweep ref, scenario by scenario."""
    check(got["kind"] == ref["kind"] and got["state"] == "done",
          "%s: kind/state %s/%s" % (what, got["kind"], got["state"]))
    check(got["total"] == ref["total"] == len(ref["results"]) == len(got["results"]),
          "%s: totals %s vs %s" % (what, got["total"], ref["total"]))
    check(got["model_revision"] == ref["model_revision"] and
          got["plan_revision"] == ref["plan_revision"], "%s: revisions" % what)
    bad = []
    for a, b in zip(ref["results"], got["results"]):
        if a["index"] != b["index"] or a["fail"] != b["fail"] or a["status"] != b["status"]:
            bad.append("index %s: %s %s vs %s %s" % (a["index"], a["fail"], a["status"],
                                                     b["fail"], b["status"]))
            continue
        for k in ("unserved_bps", "max_utilization", "carried_bps"):
            if not close(a[k], b[k]):
                bad.append("index %s %s: daemon %.17g, mpi %.17g" % (a["index"], k, a[k], b[k]))
    check(not bad, "%s: %d scenario(s) differ: %s" % (what, len(bad), "; ".join(bad[:5])))
    ra, rb = ref["report"], got["report"]
    la = {(x["link"], x["from"], x["to"]): x for x in ra["links"]}
    lb = {(x["link"], x["from"], x["to"]): x for x in rb["links"]}
    check(set(la) == set(lb), "%s: report link directions differ: %s" %
          (what, sorted(set(la) ^ set(lb))[:5]))
    for k in la:
        for f in ("worst_load_bps", "capacity_bps", "live_load_bps", "needed_capacity_bps"):
            check(close(la[k][f], lb[k][f]), "%s: %s %s daemon %.17g, mpi %.17g" %
                  (what, k, f, la[k][f], lb[k][f]))
    ua = {x["index"]: x["unserved_bps"] for x in ra["unserved"]}
    ub = {x["index"]: x["unserved_bps"] for x in rb["unserved"]}
    check(set(ua) == set(ub) and all(close(ua[i], ub[i]) for i in ua),
          "%s: unserved scenarios differ" % what)
    wa, wb = ra["worst_max_utilization"], rb["worst_max_utilization"]
    check((wa is None) == (wb is None) and (wa is None or close(wa["value"], wb["value"])),
          "%s: worst_max_utilization %s vs %s" % (what, wa, wb))
    check(close(ra["headroom"], rb["headroom"]), "%s: headroom" % what)


def check_csv(outdir, sweep, links_header):
    """results.csv and links.csv (Python's csv module) against sweep.json."""
    with open(os.path.join(outdir, "results.csv"), newline="") as f:
        rows = list(csv.reader(f))
    check(rows[0] == RESULT_COLUMNS, "results.csv columns %s" % rows[0])
    check(len(rows) - 1 == len(sweep["results"]), "results.csv rows")
    for row, r in zip(rows[1:], sweep["results"]):
        check(int(row[0]) == r["index"] and json.loads(row[1]) == r["fail"] and
              row[2] == r["status"] and close(float(row[5]), r["unserved_bps"]),
              "results.csv row %s differs from sweep.json" % row[0])
    with open(os.path.join(outdir, "links.csv"), newline="") as f:
        rows = list(csv.reader(f))
    check(rows[0] == links_header, "links.csv columns %s, daemon %s" % (rows[0], links_header))
    check(len(rows) - 1 == len(sweep["report"]["links"]), "links.csv rows")
    for row, x in zip(rows[1:], sweep["report"]["links"]):
        check(row[0] == x["link"] and close(float(row[5]), x["worst_load_bps"]),
              "links.csv row %s differs from the report" % row[0])


# ---- set-up -----------------------------------------------------------------------

def setup():
    """abilene x 80 with SRLGs, balance, headroom 0.9: one cold solve."""
    body = open(os.path.join(DATA, "abilene.txt"), "rb").read()
    ok_json(D.request("POST", "/v1/import?format=sndlib&matrix=" + MATRIX, body,
                      ctype="text/plain"), "import")
    topo = ok_json(D.get("/v1/topology"), "GET /v1/topology")
    for l in topo["links"]:
        l["capacity_bps"] *= 80
    for i, groups in ((0, [5]), (3, [5, 9]), (7, [9]), (11, [4294967295])):
        topo["links"][i]["srlgs"] = groups
    ok_json(D.put("/v1/topology", topo), "PUT /v1/topology")
    rev = ok_json(D.put("/v1/policy", {"objective": "balance", "headroom": 0.9,
                                       "matrix": MATRIX}), "PUT /v1/policy")["model_revision"]
    plan = D.wait_plan(rev, verify=False)
    check(plan["warm"] is False and plan["formulation"] == "path",
          "precondition: the live plan should be one cold path solve, got warm=%s %s" %
          (plan["warm"], plan["formulation"]))


def daemon_sweep(kind):
    if kind in DAEMON_SWEEPS:
        return DAEMON_SWEEPS[kind]
    j = ok_json(D.request("POST", "/v1/sweeps", {"kind": kind}), "POST /v1/sweeps " + kind)
    end = time.time() + SWEEP_TIMEOUT_S
    while True:
        s = ok_json(D.get("/v1/sweeps/%d" % j["id"]), "GET /v1/sweeps/ID")
        if s["state"] != "running":
            break
        check(time.time() < end, "the daemon's %s sweep did not end in %d s" % (kind, SWEEP_TIMEOUT_S))
        time.sleep(0.2)
    check(s["state"] == "done", "the daemon's %s sweep ended %s" % (kind, s["state"]))
    DAEMON_SWEEPS[kind] = s
    return s


def links_header(sid):
    r = D.get("/v1/sweeps/%d/links.csv" % sid)
    check(r.status == 200, "GET links.csv: HTTP %d" % r.status)
    return next(csv.reader(io.StringIO(r.body.decode())))


def sweep_kind(kind, np=2):
    ref = daemon_sweep(kind)
    out = os.path.join(TMP, "%s-%d" % (kind, np))
    rc, so, se = mpirun(np, ["--snapshot", SNAP, "--kind", kind, "--out", out])
    check(rc == 0, "mpirun -np %d %s: exit %d\n%s" % (np, kind, rc, se[-800:]))
    got = load(os.path.join(out, "sweep.json"))
    if np > 1 and got["total"] >= 50:
        # Every rank, rank 0 included, solves a share (docs/operations.md).
        per = [int(x) for l in se.splitlines() if "scenarios per rank:" in l
               for x in l.split(":")[-1].split()]
        check(len(per) == np and sum(per) == got["total"] and min(per) > 0,
              "%s: scenarios per rank %s, total %d" % (kind, per, got["total"]))
    compare(ref, got, "%s on %d ranks" % (kind, np))
    check_csv(out, got, links_header(ref["id"]))
    snap = load(SNAP)
    demands = snap["matrix"]["demands"]
    short = [r["index"] for r in got["results"]
             if r["unserved_bps"] < cut_rate(snap["topology"], demands, r["fail"]) * (1 - REL)]
    check(not short, "%s: unserved below the cut-off traffic (networkx) at %s" % (kind, short[:5]))
    return got


# ---- cases ------------------------------------------------------------------------

def test_snapshot_written():
    global SNAP
    setup()
    SNAP = os.path.join(TMP, "snap.json")
    p = subprocess.run([WEFT, "--url", D.base, "snapshot", "--output", SNAP],
                       capture_output=True, timeout=60)
    check(p.returncode == 0, "weft snapshot: exit %d %s" % (p.returncode, p.stderr[-300:]))
    s = load(SNAP)
    h = ok_json(D.get("/v1/health"), "GET /v1/health")
    check(s["format"] == "weft-snapshot" and s["version"] == 1, "format/version")
    check(s["model_revision"] == h["model_revision"] and
          s["plan_revision"] == h["plan_revision"], "revisions against GET /v1/health")
    check(s["topology"] == ok_json(D.get("/v1/topology"), "topology"), "topology differs")
    check(s["policy"] == ok_json(D.get("/v1/policy"), "policy"), "policy differs")
    check(s["matrix"] == ok_json(D.get("/v1/matrices/" + MATRIX), "matrix"), "matrix differs")
    check(s["plan"]["revision"] == h["plan_revision"], "plan summary")
    p = subprocess.run([WEFT, "--url", D.base, "snapshot", "extra"], capture_output=True,
                       timeout=60)
    check(p.returncode == 1, "weft snapshot with an argument: exit %d" % p.returncode)


def test_daemon_snapshot():
    """GET /v1/snapshot, made from the published model in one piece,
    against the client's snapshot assembled from separate reads (the model
    has no unplaced demands, so the two must be equal member by member),
    then swept: the daemon's links sweep again."""
    r = D.get("/v1/snapshot")
    check(r.status == 200, "GET /v1/snapshot: HTTP %d %s" % (r.status, r.body[:200]))
    got, want = r.json(), load(SNAP)
    for k in want:
        check(got.get(k) == want[k], "GET /v1/snapshot member %s differs from weft snapshot's" % k)
    check(set(got) == set(want), "members %s vs %s" % (sorted(got), sorted(want)))
    path = os.path.join(TMP, "daemon-snap.json")
    with open(path, "wb") as f:
        f.write(r.body)
    out = os.path.join(TMP, "from-daemon-snap")
    rc, so, se = mpirun(2, ["--snapshot", path, "--kind", "links", "--out", out, "--quiet"])
    check(rc == 0, "mpirun on GET /v1/snapshot's file: exit %d\n%s" % (rc, se[-800:]))
    compare(daemon_sweep("links"), load(os.path.join(out, "sweep.json")), "links from GET /v1/snapshot")


def test_links_two_ranks():
    sweep_kind("links")


def test_link_pairs_two_ranks():
    sweep_kind("link-pairs")


def test_nodes_two_ranks():
    sweep_kind("nodes")


def test_srlgs_two_ranks():
    got = sweep_kind("srlgs")
    check(len(got["results"]) == 3, "3 distinct SRLGs, got %d" % len(got["results"]))


def test_one_rank_same_as_two():
    one = sweep_kind("link-pairs", np=1)
    two = load(os.path.join(TMP, "link-pairs-2", "sweep.json"))
    check(one["report"] == two["report"], "the reports of 1 and 2 ranks differ")


def test_stored_in_daemon_database():
    ref = daemon_sweep("links")
    out = os.path.join(TMP, "stored")
    rc, so, se = mpirun(2, ["--snapshot", SNAP, "--kind", "links", "--db", D.db,
                            "--out", out])
    check(rc == 0, "mpirun --db: exit %d\n%s" % (rc, se[-800:]))
    sid = int(so.strip().splitlines()[-1])
    check(sid not in (s["id"] for s in DAEMON_SWEEPS.values()), "a new sweep id")
    got = ok_json(D.get("/v1/sweeps/%d" % sid), "GET /v1/sweeps/%d" % sid)
    compare(ref, got, "stored sweep %d" % sid)
    check(load(os.path.join(out, "sweep.json")) == got,
          "sweep.json differs from GET /v1/sweeps/%d" % sid)
    check(got["done"] == got["total"] and got["finished_at"], "done and finished_at")
    lst = ok_json(D.get("/v1/sweeps"), "GET /v1/sweeps")["sweeps"]
    check(lst and lst[0]["id"] == sid, "GET /v1/sweeps lists it first")
    r = D.get("/v1/sweeps/%d/results.csv" % sid)
    rows = list(csv.reader(io.StringIO(r.body.decode())))
    check(r.status == 200 and rows[0] == RESULT_COLUMNS and len(rows) == got["total"] + 1,
          "GET results.csv of the stored sweep")
    # The daemon still answers and still sweeps after the other writer.
    ok_json(D.get("/v1/health"), "GET /v1/health after")


def bad(np, args, want, what, text=None):
    rc, so, se = mpirun(np, args)
    check(rc == want, "%s: exit %d, expected %d\n%s" % (what, rc, want, se[-600:]))
    if text is not None:
        check(text in se, "%s: stderr lacks %r:\n%s" % (what, text, se[-600:]))


def test_bad_arguments():
    out = os.path.join(TMP, "bad")
    base = ["--snapshot", SNAP, "--out", out]
    bad(1, [], 1, "no options", "--snapshot and --kind are required")
    bad(1, base + ["--kind", "links", "--frobnicate"], 1, "unknown option", "unknown option")
    bad(1, base + ["--kind", "links-pairs"], 1, "unknown kind", "must be links")
    bad(1, base + ["--kind", "links", "--scale", "-1"], 1, "negative scale", "--scale")
    bad(1, base + ["--kind", "links", "--scale", "2x"], 1, "scale not a number", "--scale")
    bad(1, base + ["--kind", "links", "--time-limit", "0"], 1, "time limit 0", "--time-limit")
    bad(1, base + ["--kind", "links", "--tolerance", "nan"], 1, "tolerance nan", "--tolerance")
    bad(1, base + ["--kind", "links", "--kind", "nodes"], 1, "kind twice", "given twice")
    bad(1, base + ["--kind"], 1, "kind without value", "needs a value")
    bad(1, ["--snapshot", SNAP, "--kind", "links"], 1, "no --out nor --db", "nowhere")
    bad(2, base + ["--kind", "links", "--bogus"], 1, "unknown option, 2 ranks", "unknown option")
    bad(1, ["--snapshot", os.path.join(TMP, "absent.json"), "--kind", "links", "--out", out],
        2, "missing snapshot")
    check(not os.path.exists(out), "nothing written on bad usage")


def write_snap(name, change):
    s = load(SNAP)
    change(s)
    path = os.path.join(TMP, name)
    with open(path, "w") as f:
        json.dump(s, f)
    return path


def test_bad_snapshots():
    out = os.path.join(TMP, "badsnap")
    for name, change, where in (
            ("v2.json", lambda s: s.update(version=2), "version"),
            ("fmt.json", lambda s: s.update(format="other"), "format"),
            ("extra.json", lambda s: s.update(extra=1), "extra"),
            ("link.json", lambda s: s["topology"]["links"][0].update(a="NOWHERE"),
             "topology.links[0].a"),
            ("mx.json", lambda s: s["matrix"].update(name="other"), "matrix.name"),
            ("rev.json", lambda s: s["plan"].update(model_revision=s["model_revision"] + 1),
             "plan.model_revision")):
        bad(2, ["--snapshot", write_snap(name, change), "--kind", "links", "--out", out], 2,
            "snapshot " + name, where)
    with open(os.path.join(TMP, "notjson.json"), "w") as f:
        f.write("{\"format\": ")
    bad(1, ["--snapshot", os.path.join(TMP, "notjson.json"), "--kind", "links", "--out", out],
        2, "not JSON")
    # A plan the model does not solve to: its max utilisation 1 % higher.
    wrong = write_snap("wrong.json", lambda s: s["plan"].update(
        max_utilization=s["plan"]["max_utilization"] * 1.01))
    bad(2, ["--snapshot", wrong, "--kind", "links", "--out", out], 3, "plan mismatch",
        "the base model solves to")
    check(not os.path.exists(out), "nothing written for a bad snapshot")


def test_unwritable_outputs():
    blocker = os.path.join(TMP, "a-file")
    with open(blocker, "w") as f:
        f.write("x")
    bad(2, ["--snapshot", SNAP, "--kind", "links", "--out", os.path.join(blocker, "sub")], 4,
        "--out under a file")
    bad(1, ["--snapshot", SNAP, "--kind", "links", "--db", TMP], 4, "--db a directory")
    absent = os.path.join(TMP, "no.db")
    bad(1, ["--snapshot", SNAP, "--kind", "links", "--db", absent], 4, "--db absent",
        "weftd makes its database")
    check(not os.path.exists(absent), "no database made at a mistyped path")


def main():
    global D, TMP
    why = mpi.missing(WEFT)
    if why is not None:
        print("Bail out! " + why)
        return 2
    order = cases.select(globals(), sys.argv[1:])
    TMP = tempfile.mkdtemp(prefix="weft-mpi-")
    failed = len(order)
    # A long debounce: the set-up's writes end in one solve.
    with Daemon(debounce_ms=1500) as D:
        try:
            failed = cases.run(globals(), order, CASE_TIMEOUT_S)
            if failed:
                cases.log_tail(D, 10)
        finally:
            shutil.rmtree(TMP, ignore_errors=True)
    return cases.finish(order, failed)


if __name__ == "__main__":
    sys.exit(main())
