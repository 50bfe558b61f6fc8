#!/usr/bin/python3
# SPDX-License-Identifier: GPL-3.0-or-later
"""Faults: a failing database or solver, injected, and a read-only file.

Run from the repository root with /usr/bin/python3 (make check-faults),
with WEFTD naming a test build (make FAULTS=1 BUILD=build-faults): its
injection points (daemon/base/fault.h, listed in DEVELOPERS.md) fire while
the file named by WEFT_FAULT_FILE names them.

For each fault the daemon must
- answer the request it breaks with the error reply docs/api.md documents:
  a 5xx with the body {"error": {"code", "message", "where"}}, the message
  only "internal error (request ID)" with ID the reply's X-Request-Id, and
  the detail in the log under that id, naming the cause (503 "busy" with
  Retry-After for a locked database, which is worth a retry);
- change nothing: the model revision, the stored topology, matrix and
  policy, and the published plan stay as they were (GET /v1/plan gives the
  same bytes and ETag);
- for a fault of the solver or of the solver's snapshot: keep serving the
  last good plan while GET /v1/health (and /metrics) says the last solve
  failed, for which model revision and why (docs/api.md, Health);
- recover once the fault is switched off: the next write succeeds and a
  plan for it is published.

Plans are checked against the hand-derived optimum of the network below
and by the independent plan checker (tests/lib/plancheck.py).  Last, a
real read-only database (file modes, no injection; the daemon runs as
nobody when the test runs as root, since root ignores file modes): weftd
must refuse to start with a message naming the cause, and start again
with every write kept once the modes are restored.
"""
import os
import re
import shutil
import signal
import subprocess
import sys
import tempfile
import time
import traceback

ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
sys.path.insert(0, os.path.join(ROOT, "tests", "lib"))
from weftd import Daemon, free_port  # noqa: E402

WEFTD = os.environ.get("WEFTD", os.path.join(ROOT, "build-faults", "weftd"))
REL = 1e-6
NOBODY = 65534

# ---------------------------------------------------------------------------
# Four sites, two disjoint routes from A to D:
#
#     A --L_AB (cap c, metric 1)-- B --L_BD (10G, metric 1)-- D
#     A --L_AC (10G, metric 2)---- C --L_CD (10G, metric 2)-- D
#
# One demand A -> D of r bit/s; objective cost (min sum metric x flow),
# usable capacity = headroom h x capacity.  A-B-D costs 2 per bit/s, A-C-D
# 4, so the optimum fills A-B-D first: a = min(r, h min(c, 10G)) over it,
# then b = min(r - a, h 10G) over A-C-D; cost 2a + 4b, unserved r - a - b.
# Any other split moves traffic from cost 2 to cost 4.
# ---------------------------------------------------------------------------
G10 = 1e10
TOPO = {
    "nodes": [{"id": "A"}, {"id": "B"}, {"id": "C"}, {"id": "D"}],
    "links": [
        {"id": "L_AB", "a": "A", "b": "B", "capacity_bps": G10, "te_metric": 1},
        {"id": "L_BD", "a": "B", "b": "D", "capacity_bps": G10, "te_metric": 1},
        {"id": "L_AC", "a": "A", "b": "C", "capacity_bps": G10, "te_metric": 2},
        {"id": "L_CD", "a": "C", "b": "D", "capacity_bps": G10, "te_metric": 2},
    ],
}


def optimum(c, r, h):
    a = min(r, h * min(c, G10))
    b = min(r - a, h * G10)
    return 2 * a + 4 * b, r - a - b


class Fail(Exception):
    pass


def check(cond, what):
    if not cond:
        raise Fail(what)


def near(got, want, what):
    check(got is not None and abs(got - want) <= REL * max(1.0, abs(want)),
          "%s: got %r, want %r" % (what, got, want))


def ok200(r, what):
    check(r.status == 200, "%s: status %d, body %r" % (what, r.status, r.body[:300]))
    return r.json()


