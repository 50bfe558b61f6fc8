#!/usr/bin/python3
# SPDX-License-Identifier: GPL-3.0-or-later
"""A whole weftd session under valgrind's memcheck (make check-valgrind).

Starts build/weftd under valgrind (tests/sanitize/valgrind-weftd) on
127.0.0.1, imports Abilene from SNDlib (tests/data/sndlib, PROVENANCE.md),
plans it, reads every plan view, takes a link down and back (re-plans), runs
a what-if and a single-link sweep to the end, then stops the daemon with
SIGTERM.  Passes when the daemon exits 0 and memcheck's exit status (1 on
any invalid read or write, use of uninitialised memory, bad free, or a
definite or indirect leak: --errors-for-leak-kinds=definite,indirect) does
not fire.  The reference is memcheck itself; the report is left in
build/valgrind/ and its summary printed.
"""
import os
import shutil
import signal
import sys
import time

ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
sys.path.insert(0, os.path.join(ROOT, "tests", "lib"))
from weftd import Daemon  # noqa: E402

OUT = os.path.join(ROOT, "build", "valgrind")
STEP_TIMEOUT_S = 600        # memcheck runs the solver some 20-50 times slower


def ok(r, what, status=200):
    if r.status != status:
        raise SystemExit("FAIL %s: status %d %r" % (what, r.status, r.body[:300]))
    return r.json() if r.body[:1] in (b"{", b"[") else r.body


def main():
    if shutil.which("valgrind") is None:
        print("check-valgrind: valgrind is not installed (deploy/install-deps.sh)")
        return 1
    os.makedirs(OUT, exist_ok=True)
    log = os.path.join(OUT, "memcheck.log")
    if os.path.exists(log):
        os.unlink(log)
    os.environ["WEFTD_REAL"] = os.environ.get("WEFTD", os.path.join(ROOT, "build", "weftd"))
    os.environ["VALGRIND_LOG"] = log
    os.environ["WEFTD"] = os.path.join(ROOT, "tests", "sanitize", "valgrind-weftd")
    t0 = time.time()
    d = Daemon(debounce_ms=20, keep_log=True)
    rc = None
    try:
        with open(os.path.join(ROOT, "tests", "data", "sndlib", "abilene.txt"), "rb") as f:
            j = ok(d.request("POST", "/v1/import?format=sndlib&matrix=abilene", f.read(),
                             ctype="text/plain"), "import")
        print("imported abilene: %d nodes, %d links, %d demands"
              % (j["nodes"], j["links"], j["demands"]))
        rev = ok(d.put("/v1/policy", {"objective": "balance", "headroom": 0.9,
                                      "matrix": "abilene"}), "policy")["model_revision"]
        p = d.wait_plan(rev, timeout=STEP_TIMEOUT_S, verify=False)
        first = p["revision"]
        for path in ("/v1/plan/routes", "/v1/plan/loads", "/v1/plan/forwarding",
                     "/v1/topology", "/v1/policy", "/v1/matrices", "/v1/health",
                     "/v1/model?format=mps", "/v1/model?format=lp", "/metrics"):
            ok(d.get(path, timeout=STEP_TIMEOUT_S), path)
        link = ok(d.get("/v1/topology"), "topology")["links"][0]["id"]
        rev = ok(d.request("PATCH", "/v1/links/" + link, {"state": "down"}),
                 "link down")["model_revision"]
        d.wait_plan(rev, timeout=STEP_TIMEOUT_S, verify=False)
        ok(d.get("/v1/plan/diff?from=%d" % first, timeout=STEP_TIMEOUT_S), "diff")
        rev = ok(d.request("PATCH", "/v1/links/" + link, {"state": "up"}),
                 "link up")["model_revision"]
        d.wait_plan(rev, timeout=STEP_TIMEOUT_S, verify=False)
        print("planned, re-planned twice")
        ok(d.request("POST", "/v1/whatif", {"fail": {"links": [link]}, "scale": 1.1},
                     timeout=STEP_TIMEOUT_S), "what-if")
        ok(d.request("POST", "/v1/whatif", {"fail": {"links": ["NOPE"]}}), "bad what-if", 400)
        print("what-if answered")
        sw = ok(d.request("POST", "/v1/sweeps", {"kind": "links"}), "sweep", 202)
        end = time.time() + STEP_TIMEOUT_S
        while True:
            s = ok(d.get("/v1/sweeps/%d" % sw["id"]), "get sweep")
            if s["state"] != "running":
                break
            if time.time() > end:
                raise SystemExit("FAIL sweep not done in %d s" % STEP_TIMEOUT_S)
            time.sleep(0.5)
        if s["state"] != "done":
            raise SystemExit("FAIL sweep ended %r" % s["state"])
        for suffix in ("/results.csv", "/links.csv", "/report.svg"):
            ok(d.get("/v1/sweeps/%d%s" % (sw["id"], suffix)), "sweep" + suffix)
        print("sweep done: %d scenarios" % s["total"])
        d.proc.send_signal(signal.SIGTERM)
        rc = d.proc.wait(timeout=STEP_TIMEOUT_S)
        d.proc = None
        d.log.close()
    finally:
        if d.proc is not None:
            d.stop()
        daemon_log = os.path.join(OUT, "weftd.log")
        if d.tmp is not None:
            shutil.copyfile(d.log_path, daemon_log)
            shutil.rmtree(d.tmp, ignore_errors=True)
    with open(log, encoding="utf-8", errors="replace") as f:
        report = f.read()
    summary = [l for l in report.splitlines()
               if "ERROR SUMMARY" in l or "definitely lost" in l or "indirectly lost" in l
               or "possibly lost" in l or "still reachable" in l
               or "in use at exit" in l or "All heap blocks" in l]
    for l in summary:
        print("# " + l.split("== ", 1)[-1])
    print("session %.0f s; report in %s; daemon log in %s" % (time.time() - t0, log, daemon_log))
    if rc != 0:
        print("FAIL: weftd under memcheck exited %r (1: memory errors or leaks, see the report)" % rc)
        return 1
    print("ok: no memory errors, no definite or indirect leaks")
    return 0


if __name__ == "__main__":
    sys.exit(main())
