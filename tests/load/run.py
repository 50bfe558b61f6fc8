#!/usr/bin/python3
# SPDX-License-Identifier: GPL-3.0-or-later
"""Load test: plan readers under wrk while the daemon re-plans, against nginx.

Run from the repository root with /usr/bin/python3 (make load; not part of
make check).  Needs wrk and nginx (sh deploy/install-deps.sh --load).
Everything runs on 127.0.0.1; each wrk run lasts --duration seconds.

DESIGN.  One weftd plans a mid-size SNDlib instance (germany50 by default,
tests/data/PROVENANCE.md).  While wrk (--latency) reads GET /v1/plan,
/v1/plan/routes and /v1/plan/loads in turn, a writer thread PATCHes links
(capacity, sometimes state) every --write-ms, so the daemon re-plans all
the time, and a checker thread fetches plan, routes and loads one after
another: each must be complete JSON naming its revision; when the three
name the same revision (a consistent triple) the plan is checked by the
independent plan checker (tests/lib/plancheck.py) against the topology of
its model revision, rebuilt from the imported topology and the writer's
acknowledged changes (every model revision after the set-up is one of the
writer's).  Then nginx (Debian's, started here with a configuration this
script writes: its own prefix, pid file, temp directories and port, in the
foreground as the current user) serves the same three bodies as static
files, saved from the daemon at the start, and wrk reads them the same
way.  Both servers log every request to a file.  Last, weft's loads again
with no writer, for the cost of re-planning.

Pass: wrk reports no socket error and no non-2xx/3xx reply for any run,
and the checker saw no incomplete or inconsistent plan.  The goal (weft
at least half of nginx's throughput on the loads resource) is reported,
not enforced: the machine may be shared.  Exit 0 on pass, 1 on a failure,
2 when wrk or nginx is missing.
"""
import argparse
import http.client
import json
import os
import random
import re
import shutil
import signal
import subprocess
import sys
import tempfile
import threading
import time

ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
sys.path.insert(0, os.path.join(ROOT, "tests", "lib"))
import plancheck  # noqa: E402
from weftd import Daemon, free_port  # noqa: E402

PATHS = (("plan", "/v1/plan"), ("routes", "/v1/plan/routes"), ("loads", "/v1/plan/loads"))


def http_get(port, path, timeout=10):
    c = http.client.HTTPConnection("127.0.0.1", port, timeout=timeout)
    try:
        c.request("GET", path)
        r = c.getresponse()
        return r.status, r.read()
    finally:
        c.close()


# ---- wrk ----

UNITS = {"us": 1e-3, "ms": 1.0, "s": 1e3, "m": 60e3}


def ms(text):
    m = re.fullmatch(r"([\d.]+)(us|ms|s|m)", text)
    return float(m.group(1)) * UNITS[m.group(2)] if m else None


def wrk(url, args):
    """Runs wrk --latency on url; returns its numbers as a dict."""
    cmd = ["wrk", "-t%d" % args.threads, "-c%d" % args.connections, "-d%ds" % args.duration,
           "--timeout", "5s", "--latency", url]
    out = subprocess.run(cmd, capture_output=True, text=True, timeout=args.duration + 60)
    text = out.stdout + out.stderr
    res = {"rps": None, "p50": None, "p75": None, "p90": None, "p99": None,
           "requests": None, "non2xx": 0, "socket_errors": 0, "raw": text}
    m = re.search(r"Requests/sec:\s*([\d.]+)", text)
    if m:
        res["rps"] = float(m.group(1))
    for pct in ("50", "75", "90", "99"):
        m = re.search(r"^\s*%s%%\s+(\S+)" % pct, text, re.M)
        if m:
            res["p" + pct] = ms(m.group(1))
    m = re.search(r"(\d+) requests in", text)
    if m:
        res["requests"] = int(m.group(1))
    m = re.search(r"Non-2xx or 3xx responses:\s*(\d+)", text)
    if m:
        res["non2xx"] = int(m.group(1))
    m = re.search(r"Socket errors: connect (\d+), read (\d+), write (\d+), timeout (\d+)", text)
    if m:
        res["socket_errors"] = sum(int(x) for x in m.groups())
    if out.returncode != 0 or res["rps"] is None:
        res["socket_errors"] += 1
        res["error"] = "wrk exited %d: %s" % (out.returncode, text[-300:])
    return res


# ---- nginx, configured and started here ----

