#!/usr/bin/python3
# SPDX-License-Identifier: GPL-3.0-or-later
"""Durability: SIGKILL at random moments under a stream of writes.

Run from the repository root with /usr/bin/python3 (make check-durability).

What weft promises (README, docs/operations.md "Files" and "Restarts"): a
write is acknowledged only after its SQLite transaction commits, every
write adds exactly one to the model revision, and no acknowledged write is
lost however the daemon ends.  This test holds the daemon to it:

- three writer threads send a steady stream of writes to a daemon on
  127.0.0.1 planning germany50 (SNDlib, tests/data/PROVENANCE.md): one
  PATCHes links (state and capacity), one PUTs the planned matrix (every
  rate scaled), one PUTs the policy.  Each write carries a value no other
  write has, so the stored state names the write that made it;
- at a moment drawn from a seeded generator the daemon gets SIGKILL (in
  some rounds a second one right after the restart, while it plans the
  stored model); then, with the daemon stopped, SQLite's own
  `PRAGMA integrity_check` must answer "ok" on the files as the daemon
  left them (on a copy of the database and its write-ahead log, so the
  restarted daemon does the recovery itself; in place every fifth round);
- after the restart, for every link, the matrix and the policy, GET must
  show the last acknowledged write or the one write that was in flight
  when the daemon died, nothing else; the model revision must be at least
  every acknowledged one, and exactly the one before the round plus the
  writes that took effect (none counted twice, none skipped);
- the restarted daemon must plan again: a plan for the newest model
  revision, with a plan revision above every one seen before the kill
  (plan revisions go on from the stored history), that passes the
  independent plan checker (tests/lib/plancheck.py) against the stored
  topology, matrix and policy read back over HTTP.

At the end the daemon stops cleanly (SIGTERM, exit 0), and SQLite's WAL
rule applies: the last connection to close checkpoints the log and
removes it.  The counts are printed; bounded to MAX_S seconds of rounds.
WEFT_DURABILITY_SEED and WEFT_DURABILITY_KILLS change the seed and the
number of kills (at least 50 by default).
"""
import http.client
import json
import os
import random
import shutil
import signal
import socket
import sqlite3
import subprocess
import sys
import tempfile
import threading
import time

ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
sys.path.insert(0, os.path.join(ROOT, "tests", "lib"))
import plancheck  # noqa: E402

SEED = int(os.environ.get("WEFT_DURABILITY_SEED", "20261202"))
KILLS = int(os.environ.get("WEFT_DURABILITY_KILLS", "50"))
MAX_S = 150             # the rounds stop starting after this
N_LINKS = 24            # links the link writer changes
REQ_TIMEOUT_S = 20
PLAN_TIMEOUT_S = 60


class Fail(Exception):
    pass


def check(cond, what):
    if not cond:
        raise Fail(what)


def free_port():
    with socket.socket(socket.AF_INET, socket.SOCK_STREAM) as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


class Weftd:
    """One weftd process at a time on one database, restarted at will."""

    def __init__(self, binary, tmp):
        self.binary = binary
        self.db = os.path.join(tmp, "weft.db")
        self.log_path = os.path.join(tmp, "weftd.log")
        self.proc = None
        self.port = None
        self.starts = 0

    def start(self):
        self.port = free_port()
        self.starts += 1
        with open(self.log_path, "ab") as log:
            log.write(b"---- start %d\n" % self.starts)
            log.flush()
            self.proc = subprocess.Popen(
                [self.binary, "--db", self.db, "--listen", "127.0.0.1:%d" % self.port,
                 "--debounce-ms", "20"], stdout=log, stderr=subprocess.STDOUT)

    def wait_ready(self, timeout=30.0):
        end = time.time() + timeout
        while time.time() < end:
            if self.proc.poll() is not None:
                raise Fail("weftd exited with %d at start" % self.proc.returncode)
            try:
                if self.request("GET", "/v1/health", timeout=2)[0] == 200:
                    return
            except OSError:
                pass
            time.sleep(0.02)
        raise Fail("weftd did not become ready in %.0f s" % timeout)

    def kill(self):
        self.proc.send_signal(signal.SIGKILL)
        self.proc.wait(timeout=30)
        check(self.proc.returncode == -signal.SIGKILL,
              "weftd ended with %r before the SIGKILL" % self.proc.returncode)
        self.proc = None

    def terminate(self):
        self.proc.send_signal(signal.SIGTERM)
        rc = self.proc.wait(timeout=60)
        self.proc = None
        return rc

    def request(self, method, path, body=None, ctype="application/json", timeout=REQ_TIMEOUT_S):
        """Returns (status, parsed JSON or raw bytes); raises OSError and
        http.client errors when the daemon is gone."""
        c = http.client.HTTPConnection("127.0.0.1", self.port, timeout=timeout)
        try:
            hdrs = {}
            data = None
            if body is not None:
                data = body if isinstance(body, bytes) else json.dumps(body).encode()
                hdrs["Content-Type"] = ctype
            c.request(method, path, body=data, headers=hdrs)
            r = c.getresponse()
            raw = r.read()
            try:
                return r.status, json.loads(raw.decode())
            except ValueError:
                return r.status, raw
        finally:
            c.close()

    def get(self, path):
        st, j = self.request("GET", path)
        check(st == 200, "GET %s: status %d %r" % (path, st, j))
        return j

    def log_tail(self, n=25):
        try:
            with open(self.log_path, "rb") as f:
                return f.read().decode("utf-8", "replace").splitlines()[-n:]
        except OSError:
            return []