class World:
    """The daemon, its fault file, and what the test last wrote."""

    def __init__(self, d, fault_file):
        self.d = d
        self.fault_file = fault_file
        self.c = G10            # L_AB's capacity
        self.r = 15e9           # the demand's rate
        self.h = 1.0            # the policy's headroom
        self.seq = 0

    def fault(self, spec):
        # Written whole, then renamed: a check never reads half a file.
        tmp = self.fault_file + ".tmp"
        with open(tmp, "w") as f:
            f.write(spec + "\n" if spec else "")
        os.replace(tmp, self.fault_file)

    def write(self, kind):
        """Sends one write of kind ("link", "matrix", "policy") with a new
        value; returns (reply, the value it would set)."""
        self.seq += 1
        d = self.d
        if kind == "link":
            c = 6e9 + self.seq * 1e8
            return d.request("PATCH", "/v1/links/L_AB", {"capacity_bps": c}), ("c", c)
        if kind == "matrix":
            r = 14e9 + self.seq * 1e8
            return d.put("/v1/matrices/tm", {"demands": [{"src": "A", "dst": "D", "rate_bps": r}]}), ("r", r)
        h = 1.0 - self.seq * 1e-3
        return d.put("/v1/policy", {"objective": "cost", "headroom": h, "matrix": "tm"}), ("h", h)

    def took(self, value):
        setattr(self, value[0], value[1])

    def frozen(self):
        """What a failed write must leave alone."""
        d = self.d
        h = ok200(d.get("/v1/health"), "health")
        p = d.get("/v1/plan")
        return (h["model_revision"], h["plan_revision"], p.status, p.body, p.headers.get("ETag"),
                d.get("/v1/topology").body, d.get("/v1/matrices/tm").body, d.get("/v1/policy").body)

    def expect_plan(self, rev, after_failure=False):
        """A plan for model revision rev: the hand-derived optimum and the
        plan checker.  after_failure: rev's solve failed before, so
        health's report of it does not end the wait."""
        if after_failure:
            wait_for("a plan for model revision %d" % rev,
                     lambda: self.d.get("/v1/plan").status == 200 and
                     self.d.get("/v1/plan").json()["model_revision"] >= rev, timeout=60)
        p = self.d.wait_plan(rev, timeout=60, verify=True)
        cost, unserved = optimum(self.c, self.r, self.h)
        near(p["total_cost"], cost, "total_cost (c=%g r=%g h=%g)" % (self.c, self.r, self.h))
        near(p["unserved_bps"], unserved, "unserved_bps")
        return p


def log_lines(d, pattern):
    return [l for l in d.log_text().splitlines() if re.search(pattern, l)]


def internal_error(r, code, cause, d):
    """The documented 5xx: fixed message with the request id, the detail
    with its cause in the log under that id."""
    check(500 <= r.status < 600 and r.status != 503, "status %d, body %r" % (r.status, r.body[:300]))
    check(r.headers.get("Content-Type", "").startswith("application/json"),
          "Content-Type %r" % r.headers.get("Content-Type"))
    j = r.json()
    check(set(j) == {"error"} and set(j["error"]) == {"code", "message", "where"},
          "error body %r" % j)
    rid = r.headers.get("X-Request-Id", "")
    check(rid != "", "no X-Request-Id")
    check(j["error"] == {"code": code, "message": "internal error (request %s)" % rid, "where": ""},
          "error %r, want code %r and the request id %s" % (j["error"], code, rid))
    lines = log_lines(d, r"request failed id=%s " % re.escape(rid))
    check(lines and re.search(cause, lines[0]),
          "log under request %s: %r, want the cause %r" % (rid, lines, cause))


def health_failed(d, rev, cause):
    h = ok200(d.get("/v1/health"), "health")
    s = h["solver"]
    check(s["last_solve_failed"] is True, "health solver %r" % s)
    check(s["failed_model_revision"] == rev, "failed_model_revision %r, want %d" % (s["failed_model_revision"], rev))
    check(re.search(cause, s["last_error"]), "last_error %r, want %r" % (s["last_error"], cause))
    check(h["plan_current"] is False, "plan_current %r with the newest solve failed" % h["plan_current"])
    m = d.get("/metrics").body.decode()
    check(re.search(r"^weft_solver_last_solve_failed 1(\.0)?$", m, re.M),
          "/metrics: weft_solver_last_solve_failed not 1")
    return h


def wait_for(what, fn, timeout=30.0):
    end = time.time() + timeout
    while time.time() < end:
        v = fn()
        if v:
            return v
        time.sleep(0.05)
    raise Fail("%s: not within %.0f s" % (what, timeout))


