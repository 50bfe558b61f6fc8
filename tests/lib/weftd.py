# SPDX-License-Identifier: GPL-3.0-or-later
"""Start a real weftd on 127.0.0.1 with a temporary database and talk to it.

Used by the integration and reference suites.  Everything stays on the
loopback interface; every wait is bounded.  WEFT_TEST_ADDR=host:port runs the
same tests against a daemon that is already running (then nothing is started
and the database is whatever that daemon uses).
"""
import json
import os
import shutil
import socket
import subprocess
import sys
import tempfile
import time
import urllib.error
import urllib.request

ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))


def free_port():
    with socket.socket(socket.AF_INET, socket.SOCK_STREAM) as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def stop_process(proc, timeout):
    """Ends the subprocess proc: SIGTERM, then SIGKILL if it is still
    running after timeout seconds."""
    proc.terminate()
    try:
        proc.wait(timeout=timeout)
    except subprocess.TimeoutExpired:
        proc.kill()
        proc.wait()


class Reply:
    def __init__(self, status, headers, body):
        self.status = status
        self.headers = headers
        self.body = body

    def json(self):
        return json.loads(self.body.decode("utf-8"))

    def __repr__(self):
        return "Reply(%d, %r)" % (self.status, self.body[:300])


class SolveFailed(RuntimeError):
    """The daemon reported the solve of the awaited revision as failed."""


class Daemon:
    """A weftd process (or an existing one) plus small HTTP helpers."""

    def __init__(self, extra_args=(), debounce_ms=20, keep_log=False):
        self.proc = None
        self.tmp = None
        addr = os.environ.get("WEFT_TEST_ADDR")
        if addr:
            self.base = "http://" + addr
            self.wait_ready()
            return
        weftd = os.environ.get("WEFTD", os.path.join(ROOT, "build", "weftd"))
        self.tmp = tempfile.mkdtemp(prefix="weft-test-")
        self.db = os.path.join(self.tmp, "weft.db")
        self.port = free_port()
        self.base = "http://127.0.0.1:%d" % self.port
        self.log_path = os.path.join(self.tmp, "weftd.log")
        self.log = open(self.log_path, "wb")
        args = [weftd, "--db", self.db, "--listen", "127.0.0.1:%d" % self.port,
                "--debounce-ms", str(debounce_ms)] + list(extra_args)
        self.proc = subprocess.Popen(args, stdout=self.log, stderr=subprocess.STDOUT)
        self.keep_log = keep_log
        self.wait_ready()

    def wait_ready(self, timeout=20.0):
        end = time.time() + timeout
        while time.time() < end:
            if self.proc is not None and self.proc.poll() is not None:
                raise RuntimeError("weftd exited with %d:\n%s" % (self.proc.returncode, self.log_text()))
            try:
                if self.request("GET", "/v1/health", timeout=2).status == 200:
                    return
            except OSError:
                pass
            time.sleep(0.05)
        raise RuntimeError("weftd did not become ready in %.0f s" % timeout)

    def log_text(self):
        if self.tmp is None:
            return ""
        with open(self.log_path, "rb") as f:
            return f.read().decode("utf-8", "replace")

    def request(self, method, path, body=None, ctype="application/json", headers=None, timeout=60):
        data = None
        hdrs = dict(headers or {})
        if body is not None:
            if isinstance(body, (dict, list)):
                data = json.dumps(body).encode()
            elif isinstance(body, str):
                data = body.encode()
            else:
                data = body
            if ctype is not None:
                hdrs["Content-Type"] = ctype
        req = urllib.request.Request(self.base + path, data=data, method=method, headers=hdrs)
        try:
            with urllib.request.urlopen(req, timeout=timeout) as r:
                return Reply(r.status, dict(r.headers), r.read())
        except urllib.error.HTTPError as e:
            return Reply(e.code, dict(e.headers), e.read())

    def get(self, path, **kw):
        return self.request("GET", path, **kw)

    def put(self, path, body, **kw):
        return self.request("PUT", path, body, **kw)

    def wait_plan(self, model_revision, timeout=300.0, verify=True):
        """Polls GET /v1/plan until it reflects model_revision or newer.
        With verify, the plan is also passed through the independent plan
        checker (tests/lib/plancheck.py) before it is returned."""
        end = time.time() + timeout
        n = 0
        while time.time() < end:
            r = self.get("/v1/plan")
            if r.status == 200:
                p = r.json()
                if p["model_revision"] >= model_revision:
                    if verify:
                        self.verify_plan()
                    return p
            n += 1
            if n % 10 == 0:
                # A failed solve publishes nothing: /v1/health says so.
                h = self.get("/v1/health")
                if h.status == 200:
                    s = h.json().get("solver", {})
                    if s.get("last_solve_failed") and \
                            s.get("failed_model_revision", 0) >= model_revision:
                        raise SolveFailed("the solve of model revision %d failed: %s"
                                          % (model_revision, s.get("last_error")))
            time.sleep(0.05)
        raise RuntimeError("no plan for model revision %d within %.0f s" % (model_revision, timeout))

    def verify_plan(self, attempts=20):
        """Runs the plan checker on the published plan.  The documents are
        fetched one by one, so they are re-fetched until plan, routes and
        loads name one revision and the model has not moved meanwhile.
        Raises AssertionError with the checker's findings."""
        import plancheck
        for _ in range(attempts):
            h0 = self.get("/v1/health").json()
            plan = self.get("/v1/plan").json()
            routes = self.get("/v1/plan/routes").json()
            loads = self.get("/v1/plan/loads").json()
            topo = self.get("/v1/topology").json()
            policy = self.get("/v1/policy").json()
            name = plan.get("matrix") or policy.get("matrix")
            demands = []
            if name:
                m = self.get("/v1/matrices/" + name)
                if m.status == 200:
                    demands = m.json()["demands"]
            h1 = self.get("/v1/health").json()
            if (plan["revision"] == routes["revision"] == loads["revision"]
                    and h0["model_revision"] == h1["model_revision"] == plan["model_revision"]):
                fails = plancheck.check(topo, demands, policy, plan, routes, loads)
                if fails:
                    raise AssertionError("plan %d fails the plan checker: %s"
                                         % (plan["revision"], "; ".join(fails[:5])))
                return plan
            time.sleep(0.1)
        return None     # the model kept moving; nothing consistent to check

    def stop(self):
        if self.proc is not None:
            stop_process(self.proc, 10)
            self.proc = None
            self.log.close()
        if self.tmp is not None and not getattr(self, "keep_log", False):
            shutil.rmtree(self.tmp, ignore_errors=True)
            self.tmp = None

    def __enter__(self):
        return self

    def __exit__(self, *a):
        self.stop()