# ---- the writes: each one's value is unique, so the stored state names it ----

class Writer(threading.Thread):
    """Sends writes one after another until told to stop or the daemon
    dies.  Records every acknowledged write and the one in flight (sent,
    no reply) when it ended."""

    def __init__(self, d, name, make):
        super().__init__(name=name, daemon=True)
        self.d = d
        self.make = make            # seq -> (key, value, method, path, body)
        self.stop = threading.Event()
        self.acked = []             # [(key, value, model_revision)]
        self.inflight = None        # (key, value) sent without a reply
        self.error = None

    def run(self):
        while not self.stop.is_set():
            key, value, method, path, body = self.make()
            self.inflight = (key, value)
            try:
                st, j = self.d.request(method, path, body)
            except (OSError, http.client.HTTPException):
                return              # the daemon is gone: inflight stays
            if st != 200:
                self.error = "%s %s: status %d %r" % (method, path, st, j)
                self.inflight = None
                return
            self.acked.append((key, value, j["model_revision"]))
            self.inflight = None


class Model:
    """What the test knows is stored: the value of every key, from the
    last write that is known to have taken effect."""

    def __init__(self, d, rng):
        topo = d.get("/v1/topology")
        self.cap0 = {l["id"]: l["capacity_bps"] for l in topo["links"]}
        self.links = sorted(rng.sample(sorted(self.cap0), N_LINKS))
        self.demands0 = d.get("/v1/matrices/g")["demands"]
        self.state = {}
        for l in topo["links"]:
            if l["id"] in self.cap0:
                self.state[("link", l["id"])] = (l["state"], l["capacity_bps"])
        self.state[("matrix", "g")] = self.matrix_value(d.get("/v1/matrices/g"))
        self.state[("policy",)] = self.policy_value(d.get("/v1/policy"))
        # Each writer thread has its own sequence and generator (seeded),
        # so its writes do not depend on how the threads interleave.
        self.seqs = {"link": 0, "matrix": 0, "policy": 0}
        self.rngs = {k: random.Random("%d-%s" % (SEED, k)) for k in self.seqs}

    def next_seq(self, kind):
        self.seqs[kind] += 1
        return self.seqs[kind], self.rngs[kind]

    @staticmethod
    def matrix_value(j):
        return tuple((x["src"], x["dst"], x["rate_bps"], x.get("priority", 0))
                     for x in j["demands"])

    @staticmethod
    def policy_value(j):
        return (j["objective"], j["headroom"], j["matrix"])

    # One maker per writer thread; each owns its keys, so the writes of a
    # key are sequential and "the last acknowledged" is well defined.
    def make_link(self):
        seq, rng = self.next_seq("link")
        lid = self.links[seq % len(self.links)]
        state = "down" if rng.random() < 0.25 else "up"
        cap = float(int(self.cap0[lid]) + seq)      # integral: exact as a double
        return (("link", lid), (state, cap), "PATCH", "/v1/links/" + lid,
                {"state": state, "capacity_bps": cap})

    def make_matrix(self):
        seq, _ = self.next_seq("matrix")
        f = 1.0 + seq * 1e-6
        dem = [{"src": x["src"], "dst": x["dst"], "rate_bps": x["rate_bps"] * f,
                "priority": x.get("priority", 0)} for x in self.demands0]
        value = tuple((x["src"], x["dst"], x["rate_bps"], x["priority"]) for x in dem)
        return ("matrix", "g"), value, "PUT", "/v1/matrices/g", {"demands": dem}

    def make_policy(self):
        seq, rng = self.next_seq("policy")
        obj = "balance" if rng.random() < 0.3 else "cost"
        headroom = 0.9 + (seq % 100000) * 1e-6
        return (("policy",), (obj, headroom, "g"), "PUT", "/v1/policy",
                {"objective": obj, "headroom": headroom, "matrix": "g"})

    def read(self, d):
        """The stored value of every key, through GET."""
        got = {}
        for l in d.get("/v1/topology")["links"]:
            got[("link", l["id"])] = (l["state"], l["capacity_bps"])
        got[("matrix", "g")] = self.matrix_value(d.get("/v1/matrices/g"))
        got[("policy",)] = self.policy_value(d.get("/v1/policy"))
        return got