NGINX_CONF = """# written by tests/load/run.py
daemon off;
worker_processes auto;
pid {dir}/nginx.pid;
error_log {dir}/error.log warn;
{user}
events {{ worker_connections 1024; }}
http {{
    access_log {dir}/access.log;
    client_body_temp_path {dir}/tmp/body;
    proxy_temp_path {dir}/tmp/proxy;
    fastcgi_temp_path {dir}/tmp/fastcgi;
    uwsgi_temp_path {dir}/tmp/uwsgi;
    scgi_temp_path {dir}/tmp/scgi;
    default_type application/json;
    sendfile on;
    tcp_nopush on;
    keepalive_requests 1000000;
    open_file_cache max=16;
    server {{
        listen 127.0.0.1:{port};
        root {dir}/www;
        location / {{ }}
    }}
}}
"""


class Nginx:
    def __init__(self, top, bodies):
        self.dir = os.path.join(top, "nginx")
        os.makedirs(os.path.join(self.dir, "tmp"))
        os.makedirs(os.path.join(self.dir, "www"))
        for name, body in bodies.items():
            with open(os.path.join(self.dir, "www", name + ".json"), "wb") as f:
                f.write(body)
        self.port = free_port()
        user = ""
        if os.getuid() == 0:
            # Workers would switch to nobody, who cannot read our 0700
            # temporary directory: they stay the current user.
            user = "user root root;"
        conf = os.path.join(self.dir, "nginx.conf")
        with open(conf, "w") as f:
            f.write(NGINX_CONF.format(dir=self.dir, port=self.port, user=user))
        self.log = open(os.path.join(self.dir, "stderr.log"), "wb")
        self.proc = subprocess.Popen(["nginx", "-p", self.dir + "/", "-c", conf, "-e",
                                      os.path.join(self.dir, "error.log")],
                                     stdout=self.log, stderr=subprocess.STDOUT)
        end = time.time() + 20
        while time.time() < end:
            if self.proc.poll() is not None:
                raise RuntimeError("nginx exited with %d: %s" % (self.proc.returncode, self.errors()))
            try:
                if http_get(self.port, "/loads.json", timeout=2)[0] == 200:
                    return
            except OSError:
                pass
            time.sleep(0.05)
        raise RuntimeError("nginx did not answer within 20 s: %s" % self.errors())

    def errors(self):
        try:
            with open(os.path.join(self.dir, "error.log")) as f:
                return f.read()[-500:]
        except OSError:
            return ""

    def stop(self):
        if self.proc.poll() is None:
            self.proc.send_signal(signal.SIGQUIT)       # graceful stop
            try:
                self.proc.wait(timeout=20)
            except subprocess.TimeoutExpired:
                self.proc.kill()
                self.proc.wait()
        self.log.close()


# ---- the writer and the checker, while wrk reads weft ----

class Writer(threading.Thread):
    """PATCHes a link every write_ms: its capacity (0.8 .. 1.25 of the
    imported one) and, now and then, its state (at most three down).
    Keeps every acknowledged change with its model revision."""

    def __init__(self, port, topo, rev0, write_ms, seed):
        super().__init__(name="writer", daemon=True)
        self.port = port
        self.cap0 = {l["id"]: l["capacity_bps"] for l in topo["links"]}
        self.ids = sorted(self.cap0)
        self.rng = random.Random(seed)
        self.write_ms = write_ms
        self.down = set()
        self.changes = {}           # model revision -> (link id, state, capacity)
        self.max_rev = rev0
        self.cv = threading.Condition()
        self.stop = threading.Event()
        self.errors = []
        self.n = 0

    def run(self):
        while not self.stop.wait(self.write_ms / 1e3):
            lid = self.rng.choice(self.ids)
            cap = self.cap0[lid] * self.rng.uniform(0.8, 1.25)
            if lid in self.down or len(self.down) >= 3:
                lid = lid if lid in self.down else self.rng.choice(sorted(self.down))
                state = "up"
            else:
                state = "down" if self.rng.random() < 0.1 else "up"
            body = json.dumps({"state": state, "capacity_bps": cap}).encode()
            c = http.client.HTTPConnection("127.0.0.1", self.port, timeout=30)
            try:
                c.request("PATCH", "/v1/links/" + lid, body=body,
                          headers={"Content-Type": "application/json"})
                r = c.getresponse()
                raw = r.read()
            except (OSError, http.client.HTTPException) as exc:
                self.errors.append("PATCH %s: %s" % (lid, exc))
                continue
            finally:
                c.close()
            if r.status != 200:
                self.errors.append("PATCH %s: %d %r" % (lid, r.status, raw[:200]))
                continue
            rev = json.loads(raw)["model_revision"]
            (self.down.add if state == "down" else self.down.discard)(lid)
            with self.cv:
                self.changes[rev] = (lid, state, cap)
                self.max_rev = max(self.max_rev, rev)
                self.n += 1
                self.cv.notify_all()

    def topology_at(self, topo0, rev0, rev, timeout=10.0):
        """The topology of model revision rev: the imported one with the
        acknowledged changes up to rev; None if rev's ack is not seen."""
        end = time.time() + timeout
        with self.cv:
            while self.max_rev < rev:
                left = end - time.time()
                if left <= 0:
                    return None
                self.cv.wait(left)
            links = {l["id"]: dict(l) for l in topo0["links"]}
            for r in range(rev0 + 1, rev + 1):
                if r not in self.changes:
                    return None
                lid, state, cap = self.changes[r]
                links[lid]["state"] = state
                links[lid]["capacity_bps"] = cap
        return {"nodes": topo0["nodes"], "links": [links[l["id"]] for l in topo0["links"]]}