# ---- cases ----

# (fault spec, HTTP status family, error code, cause in the log)
WRITE_FAULTS = (
    ("db_commit:FULL", "database", r"the disk or the database is full"),
    ("db_commit:READONLY", "database", r"the database is read-only"),
    ("db_commit:IOERR", "database", r"input/output error on the database file"),
    ("db_begin:IOERR", "database", r"starting a write transaction.*input/output error"),
    ("db_begin:FULL", "database", r"starting a write transaction.*full"),
)


def case_write_faults(w):
    d = w.d
    for i, (spec, code, cause) in enumerate(WRITE_FAULTS):
        for kind in ("link", "matrix", "policy"):
            before = w.frozen()
            w.fault(spec)
            r, value = w.write(kind)
            internal_error(r, code, cause, d)
            check(log_lines(d, r"fault injected point=%s" % spec.split(":")[0]),
                  "%s: the injected fault is not in the log" % spec)
            check(w.frozen() == before, "%s, %s write: state or plan changed by a failed write" % (spec, kind))
            h = ok200(d.get("/v1/health"), "health")
            check(h["plan_current"] and not h["solver"]["last_solve_failed"],
                  "%s: health after a failed write %r" % (spec, h))
            # Switched off: the same kind of write goes through and plans.
            w.fault("")
            r, value = w.write(kind)
            rev = ok200(r, "%s %s write after the fault" % (spec, kind))["model_revision"]
            check(rev == before[0] + 1, "revision %d after the fault, want %d" % (rev, before[0] + 1))
            w.took(value)
            p = w.expect_plan(rev)
            check(p["revision"] > before[1], "no new plan after %s" % spec)
    return "%d write faults x link/matrix/policy: 500, nothing changed, recovered" % len(WRITE_FAULTS)


def case_locked_database(w):
    """db_begin:BUSY stands for a lock held past the busy timeout: 503
    busy with Retry-After, a reply that is not an internal error."""
    d = w.d
    before = w.frozen()
    w.fault("db_begin:BUSY")
    r, value = w.write("link")
    check(r.status == 503, "status %d %r" % (r.status, r.body[:200]))
    ra = r.headers.get("Retry-After", "")
    check(ra.isdigit() and int(ra) >= 1, "Retry-After %r" % ra)
    e = r.json()["error"]
    check(e["code"] == "busy" and "locked" in e["message"], "error %r" % e)
    check(w.frozen() == before, "a refused write changed something")
    w.fault("")
    r, value = w.write("link")
    rev = ok200(r, "write after the lock")["model_revision"]
    w.took(value)
    w.expect_plan(rev)
    return "503 busy with Retry-After, then the write goes through"


def case_snapshot_fault(w):
    """db_read fails every read transaction: the solver's snapshot and the
    table reads.  Writes still commit.  Once reads work again the solver
    tries the snapshot again by itself."""
    d = w.d
    plan0 = d.get("/v1/plan")
    w.fault("db_read:IOERR")
    r, value = w.write("link")
    rev = ok200(r, "write while reads fail")["model_revision"]
    w.took(value)
    wait_for("the failed snapshot in health",
             lambda: ok200(d.get("/v1/health"), "health")["solver"]["last_solve_failed"])
    health_failed(d, rev, r"starting a read transaction.*input/output error")
    check(log_lines(d, r"snapshot failed code=database .*input/output error"), "no 'snapshot failed' in the log")
    p = d.get("/v1/plan")
    check(p.status == 200 and p.body == plan0.body, "the last good plan is not served unchanged")
    internal_error(d.get("/v1/topology"), "database", r"read transaction.*input/output error", d)
    # Switched off, with no further write: the retry plans the revision.
    w.fault("")
    w.expect_plan(rev, after_failure=True)
    h = ok200(d.get("/v1/health"), "health")
    check(h["plan_current"] and not h["solver"]["last_solve_failed"], "health after recovery %r" % h)
    r, value = w.write("matrix")
    rev = ok200(r, "write after recovery")["model_revision"]
    w.took(value)
    w.expect_plan(rev)
    return "health names revision %d and the cause; replanned by itself once reads work" % rev


