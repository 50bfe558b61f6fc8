# SPDX-License-Identifier: GPL-3.0-or-later
"""The continental-scale bench: full matrices on the Kdl topology.

DESIGN.  The cases are tests/bench/synth.py's Kdl networks (Internet
Topology Zoo graph, invented capacities and gravity matrix, seed
20240611) with every node a site: 754 sites = 567,762 demands.  For each
size in --sites (default 754):

  1. weft: a real weftd on 127.0.0.1 (--max-body 512 MiB), policy balance,
     formulation "potential", gap_target 0.01; PUT /v1/topology, then PUT
     the matrix and wait for the plan.  Recorded: the PUT's time, the wall
     time from the PUT to the published plan, the plan's solve_ms, gap,
     bound, max utilisation, paths, passes; the daemon's peak memory
     (VmHWM).  --repeat cold runs (a new daemon each), the median quoted.
     Then incremental re-solves: the --links most loaded links one at a
     time down and up again (PATCH); each re-solve's solve_ms over the
     median full solve_ms.  And the first page of routes (limit 1000),
     identity and gzip, and the whole loads document.
  2. the engine alone (build/tests/bench/engine_bench on the same network
     in SNDlib native form): wall time and peak memory (/usr/bin/time).
  3. COIN-OR CLP on the node-arc LP of the same problem (min max
     utilisation, commodities per source; tests/lib/refmodel.py writes it
     as MPS), bounded by --clp-seconds: its status, iterations and
     objective when it stopped.  When CLP finishes, its optimum checks the
     weft plan's certificate: bound <= U* <= max utilisation.

Output: one table on stdout, all records in build/bench/scale.json.
Usage: scale.py [--sites N[,N...]] [--repeat R] [--links K]
                [--clp-seconds S] [--no-clp]
Environment: WEFTD.
"""
import gzip
import json
import os
import re
import statistics
import subprocess
import sys
import tempfile
import time

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.dirname(os.path.dirname(HERE))
sys.path.insert(0, os.path.join(ROOT, "tests", "lib"))
sys.path.insert(0, HERE)

import refmodel  # noqa: E402
import synth  # noqa: E402
from weftd import Daemon  # noqa: E402

OUT = os.path.join(ROOT, "build", "bench", "scale.json")
ENGINE_BENCH = os.path.join(ROOT, "build", "tests", "bench", "engine_bench")
GAP = 0.01
TIMEOUT = 900.0


def vm(pid, key):
    with open("/proc/%d/status" % pid) as f:
        for line in f:
            if line.startswith(key + ":"):
                return int(line.split()[1]) / 1024.0
    return None


def ok(r, what):
    if r.status // 100 != 2:
        raise RuntimeError("%s: HTTP %d %s" % (what, r.status, r.body[:300]))
    return r.json() if r.body else {}


def plan_fields(p):
    return {k: p.get(k) for k in ("status", "max_utilization", "gap", "bound", "formulation",
                                  "solve_ms", "columns", "iterations", "warm", "model_revision")}


def weft_cold(inst, matrix_body):
    """One daemon, one cold plan; returns its record and the daemon."""
    d = Daemon(extra_args=["--max-body", str(1 << 29)])
    try:
        ok(d.put("/v1/topology", inst["topology"], timeout=TIMEOUT), "PUT topology")
        pol = ok(d.get("/v1/policy"), "GET policy")
        pol.update({"objective": "balance", "headroom": 1.0, "formulation": "potential",
                    "gap_target": GAP, "matrix": "full"})
        ok(d.put("/v1/policy", pol), "PUT policy")
        t0 = time.time()
        r = ok(d.put("/v1/matrices/full", matrix_body, timeout=TIMEOUT), "PUT matrix")
        t_put = time.time() - t0
        p = d.wait_plan(r["model_revision"], timeout=TIMEOUT, verify=False)
    except BaseException:
        d.stop()
        raise
    rec = plan_fields(p)
    rec.update({"put_s": t_put, "put_to_plan_s": time.time() - t0,
                "daemon_hwm_mib": vm(d.proc.pid, "VmHWM")})
    return rec, d