def integrity(db, in_place, scratch):
    """PRAGMA integrity_check with the daemon stopped: on a copy of the
    database and its WAL (leaving the originals for the daemon's own
    recovery), or on the files themselves.  Returns the stored model
    revision as SQLite reads it."""
    path = db
    if not in_place:
        shutil.rmtree(scratch, ignore_errors=True)
        os.makedirs(scratch)
        path = os.path.join(scratch, "copy.db")
        shutil.copyfile(db, path)
        if os.path.exists(db + "-wal"):
            shutil.copyfile(db + "-wal", path + "-wal")
    con = sqlite3.connect(path)
    try:
        res = [r[0] for r in con.execute("PRAGMA integrity_check")]
        check(res == ["ok"], "PRAGMA integrity_check: %r" % res[:5])
        fk = con.execute("PRAGMA foreign_key_check").fetchall()
        check(fk == [], "PRAGMA foreign_key_check: %r" % fk[:5])
        row = con.execute("SELECT value FROM meta WHERE key = 'model_revision'").fetchone()
        return int(row[0])
    finally:
        con.close()


def wait_plan(d, model_revision, after_plan):
    """The plan for model_revision; a failed solve is a failure here."""
    end = time.time() + PLAN_TIMEOUT_S
    while time.time() < end:
        st, p = d.request("GET", "/v1/plan")
        if st == 200 and p["model_revision"] == model_revision:
            check(p["revision"] > after_plan,
                  "plan revision %d after a restart, %d was seen before" % (p["revision"], after_plan))
            return p
        check(st in (200, 503), "GET /v1/plan: status %d %r" % (st, p))
        h = d.get("/v1/health")
        s = h["solver"]
        check(not (s["last_solve_failed"] and s["failed_model_revision"] >= model_revision),
              "the solve of model revision %d failed: %s" % (model_revision, s["last_error"]))
        time.sleep(0.02)
    raise Fail("no plan for model revision %d within %d s" % (model_revision, PLAN_TIMEOUT_S))


def verify_plan(d, plan):
    """tests/lib/plancheck.py on the published plan (no writes run now)."""
    routes = d.get("/v1/plan/routes")
    loads = d.get("/v1/plan/loads")
    check(routes["revision"] == loads["revision"] == plan["revision"],
          "plan, routes, loads revisions %d %d %d" % (plan["revision"], routes["revision"], loads["revision"]))
    topo = d.get("/v1/topology")
    policy = d.get("/v1/policy")
    demands = d.get("/v1/matrices/" + policy["matrix"])["demands"]
    fails = plancheck.check(topo, demands, policy, plan, routes, loads)
    check(not fails, "plan %d fails the plan checker: %s" % (plan["revision"], "; ".join(fails[:3])))