def case_solver_fault(w, arg, code, status, cause):
    d = w.d
    plan0 = d.get("/v1/plan")
    w.fault("lp_solve:" + arg)
    r, value = w.write("policy")
    rev = ok200(r, "write while the solver fails")["model_revision"]
    w.took(value)
    wait_for("the failed solve in health",
             lambda: ok200(d.get("/v1/health"), "health")["solver"]["failed_model_revision"] == rev)
    health_failed(d, rev, cause)
    check(log_lines(d, r"solve failed model_revision=%d code=%s " % (rev, code)),
          "no 'solve failed model_revision=%d code=%s' in the log" % (rev, code))
    p = d.get("/v1/plan")
    check(p.status == 200 and p.body == plan0.body and p.headers.get("ETag") == plan0.headers.get("ETag"),
          "the last good plan is not served unchanged")
    # A what-if solves on a worker: the same fault, the documented reply.
    wr = d.request("POST", "/v1/whatif", {"fail": {"links": ["L_AC"]}})
    if status == 503:
        check(wr.status == 503 and wr.json()["error"]["code"] == code and
              wr.headers.get("Retry-After", "").isdigit(), "what-if: %r" % wr)
    else:
        internal_error(wr, code, cause, d)
    # Switched off: a failed solve is not tried again (the same model
    # would fail the same way); the next write plans.
    w.fault("")
    r, value = w.write("link")
    rev2 = ok200(r, "write after the solver fault")["model_revision"]
    w.took(value)
    w.expect_plan(rev2)
    h = ok200(d.get("/v1/health"), "health")
    check(h["plan_current"] and not h["solver"]["last_solve_failed"], "health after recovery %r" % h)
    return "revision %d failed (%s), plan kept; revision %d planned" % (rev, code, rev2)


def case_solver_failure(w):
    return case_solver_fault(w, "fail", "solver", 500, r"simplex method failed")


def case_solver_timeout(w):
    return case_solver_fault(w, "timeout", "timeout", 503, r"time limit")


# ---- a real read-only file, no injection ----

def as_nobody():
    os.setgroups([])
    os.setgid(NOBODY)
    os.setuid(NOBODY)


def start(binary, db, log_path):
    """Starts binary on db (as nobody when we are root); returns the
    process and its port."""
    port = free_port()
    log = open(log_path, "ab")
    env = dict(os.environ)
    env.pop("WEFT_FAULT_FILE", None)
    env.pop("WEFT_FAULT", None)
    proc = subprocess.Popen([binary, "--db", db, "--listen", "127.0.0.1:%d" % port, "--debounce-ms", "20"],
                            stdout=log, stderr=subprocess.STDOUT, env=env, cwd=os.path.dirname(db),
                            preexec_fn=as_nobody if os.getuid() == 0 else None)
    log.close()
    return proc, port