def incremental(d, k):
    loads = ok(d.get("/v1/plan/loads"), "GET loads")["links"]
    top = sorted(loads, key=lambda l: -max(l["a_to_b"]["utilization"],
                                           l["b_to_a"]["utilization"]))[:k]
    out = []
    for l in top:
        for state in ("down", "up"):
            r = ok(d.request("PATCH", "/v1/links/" + l["id"], {"state": state},
                             timeout=TIMEOUT), "PATCH link")
            p = d.wait_plan(r["model_revision"], timeout=TIMEOUT, verify=False)
            rec = plan_fields(p)
            rec.update({"link": l["id"], "event": "link_" + state})
            out.append(rec)
    return out


def reading(d):
    out = {}
    for name, path, hdrs in (("routes_page", "/v1/plan/routes?limit=1000", {}),
                             ("routes_page_gzip", "/v1/plan/routes?limit=1000",
                              {"Accept-Encoding": "gzip"}),
                             ("loads", "/v1/plan/loads", {})):
        t0 = time.time()
        r = d.request("GET", path, headers=hdrs, timeout=TIMEOUT)
        out[name] = {"status": r.status, "bytes": len(r.body), "ms": (time.time() - t0) * 1e3}
        if name == "routes_page_gzip" and r.status == 200:
            out[name]["identity_bytes"] = len(gzip.decompress(r.body))
    return out


def engine_alone(inst, tmp):
    path = os.path.join(tmp, "kdl.txt")
    synth.write_sndlib(inst, path)
    cmd = ["/usr/bin/time", "-f", "%e %M", ENGINE_BENCH, path, "--objective", "balance",
           "--formulation", "potential", "--gap", str(GAP), "--fail-links", "0"]
    p = subprocess.run(cmd, stdout=subprocess.PIPE, stderr=subprocess.PIPE, timeout=TIMEOUT)
    last = p.stderr.decode().strip().splitlines()[-1].split()
    line = [x for x in p.stdout.decode().splitlines() if x.startswith("{")]
    rec = json.loads(line[0]) if line else {}
    return {"wall_s": float(last[0]), "peak_mib": int(last[1]) / 1024.0,
            "solve_ms": rec.get("ms"), "gap": rec.get("gap")}


def clp_bounded(inst, tmp, seconds):
    pb = refmodel.from_weft(inst["topology"], inst["demands"])
    mps = os.path.join(tmp, "kdl-arc.mps")
    t0 = time.time()
    c, A_ub, b_ub, A_eq, b_eq = refmodel.min_max_util_matrices(pb)
    refmodel.write_mps(mps, c, A_ub, b_ub, A_eq, b_eq)
    rec = {"columns": int(A_ub.shape[1]), "rows": int(A_ub.shape[0] + A_eq.shape[0]),
           "mps_write_s": time.time() - t0, "limit_s": seconds}
    t0 = time.time()
    try:
        p = subprocess.run(["clp", mps, "-primalT", "1e-10", "-dualT", "1e-10",
                            "-seconds", str(seconds), "-solve"], stdout=subprocess.PIPE,
                           stderr=subprocess.STDOUT, timeout=seconds + 600)
        out = p.stdout.decode("utf-8", "replace")
    except subprocess.TimeoutExpired:
        out = ""
    rec["wall_s"] = time.time() - t0
    # "Optimal objective 0.33 - 28 iterations time 30.1" or, at the time
    # limit, "Stopped objective 0.11 - 0 iterations time 301.1, Presolve
    # 3.42, Idiot 297.23" (CLP 1.17's last line).
    m = re.search(r"^(Optimal|Stopped(?: on \w+)?|Primal infeasible|Dual infeasible)\s+"
                  r"objective\s+(\S+)\s+-\s+(\d+) iterations", out, re.M)
    if m:
        rec.update({"status": m.group(1), "objective": float(m.group(2)),
                    "iterations": int(m.group(3))})
    else:
        rec.update({"status": "no result"})
    rec["log_tail"] = out[-400:]
    os.unlink(mps)
    return rec