def main():
    binary = os.environ.get("WEFTD", os.path.join(ROOT, "build", "weftd"))
    rng = random.Random(SEED)
    tmp = tempfile.mkdtemp(prefix="weft-durability-")
    d = Weftd(binary, tmp)
    stats = {"kills": 0, "start_kills": 0, "acked": 0, "inflight": 0, "applied": 0,
             "lost": 0, "in_place": 0, "by": {"link": 0, "matrix": 0, "policy": 0}}
    t0 = time.time()
    ok = False
    rounds = 0
    try:
        d.start()
        d.wait_ready()
        with open(os.path.join(ROOT, "tests", "data", "sndlib", "germany50.txt"), "rb") as f:
            st, j = d.request("POST", "/v1/import?format=sndlib&matrix=g", f.read(), ctype="text/plain")
        check(st == 200, "import germany50: %d %r" % (st, j))
        st, j = d.request("PUT", "/v1/policy", {"objective": "cost", "headroom": 0.95, "matrix": "g"})
        check(st == 200, "policy: %d %r" % (st, j))
        rev = j["model_revision"]
        plan = wait_plan(d, rev, 0)
        verify_plan(d, plan)
        last_plan = plan["revision"]
        model = Model(d, rng)

        while stats["kills"] < KILLS:
            check(time.time() - t0 < MAX_S,
                  "only %d kills in %d s" % (stats["kills"], MAX_S))
            rounds += 1
            rev0 = d.get("/v1/health")["model_revision"]
            writers = [Writer(d, "links", model.make_link),
                       Writer(d, "matrix", model.make_matrix),
                       Writer(d, "policy", model.make_policy)]
            delay = rng.uniform(0.0, 0.6)
            for w in writers:
                w.start()
            time.sleep(delay)
            # The newest plan readers saw before the kill: no later plan
            # may reuse its revision.
            try:
                st, p = d.request("GET", "/v1/plan", timeout=5)
                if st == 200:
                    last_plan = max(last_plan, p["revision"])
            except (OSError, http.client.HTTPException):
                pass
            d.kill()
            stats["kills"] += 1
            for w in writers:
                w.stop.set()
            for w in writers:
                w.join(timeout=REQ_TIMEOUT_S + 5)
                check(not w.is_alive(), "writer %s did not end" % w.name)
                check(w.error is None, "writer %s: %s" % (w.name, w.error))

            in_place = rounds % 5 == 0
            stats["in_place"] += in_place
            stored = integrity(d.db, in_place, os.path.join(tmp, "copy"))
            acked = [a for w in writers for a in w.acked]
            max_acked = max([a[2] for a in acked], default=rev0)
            check(stored >= max_acked, "round %d: SQLite reads model revision %d, %d was acknowledged"
                  % (rounds, stored, max_acked))

            d.start()
            d.wait_ready()
            if rng.random() < 0.2:
                # Once more while it plans the stored model at start-up.
                time.sleep(rng.uniform(0.0, 0.08))
                d.kill()
                stats["kills"] += 1
                stats["start_kills"] += 1
                integrity(d.db, False, os.path.join(tmp, "copy"))
                d.start()
                d.wait_ready()

            # Every acknowledged write is there, or the one write of its
            # key that was in flight; nothing else.
            got = model.read(d)
            expect = dict(model.state)
            for key, value, _ in acked:
                expect[key] = value
            inflight = {w.inflight[0]: w.inflight[1] for w in writers if w.inflight}
            applied = 0
            for key, want in expect.items():
                have = got.get(key)
                if have == want:
                    continue
                if key in inflight and have == inflight[key]:
                    applied += 1
                    continue
                stats["lost"] += 1
                raise Fail("round %d: %r holds %r; the last acknowledged write gave %r%s"
                           % (rounds, key, str(have)[:120], str(want)[:120],
                              ", the one in flight %r" % (str(inflight[key])[:120],)
                              if key in inflight else ""))
            h = d.get("/v1/health")
            check(h["model_revision"] >= max_acked, "round %d: model revision %d < acknowledged %d"
                  % (rounds, h["model_revision"], max_acked))
            check(h["model_revision"] == rev0 + len(acked) + applied,
                  "round %d: model revision %d, want %d + %d acknowledged + %d in flight that took effect"
                  % (rounds, h["model_revision"], rev0, len(acked), applied))
            for key in expect:
                model.state[key] = got[key]
            stats["acked"] += len(acked)
            stats["inflight"] += len(inflight)
            stats["applied"] += applied
            for key, _, _ in acked:
                stats["by"][key[0]] += 1

            plan = wait_plan(d, h["model_revision"], last_plan)
            verify_plan(d, plan)
            last_plan = plan["revision"]
            print("ok %d - round %d: killed after %.0f ms, %d writes acknowledged, "
                  "%d in flight (%d took effect), model revision %d, plan %d"
                  % (rounds, rounds, delay * 1e3, len(acked), len(inflight), applied,
                     h["model_revision"], plan["revision"]))
            sys.stdout.flush()

        rc = d.terminate()
        check(rc == 0, "weftd exited with %r on SIGTERM" % rc)
        wal = d.db + "-wal"
        left = os.path.getsize(wal) if os.path.exists(wal) else 0
        check(left == 0, "the write-ahead log is left after a clean stop (%d bytes)" % left)
        integrity(d.db, True, None)
        rounds += 1
        print("ok %d - clean stop: exit 0, log folded into the database, integrity ok" % rounds)
        ok = True
    except Fail as exc:
        rounds += 1
        print("not ok %d - %s" % (rounds, exc))
        print("# daemon log (last lines):")
        for line in d.log_tail():
            print("# " + line)
    finally:
        if d.proc is not None:
            d.proc.kill()
            d.proc.wait()
        shutil.rmtree(tmp, ignore_errors=True)
    print("# kills %d (%d during the start-up solve), writes acknowledged %d "
          "(links %d, matrix %d, policy %d), in flight at a kill %d (%d took effect), "
          "writes lost %d, integrity checks in place %d, %.1f s"
          % (stats["kills"], stats["start_kills"], stats["acked"], stats["by"]["link"],
             stats["by"]["matrix"], stats["by"]["policy"], stats["inflight"],
             stats["applied"], stats["lost"], stats["in_place"], time.time() - t0))
    print("1..%d" % rounds)
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main())