def case_read_only_file(_w):
    tmp = tempfile.mkdtemp(prefix="weft-ro-")
    try:
        if os.getuid() == 0:
            os.chown(tmp, NOBODY, NOBODY)
        db = os.path.join(tmp, "weft.db")
        log_path = os.path.join(tmp, "weftd.log")
        # A copy nobody can run, wherever the tree is checked out.
        binary = os.path.join(tmp, "weftd")
        shutil.copyfile(WEFTD, binary)
        os.chmod(binary, 0o755)
        done = []
        for how in ("SIGTERM", "SIGKILL"):
            proc, port = start(binary, db, log_path)
            d = Daemon.__new__(Daemon)      # only its HTTP helpers
            d.proc, d.tmp, d.base, d.log_path = proc, tmp, "http://127.0.0.1:%d" % port, log_path
            d.wait_ready()
            if not done:
                ok200(d.put("/v1/topology", TOPO), "topology")
                ok200(d.put("/v1/matrices/tm", {"demands": [{"src": "A", "dst": "D", "rate_bps": 15e9}]}),
                      "matrix")
            rev = ok200(d.put("/v1/policy", {"objective": "cost", "headroom": 1.0 - len(done) * 0.1,
                                             "matrix": "tm"}), "policy")["model_revision"]
            d.wait_plan(rev, timeout=60, verify=False)
            topo = d.get("/v1/topology").body
            policy = d.get("/v1/policy").body
            proc.send_signal(getattr(signal, how))
            proc.wait(timeout=60)
            files = [p for p in (db, db + "-wal", db + "-shm") if os.path.exists(p)]
            if how == "SIGKILL":
                check(db + "-wal" in files, "no write-ahead log after SIGKILL: %r" % files)
            for p in files:
                os.chmod(p, 0o444)
            seen = os.path.getsize(log_path)
            proc, port = start(binary, db, log_path)
            try:
                rc = proc.wait(timeout=60)
            except subprocess.TimeoutExpired:
                proc.kill()
                proc.wait()
                raise Fail("after %s: weftd started on a read-only database" % how)
            with open(log_path, "rb") as f:
                f.seek(seen)
                text = f.read().decode("utf-8", "replace")
            fatal = [l for l in text.splitlines() if "fatal" in l]
            check(rc != 0 and fatal, "after %s: exit %r, log %r" % (how, rc, text[-300:]))
            check(re.search(r"read-only|readonly|unable to open", fatal[-1]),
                  "after %s: the message does not name the cause: %r" % (how, fatal[-1]))
            # SQLite gives a -wal or -shm it creates the modes of the
            # database file: the failed start may have left read-only ones.
            for p in (db, db + "-wal", db + "-shm"):
                if os.path.exists(p):
                    os.chmod(p, 0o644)
            proc, port = start(binary, db, log_path)
            d.proc, d.base = proc, "http://127.0.0.1:%d" % port
            d.wait_ready()
            check(ok200(d.get("/v1/health"), "health")["model_revision"] == rev, "revision after the restart")
            check(d.get("/v1/topology").body == topo and d.get("/v1/policy").body == policy,
                  "stored state after the restart")
            d.wait_plan(rev, timeout=60, verify=True)
            proc.terminate()
            proc.wait(timeout=60)
            done.append("%s: %s" % (how, fatal[-1].split("fatal: ", 1)[-1][:90]))
        return "; ".join(done)
    finally:
        shutil.rmtree(tmp, ignore_errors=True)


CASES = [case_write_faults, case_locked_database, case_snapshot_fault,
         case_solver_failure, case_solver_timeout, case_read_only_file]


def main():
    if not os.access(WEFTD, os.X_OK):
        print("not ok 1 - no test build at %s (make FAULTS=1 BUILD=build-faults)" % WEFTD)
        return 1
    tmp = tempfile.mkdtemp(prefix="weft-faults-")
    fault_file = os.path.join(tmp, "faults")
    os.environ["WEFT_FAULT_FILE"] = fault_file
    os.environ["WEFTD"] = WEFTD
    failed = 0
    d = Daemon()
    try:
        w = World(d, fault_file)
        w.fault("")
        ok200(d.put("/v1/topology", TOPO), "topology")
        ok200(d.put("/v1/matrices/tm", {"demands": [{"src": "A", "dst": "D", "rate_bps": w.r}]}), "matrix")
        rev = ok200(d.put("/v1/policy", {"objective": "cost", "headroom": w.h, "matrix": "tm"}),
                    "policy")["model_revision"]
        w.expect_plan(rev)
        for i, case in enumerate(CASES, 1):
            name = case.__name__[len("case_"):]
            try:
                what = case(w)
                print("ok %d - %s: %s" % (i, name, what))
            except Exception as exc:
                failed += 1
                w.fault("")
                print("not ok %d - %s" % (i, name))
                for line in traceback.format_exception(type(exc), exc, exc.__traceback__)[-3:]:
                    for l in line.rstrip().splitlines():
                        print("# " + l)
            sys.stdout.flush()
        n = len(CASES) + 1
        d.proc.terminate()
        rc = d.proc.wait(timeout=60)
        if rc == 0:
            print("ok %d - daemon_exits_cleanly" % n)
        else:
            failed += 1
            print("not ok %d - daemon_exits_cleanly # exit %r" % (n, rc))
    finally:
        if failed and d.tmp:
            print("# daemon log (last lines):")
            for l in d.log_text().splitlines()[-20:]:
                print("# " + l)
        d.stop()
        shutil.rmtree(tmp, ignore_errors=True)
    print("1..%d" % (len(CASES) + 1))
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main())