def main(argv):
    sites, repeat, links, clp_s, clp = [754], 3, 5, 300, True
    i = 0
    while i < len(argv):
        a = argv[i]
        if a == "--sites":
            sites = [int(x) for x in argv[i + 1].split(",")]
        elif a == "--repeat":
            repeat = int(argv[i + 1])
        elif a == "--links":
            links = int(argv[i + 1])
        elif a == "--clp-seconds":
            clp_s = int(argv[i + 1])
        elif a == "--no-clp":
            clp, i = False, i - 1
        else:
            print(__doc__.strip().split("Usage: ")[1].split("\nEnvironment")[0])
            return 2
        i += 2
    os.makedirs(os.path.dirname(OUT), exist_ok=True)
    results = []
    bad = 0
    for n in sites:
        inst = synth.build(sites=n)
        body = json.dumps({"demands": inst["demands"]}).encode()
        rec = {"sites": n, "demands": len(inst["demands"]), "info": inst["info"]}
        cold = []
        for r in range(repeat):
            c, d = weft_cold(inst, body)
            try:
                if r == 0:
                    rec["incremental"] = incremental(d, links)
                    rec["reading"] = reading(d)
                    c["daemon_hwm_mib"] = vm(d.proc.pid, "VmHWM")
            finally:
                d.stop()
            cold.append(c)
            print("  %d sites cold run %d: %s" % (n, r + 1, json.dumps(c)), flush=True)
        rec["cold"] = cold
        full = statistics.median(c["solve_ms"] for c in cold)
        downs = [x["solve_ms"] for x in rec["incremental"] if x["event"] == "link_down"]
        rec["incr_ratio"] = statistics.median(downs) / full if downs else None
        with tempfile.TemporaryDirectory(prefix="weft-scale-") as tmp:
            rec["engine"] = engine_alone(inst, tmp)
            if clp:
                rec["clp"] = clp_bounded(inst, tmp, clp_s)
        if rec.get("clp", {}).get("status") == "Optimal":
            u = rec["clp"]["objective"]
            rec["certificate_ok"] = all(c["bound"] <= u * (1 + 1e-7) and
                                        c["max_utilization"] >= u * (1 - 1e-7) for c in cold)
            bad += not rec["certificate_ok"]
        results.append(rec)
        with open(OUT, "w") as f:
            json.dump(results, f, indent=1)
    print()
    print("%-6s %-8s %-9s %-9s %-8s %-10s %-10s %-9s %-9s %-8s %-9s %-24s %s"
          % ("sites", "demands", "solve s", "put->plan", "gap", "U", "bound", "daemon MiB",
             "engine MiB", "incr/full", "paths", "CLP (limit)", "check"))
    for rec in results:
        cold = rec["cold"]
        med = lambda k: statistics.median(c[k] for c in cold)  # noqa: E731
        cl = rec.get("clp")
        cls = "-" if cl is None else "%s %s it %.0fs" % (
            cl["status"], cl.get("iterations", "?"), cl["wall_s"])
        print("%-6d %-8d %-9.2f %-9.2f %-8.4f %-10.6f %-10.6f %-10.0f %-10.0f %-9.3f %-9d %-24s %s"
              % (rec["sites"], rec["demands"], med("solve_ms") / 1e3, med("put_to_plan_s"),
                 max(c["gap"] for c in cold), med("max_utilization"), med("bound"),
                 max(c["daemon_hwm_mib"] for c in cold), rec["engine"]["peak_mib"],
                 rec["incr_ratio"] or float("nan"), int(med("columns")), cls,
                 {True: "ok", False: "FAIL", None: "-"}[rec.get("certificate_ok")]))
    print("\nall records: %s" % OUT)
    return 1 if bad else 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