class Checker(threading.Thread):
    """Fetches plan, routes and loads in turn until stopped; each must be
    complete JSON with a revision; consistent triples go to plancheck."""

    def __init__(self, port, writer, topo0, rev0, demands, policy):
        super().__init__(name="checker", daemon=True)
        self.port, self.writer, self.topo0, self.rev0 = port, writer, topo0, rev0
        self.demands, self.policy = demands, policy
        self.stop = threading.Event()
        self.fetched = self.consistent = self.checked = 0
        self.revisions = set()
        self.errors = []

    def run(self):
        while not self.stop.is_set():
            docs = []
            for name, path in PATHS:
                try:
                    st, raw = http_get(self.port, path)
                except (OSError, http.client.HTTPException) as exc:
                    self.errors.append("GET %s: %s" % (path, exc))
                    break
                self.fetched += 1
                if st != 200:
                    self.errors.append("GET %s: status %d" % (path, st))
                    break
                try:
                    j = json.loads(raw)
                except ValueError as exc:
                    self.errors.append("GET %s: incomplete JSON (%d bytes): %s" % (path, len(raw), exc))
                    break
                if not isinstance(j.get("revision"), int) or not isinstance(j.get("model_revision"), int):
                    self.errors.append("GET %s: no revision" % path)
                    break
                docs.append(j)
            if len(docs) != 3:
                continue
            plan, routes, loads = docs
            if not (plan["revision"] == routes["revision"] == loads["revision"]):
                continue        # a plan was published between the GETs
            check = (plan["model_revision"] == routes["model_revision"] == loads["model_revision"])
            if not check:
                self.errors.append("plan %d names model revisions %d, %d, %d"
                                   % (plan["revision"], plan["model_revision"],
                                      routes["model_revision"], loads["model_revision"]))
                continue
            self.consistent += 1
            self.revisions.add(plan["revision"])
            topo = self.writer.topology_at(self.topo0, self.rev0, plan["model_revision"])
            if topo is None:
                self.errors.append("model revision %d is none of the writer's changes"
                                   % plan["model_revision"])
                continue
            fails = plancheck.check(topo, self.demands, self.policy, plan, routes, loads)
            self.checked += 1
            if fails:
                self.errors.append("plan %d (model revision %d) fails the plan checker: %s"
                                   % (plan["revision"], plan["model_revision"], "; ".join(fails[:3])))


# ---- main ----

def fmt(v, f="%.2f"):
    return "-" if v is None else f % v


def main():
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--instance", default="germany50", help="SNDlib file stem in tests/data/sndlib")
    ap.add_argument("--objective", default="balance")
    ap.add_argument("--duration", type=int, default=10, help="seconds per wrk run")
    ap.add_argument("--threads", type=int, default=2, help="wrk threads")
    ap.add_argument("--connections", type=int, default=32, help="wrk connections")
    ap.add_argument("--write-ms", type=float, default=50.0, help="pause between link changes")
    ap.add_argument("--seed", type=int, default=20261202)
    args = ap.parse_args()
    missing = [t for t in ("wrk", "nginx") if shutil.which(t) is None and
               not os.path.exists("/usr/sbin/" + t)]
    if missing:
        print("load: %s missing: sh deploy/install-deps.sh --load" % " and ".join(missing))
        return 2
    if shutil.which("nginx") is None:
        os.environ["PATH"] += ":/usr/sbin"

    tmp = tempfile.mkdtemp(prefix="weft-load-")
    failures = []
    rows = []
    d = nginx = None
    t0 = time.time()
    try:
        d = Daemon(extra_args=["--max-connections", "1024", "--per-client-connections", "512"])
        with open(os.path.join(ROOT, "tests", "data", "sndlib", args.instance + ".txt"), "rb") as f:
            r = d.request("POST", "/v1/import?format=sndlib&matrix=load", f.read(), ctype="text/plain")
        assert r.status == 200, r
        r = d.put("/v1/policy", {"objective": args.objective, "headroom": 1.0, "matrix": "load"})
        assert r.status == 200, r
        rev0 = r.json()["model_revision"]
        d.wait_plan(rev0, timeout=300, verify=True)
        topo0 = d.get("/v1/topology").json()
        demands = d.get("/v1/matrices/load").json()["demands"]
        policy = d.get("/v1/policy").json()
        bodies = {name: d.get(path).body for name, path in PATHS}
        plan_rev0 = json.loads(bodies["plan"])["revision"]
        print("# %s: %d nodes, %d links, %d demands; bodies: plan %d B, routes %d B, loads %d B"
              % (args.instance, len(topo0["nodes"]), len(topo0["links"]), len(demands),
                 len(bodies["plan"]), len(bodies["routes"]), len(bodies["loads"])))
        print("# wrk -t%d -c%d -d%ds --latency, one run per row, 127.0.0.1; writer: a link change every %g ms"
              % (args.threads, args.connections, args.duration, args.write_ms))
        sys.stdout.flush()

        port = d.port
        writer = Writer(port, topo0, rev0, args.write_ms, args.seed)
        checker = Checker(port, writer, topo0, rev0, demands, policy)
        writer.start()
        checker.start()
        for name, path in PATHS:
            res = wrk("http://127.0.0.1:%d%s" % (port, path), args)
            rows.append(("weft, re-planning", name, res))
        writer.stop.set()
        checker.stop.set()
        writer.join(60)
        checker.join(60)
        plan_rev1 = d.get("/v1/plan").json()["revision"]
        failures += ["writer: " + e for e in writer.errors[:5]]
        failures += ["checker: " + e for e in checker.errors[:5]]

        res = wrk("http://127.0.0.1:%d%s" % (port, "/v1/plan/loads"), args)
        rows.append(("weft, idle", "loads", res))

        nginx = Nginx(tmp, bodies)
        for name, _ in PATHS:
            res = wrk("http://127.0.0.1:%d/%s.json" % (nginx.port, name), args)
            rows.append(("nginx, static file", name, res))
    finally:
        if nginx is not None:
            nginx.stop()
        if d is not None:
            d.stop()
        shutil.rmtree(tmp, ignore_errors=True)

    for server, name, res in rows:
        if res.get("error"):
            failures.append("%s %s: %s" % (server, name, res["error"]))
        if res["non2xx"] or res["socket_errors"]:
            failures.append("%s %s: %d non-2xx/3xx replies, %d socket errors"
                            % (server, name, res["non2xx"], res["socket_errors"]))

    print()
    print("%-20s %-7s %10s %9s %9s %9s %9s %8s %7s" % ("server", "path", "req/s", "p50 ms", "p75 ms",
                                                     "p90 ms", "p99 ms", "non-2xx", "sockerr"))
    for server, name, res in rows:
        print("%-20s %-7s %10s %9s %9s %9s %9s %8d %7d" % (
            server, name, fmt(res["rps"], "%.0f"), fmt(res["p50"], "%.3f"), fmt(res["p75"], "%.3f"),
            fmt(res["p90"], "%.3f"), fmt(res["p99"], "%.3f"), res["non2xx"], res["socket_errors"]))
    by = {(s, n): r["rps"] for s, n, r in rows}
    print()
    print("# during the re-planning runs: %d link changes, %d plans published (revisions %d..%d); "
          "checker: %d documents, %d consistent triples, %d checked by plancheck, %d revisions seen"
          % (writer.n, plan_rev1 - plan_rev0, plan_rev0, plan_rev1, checker.fetched,
             checker.consistent, checker.checked, len(checker.revisions)))
    for name, _ in PATHS:
        w, n = by.get(("weft, re-planning", name)), by.get(("nginx, static file", name))
        if w and n:
            print("# %s: weft / nginx = %.2f%s" % (name, w / n, "  (goal >= 0.5)" if name == "loads" else ""))
    w, n = by.get(("weft, idle", "loads")), by.get(("nginx, static file", "loads"))
    if w and n:
        print("# loads, no writer: weft / nginx = %.2f" % (w / n))
    if checker.checked == 0:
        failures.append("checker: no consistent triple was checked")
    print("# %.0f s in all" % (time.time() - t0))
    for f in failures:
        print("FAIL " + f)
    print("load: %s" % ("FAIL" if failures else "ok"))
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
