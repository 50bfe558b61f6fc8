#!/usr/bin/python3
# SPDX-License-Identifier: GPL-3.0-or-later
"""Monitoring and polling: GET /metrics, ETag/304, long polls, event streams.

Run from the repository root with /usr/bin/python3 (make check-monitoring).
Starts its own weftd on 127.0.0.1 (WEFT_TEST_ADDR is ignored: the cases need
their own limits), and a real Prometheus server on 127.0.0.1 that scrapes
it.  Each case prints "ok N - name" or "not ok N - name"; every case is
bounded in time (CASE_TIMEOUT_S) besides the per-request timeouts.

The checks are against things outside weft, named beside each:
  - OpenMetrics 1.0 (the text format, its content type, "# EOF", counters
    with _total, histograms with le/_sum/_count): a real Prometheus server
    (Debian's prometheus package) scrapes /metrics, negotiating
    OpenMetrics, and its query API must return exactly the values of
    GET /v1/plan/loads; the OpenMetrics parser of the Prometheus Python
    client (python3-prometheus-client) must accept the exposition;
    `promtool check metrics` (which reads the older text format 0.0.4)
    must accept the 0.0.4 exposition.
  - RFC 9110: entity tags, If-None-Match (13.1.2, weak comparison, "*",
    lists), 304 (15.4.5); content negotiation with q-values (12.5.1).
  - The WHATWG HTML standard, server-sent events (9.2): the event stream
    format, parsed here as the standard's algorithm says; Last-Event-ID.
Plan values themselves are checked in tests/integration/run.py and
tests/reference; here the hand-derived loads of the small network below
anchor the comparison.
"""
import http.client
import json
import os
import queue
import shutil
import subprocess
import sys
import tempfile
import threading
import time
import urllib.parse
import urllib.request

ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
sys.path.insert(0, os.path.join(ROOT, "tests", "lib"))
os.environ.pop("WEFT_TEST_ADDR", None)
from weftd import Daemon, free_port, stop_process  # noqa: E402
import cases  # noqa: E402
from cases import Fail, check  # noqa: E402

CASE_TIMEOUT_S = 120
PROMETHEUS = "/usr/bin/prometheus"
PROMTOOL = "/usr/bin/promtool"
LONG_POLL_MAX = 2              # --long-poll-max of the daemon
LONG_POLL_MAX_S = 30           # --long-poll-max-s
EVENTS_MAX = 3                 # --events-max
# What Prometheus 2.42 sends when it scrapes (scrape/scrape.go).
PROM_ACCEPT = ("application/openmetrics-text;version=1.0.0,"
               "application/openmetrics-text;version=0.0.1;q=0.75,"
               "text/plain;version=0.0.4;q=0.5,*/*;q=0.1")
OM_CTYPE = "application/openmetrics-text; version=1.0.0; charset=utf-8"
TEXT_CTYPE = "text/plain; version=0.0.4; charset=utf-8"

# ---------------------------------------------------------------------------
# The network: four sites, two routes from A to D, ids that need escaping in
# label values (OpenMetrics: backslash, double quote; and UTF-8).
#
#        L_AB (10G, metric 1)      L_BD (10G, metric 1)
#     A ---------------------- B ---------------------- D"x\y
#      \                                               /
#       `-- L "ac" \ 1 (10G, 2) -- C -- L_CD_é (10G, 2)
#
# One demand A -> D of 15 Gbit/s, cost objective, headroom 1: the cheap
# route A-B-D (cost 2 per bit/s) is filled to 10G, the other 5G take A-C-D
# (cost 4): utilisation 1 on L_AB and L_BD, 0.5 on the other two, in the
# direction away from A; 0 backwards.
# ---------------------------------------------------------------------------
NODE_D = 'D"x\\y'
LINK_AC = 'L "ac" \\ 1'
LINK_CD = "L_CD_\u00e9"
TOPO = {
    "nodes": [{"id": "A"}, {"id": "B"}, {"id": "C"}, {"id": NODE_D}],
    "links": [
        {"id": "L_AB", "a": "A", "b": "B", "capacity_bps": 1e10, "te_metric": 1},
        {"id": "L_BD", "a": "B", "b": NODE_D, "capacity_bps": 1e10, "te_metric": 1},
        {"id": LINK_AC, "a": "A", "b": "C", "capacity_bps": 1e10, "te_metric": 2},
        {"id": LINK_CD, "a": "C", "b": NODE_D, "capacity_bps": 1e10, "te_metric": 2},
    ],
}
TM = {"demands": [{"src": "A", "dst": NODE_D, "rate_bps": 15e9, "priority": 0}]}
HAND_UTIL = {("L_AB", "A", "B"): 1.0, ("L_BD", "B", NODE_D): 1.0,
             (LINK_AC, "A", "C"): 0.5, (LINK_CD, "C", NODE_D): 0.5}

D = None        # the daemon
PROM = None     # the Prometheus server


def ok200(r, what):
    check(r.status == 200, "%s: status %d, body %r" % (what, r.status, r.body[:300]))
    return r.json()


def model_rev():
    return ok200(D.get("/v1/health"), "health")["model_revision"]


def current_plan():
    r = D.get("/v1/plan")
    j = ok200(r, "plan")
    return j, r.headers.get("ETag")


def patch_metric(metric):
    """Changes L_CD_é's TE metric; returns the model revision written."""
    j = ok200(D.request("PATCH", "/v1/links/" + urllib.parse.quote(LINK_CD),
                        {"te_metric": metric}), "patch")
    return j["model_revision"]


def metric_value(text, name):
    """The value of an unlabelled sample in an exposition text."""
    for line in text.splitlines():
        if line.startswith(name + " "):
            return float(line.split(" ")[1])
    return None


def wait_until(pred, timeout, what, step=0.05):
    end = time.time() + timeout
    while time.time() < end:
        v = pred()
        if v:
            return v
        time.sleep(step)
    raise Fail("%s: not within %.0f s" % (what, timeout))


def scrape(accept=None):
    hdrs = {"Accept": accept} if accept is not None else {}
    r = D.get("/metrics", headers=hdrs)
    check(r.status == 200, "GET /metrics: %d %r" % (r.status, r.body[:200]))
    return r


# ---------------------------------------------------------------------------
# A Prometheus server of our own
# ---------------------------------------------------------------------------

class Prometheus:
    def __init__(self, target):
        self.tmp = tempfile.mkdtemp(prefix="weft-prom-")
        self.port = free_port()
        self.base = "http://127.0.0.1:%d" % self.port
        cfg = os.path.join(self.tmp, "prometheus.yml")
        with open(cfg, "w") as f:
            f.write("global:\n"
                    "  scrape_interval: 1s\n"
                    "  scrape_timeout: 1s\n"
                    "  evaluation_interval: 1s\n"
                    "scrape_configs:\n"
                    "  - job_name: weft\n"
                    "    metrics_path: /metrics\n"
                    "    static_configs:\n"
                    "      - targets: ['%s']\n" % target)
        self.log = open(os.path.join(self.tmp, "prometheus.log"), "wb")
        self.proc = subprocess.Popen(
            [PROMETHEUS, "--config.file=" + cfg,
             "--storage.tsdb.path=" + os.path.join(self.tmp, "data"),
             "--web.listen-address=127.0.0.1:%d" % self.port,
             "--log.level=warn"],
            cwd=self.tmp, stdout=self.log, stderr=subprocess.STDOUT)
        end = time.time() + 60
        while time.time() < end:
            if self.proc.poll() is not None:
                raise RuntimeError("prometheus exited with %d: %s"
                                   % (self.proc.returncode, self.log_text()[-2000:]))
            try:
                with urllib.request.urlopen(self.base + "/-/ready", timeout=2) as r:
                    if r.status == 200:
                        return
            except OSError:
                pass
            time.sleep(0.1)
        raise RuntimeError("prometheus not ready within 60 s")

    def log_text(self):
        with open(os.path.join(self.tmp, "prometheus.log"), "rb") as f:
            return f.read().decode("utf-8", "replace")

    def api(self, path, **params):
        url = self.base + path + ("?" + urllib.parse.urlencode(params) if params else "")
        with urllib.request.urlopen(url, timeout=10) as r:
            j = json.loads(r.read().decode())
        check(j.get("status") == "success", "prometheus %s: %r" % (path, j))
        return j["data"]

    def query(self, q):
        return self.api("/api/v1/query", query=q)["result"]

    def stop(self):
        if self.proc is not None:
            stop_process(self.proc, 20)
            self.proc = None
            self.log.close()
        shutil.rmtree(self.tmp, ignore_errors=True)


# ---------------------------------------------------------------------------
# /metrics
# ---------------------------------------------------------------------------

def test_negotiation():
    # RFC 9110, 12.5.1: the q-values of the Accept header decide; without
    # one the older text format is the default Prometheus documents.
    for accept, want in ((None, TEXT_CTYPE),
                         (PROM_ACCEPT, OM_CTYPE),
                         ("application/openmetrics-text; version=1.0.0", OM_CTYPE),
                         ("text/plain;version=0.0.4", TEXT_CTYPE),
                         ("*/*", TEXT_CTYPE),
                         ("application/openmetrics-text;q=0, text/plain", TEXT_CTYPE),
                         ("text/plain;q=0.2, application/openmetrics-text;q=0.9", OM_CTYPE),
                         ("text/plain;q=0.9, application/openmetrics-text;q=0.2", TEXT_CTYPE),
                         ("application/openmetrics-text;version=9.9.9, text/plain;q=0.1",
                          TEXT_CTYPE)):
        r = scrape(accept)
        check(r.headers.get("Content-Type") == want,
              "Accept %r: Content-Type %r, want %r" % (accept, r.headers.get("Content-Type"), want))
        text = r.body.decode("utf-8")
        if want == OM_CTYPE:
            check(text.endswith("# EOF\n"), "OpenMetrics: ends with # EOF")
        else:
            check("# EOF" not in text, "0.0.4: no # EOF")


def test_openmetrics_parser():
    # OpenMetrics 1.0, checked by the Prometheus Python client's parser,
    # which rejects anything the ABNF or the family rules forbid.
    from prometheus_client.openmetrics.parser import text_string_to_metric_families
    scrape()    # counted once it is answered: the next one shows it
    text = scrape(PROM_ACCEPT).body.decode("utf-8")
    fams = {f.name: f for f in text_string_to_metric_families(text)}
    want = {"weft_plan_revision": ("gauge", ""),
            "weft_plan_model_revision": ("gauge", ""),
            "weft_plan_status": ("gauge", ""),
            "weft_plan_gap_ratio": ("gauge", "ratio"),
            "weft_plan_unserved_bits_per_second": ("gauge", "bits_per_second"),
            "weft_link_load_bits_per_second": ("gauge", "bits_per_second"),
            "weft_link_utilization_ratio": ("gauge", "ratio"),
            "weft_link_headroom_bits_per_second": ("gauge", "bits_per_second"),
            "weft_model_revision": ("gauge", ""),
            "weft_solve_seconds": ("histogram", "seconds"),
            "weft_http_requests": ("counter", ""),
            "weft_whatifs": ("counter", ""),
            "weft_sweeps_started": ("counter", ""),
            "weft_sweeps_ended": ("counter", ""),
            "weft_sweep_scenarios": ("counter", "")}
    for name, (typ, unit) in want.items():
        check(name in fams, "family %s missing; have %s" % (name, sorted(fams)))
        check((fams[name].type, fams[name].unit) == (typ, unit),
              "%s: type/unit %r, want %r" % (name, (fams[name].type, fams[name].unit), (typ, unit)))
    # The label values come back unescaped: the ids as the API has them.
    got = {(s.labels["link"], s.labels["from"], s.labels["to"]): s.value
           for s in fams["weft_link_utilization_ratio"].samples}
    for key, u in HAND_UTIL.items():
        check(key in got, "utilisation sample %r missing; have %r" % (key, list(got)))
        check(abs(got[key] - u) <= 1e-9, "%r: utilisation %r, hand-derived %r" % (key, got[key], u))
    # Histogram (OpenMetrics 1.0): cumulative buckets ending in +Inf, whose
    # count equals _count.
    h = fams["weft_solve_seconds"].samples
    buckets = [s for s in h if s.name == "weft_solve_seconds_bucket"]
    check(buckets[-1].labels["le"] == "+Inf", "last bucket +Inf")
    counts = [s.value for s in buckets]
    check(counts == sorted(counts), "buckets are cumulative: %r" % counts)
    count = [s.value for s in h if s.name == "weft_solve_seconds_count"]
    check(count == [counts[-1]] and counts[-1] >= 1, "_count %r, +Inf %r" % (count, counts[-1]))
    # Requests are counted by route pattern, not the path asked for.
    routes = {s.labels["route"] for s in fams["weft_http_requests"].samples}
    check("/v1/matrices/{name}" in routes and "/metrics" in routes, "routes %r" % sorted(routes))
    check(not any("/tm" in r for r in routes), "no raw path in route labels: %r" % sorted(routes))


def test_promtool_check_metrics():
    # promtool check metrics reads the older text format 0.0.4 (it reads an
    # OpenMetrics counter's family name as a separate untyped family), so
    # it gets the 0.0.4 exposition.  It exits 3 with lint problems; the one
    # accepted is its preference for bytes over bits: rates are bit/s here,
    # the unit of the trade and of the JSON API.
    text = scrape("text/plain;version=0.0.4").body
    p = subprocess.run([PROMTOOL, "check", "metrics"], input=text, capture_output=True, timeout=60)
    out = (p.stdout + p.stderr).decode("utf-8", "replace")
    check(p.returncode in (0, 3), "promtool exit %d: %s" % (p.returncode, out[:1000]))
    for line in out.splitlines():
        if not line.strip():
            continue
        name, _, msg = line.partition(" ")
        check(msg == 'use base unit "bytes" instead of "bits"' and "_bits_per_second" in name,
              "promtool: %r" % line)


def test_prometheus_scrapes_plan():
    # A real Prometheus (2.42) scrapes /metrics every second, negotiating
    # OpenMetrics; its query API must give back exactly the numbers of
    # GET /v1/plan/loads (both print 17 significant digits).
    rev = patch_metric(3)
    D.wait_plan(rev, timeout=60, verify=False)
    patch_metric(2)
    plan = D.wait_plan(model_rev(), timeout=60, verify=False)
    loads = ok200(D.get("/v1/plan/loads"), "loads")
    check(loads["revision"] == plan["revision"], "loads and plan agree")

    def scraped():
        res = PROM.query("weft_plan_revision")
        return res and float(res[0]["value"][1]) == plan["revision"]
    wait_until(scraped, 60, "Prometheus shows plan revision %d" % plan["revision"], 0.2)
    targets = PROM.api("/api/v1/targets")["activeTargets"]
    check(len(targets) == 1 and targets[0]["health"] == "up" and targets[0]["lastError"] == "",
          "target state %r" % [(t["health"], t["lastError"]) for t in targets])

    res = PROM.query("weft_plan_model_revision")
    check(float(res[0]["value"][1]) == plan["model_revision"], "model revision %r" % res)
    want_util, want_load = {}, {}
    for l in loads["links"]:
        for side, a, b in (("a_to_b", l["a"], l["b"]), ("b_to_a", l["b"], l["a"])):
            want_util[(l["id"], a, b)] = l[side]["utilization"]
            want_load[(l["id"], a, b)] = l[side]["load_bps"]
    for metric, want in (("weft_link_utilization_ratio", want_util),
                         ("weft_link_load_bits_per_second", want_load)):
        got = {(s["metric"]["link"], s["metric"]["from"], s["metric"]["to"]): float(s["value"][1])
               for s in PROM.query(metric)}
        check(set(got) == set(want), "%s series %r, want %r" % (metric, sorted(got), sorted(want)))
        for key in want:
            check(got[key] == want[key], "%s %r: Prometheus %r, /v1/plan/loads %r"
                  % (metric, key, got[key], want[key]))
    for key, u in HAND_UTIL.items():
        check(abs(want_util[key] - u) <= 1e-9, "%r: utilisation %r, hand-derived %r"
              % (key, want_util[key], u))
    # Counters arrive as counters: rate() over them works, and the
    # requests of this very test are there.
    res = PROM.query('weft_http_requests_total{route="/v1/plan/loads",code="200"}')
    check(res and float(res[0]["value"][1]) >= 1, "request counter %r" % res)


# ---------------------------------------------------------------------------
# ETag and If-None-Match (RFC 9110, 8.8.3 and 13.1.2)
# ---------------------------------------------------------------------------

def test_etag_304():
    D.wait_plan(model_rev(), timeout=60, verify=False)
    for path in ("/v1/plan", "/v1/plan/routes", "/v1/plan/loads"):
        r = D.get(path)
        j = ok200(r, path)
        tag = r.headers.get("ETag")
        check(tag == '"%d"' % j["revision"], "%s: ETag %r" % (path, tag))
        for inm in (tag, "W/" + tag, '"nope", ' + tag, 'W/"0",W/' + tag, "*"):
            r = D.get(path, headers={"If-None-Match": inm})
            check(r.status == 304, "%s If-None-Match %r: status %d" % (path, inm, r.status))
            check(r.body == b"", "304 has no body")
            check(r.headers.get("ETag") == tag, "304 names the tag: %r" % r.headers.get("ETag"))
        r = D.get(path, headers={"If-None-Match": '"%d"' % (j["revision"] + 1)})
        check(r.status == 200, "%s: another tag gives 200, got %d" % (path, r.status))
    # A change: the old tag no longer matches; 200 with the new tag.
    _, old = current_plan()
    rev = patch_metric(3)
    D.wait_plan(rev, timeout=60, verify=False)
    r = D.get("/v1/plan", headers={"If-None-Match": old})
    j = ok200(r, "after a change")
    check(r.headers.get("ETag") == '"%d"' % j["revision"] and r.headers.get("ETag") != old,
          "new ETag %r, old %r" % (r.headers.get("ETag"), old))
    patch_metric(2)


# ---------------------------------------------------------------------------
# Long polls
# ---------------------------------------------------------------------------

def long_poll(path, out):
    try:
        out.put(D.get(path, timeout=LONG_POLL_MAX_S + 30))
    except Exception as exc:
        out.put(exc)


def waiting():
    return metric_value(scrape().body.decode(), "weft_long_polls_waiting")


def test_long_poll_wakes_on_new_plan():
    plan = D.wait_plan(model_rev(), timeout=60, verify=False)
    out = queue.Queue()
    t = threading.Thread(target=long_poll, args=("/v1/plan?wait=%d&after=%d"
                                                 % (LONG_POLL_MAX_S, plan["revision"]), out))
    t.start()
    wait_until(lambda: waiting() == 1, 20, "the poll waits")
    rev = patch_metric(3)
    r = out.get(timeout=LONG_POLL_MAX_S + 40)
    t.join(5)
    check(not isinstance(r, Exception), "poll failed: %r" % r)
    j = ok200(r, "long poll")
    # Had the wait run out, the unchanged plan would have come back.
    check(j["revision"] > plan["revision"], "woken by plan %d, waited after %d"
          % (j["revision"], plan["revision"]))
    check(r.headers.get("ETag") == '"%d"' % j["revision"], "ETag of the new plan")
    D.wait_plan(rev, timeout=60, verify=False)
    # A revision already passed answers at once, as a plain GET.
    r = D.get("/v1/plan?wait=%d&after=%d" % (LONG_POLL_MAX_S, plan["revision"]))
    check(ok200(r, "old after")["revision"] > plan["revision"], "newer plan at once")
    patch_metric(2)


def test_long_poll_times_out_unchanged():
    plan = D.wait_plan(model_rev(), timeout=60, verify=False)
    r = D.get("/v1/plan?wait=1&after=%d" % plan["revision"], timeout=30)
    j = ok200(r, "timed-out poll")
    check(j["revision"] == plan["revision"], "unchanged plan %d, got %d"
          % (plan["revision"], j["revision"]))
    # If-None-Match still applies to what the poll answers.
    r = D.get("/v1/plan?wait=0.5&after=%d" % plan["revision"],
              headers={"If-None-Match": '"%d"' % plan["revision"]}, timeout=30)
    check(r.status == 304, "timed-out poll with a matching tag: %d" % r.status)


def test_long_poll_bad_input():
    for q, where in (("wait=0", "wait"), ("wait=-1", "wait"), ("wait=abc", "wait"),
                     ("wait=nan", "wait"), ("wait=inf", "wait"), ("wait=", "wait"),
                     ("wait=%d" % (LONG_POLL_MAX_S + 1), "wait"),
                     ("wait=1&after=x", "after"), ("wait=1&after=-2", "after"),
                     ("after=3", "after")):
        r = D.get("/v1/plan?" + q)
        check(r.status == 400, "%s: status %d" % (q, r.status))
        e = r.json()["error"]
        check(e["code"] == "invalid" and e["where"] == where, "%s: error %r" % (q, e))


def test_long_poll_bound():
    plan = D.wait_plan(model_rev(), timeout=60, verify=False)
    out = queue.Queue()
    path = "/v1/plan?wait=%d&after=%d" % (LONG_POLL_MAX_S, plan["revision"])
    ts = [threading.Thread(target=long_poll, args=(path, out)) for _ in range(LONG_POLL_MAX)]
    for t in ts:
        t.start()
    wait_until(lambda: waiting() == LONG_POLL_MAX, 20, "%d polls wait" % LONG_POLL_MAX)
    r = D.get(path)
    check(r.status == 503 and r.json()["error"]["code"] == "busy", "poll over the bound: %d" % r.status)
    check(r.headers.get("Retry-After") is not None, "503 with Retry-After")
    patch_metric(3)
    for _ in ts:
        r = out.get(timeout=LONG_POLL_MAX_S + 40)
        check(not isinstance(r, Exception) and r.status == 200, "released poll: %r" % r)
    for t in ts:
        t.join(5)
    patch_metric(2)


def test_long_poll_answered_at_shutdown():
    d = Daemon()
    try:
        ok200(d.put("/v1/topology", TOPO), "topology")
        plan = d.wait_plan(0, timeout=60, verify=False)
        out = queue.Queue()

        def poll():
            try:
                out.put(d.get("/v1/plan?wait=60&after=%d" % (plan["revision"] + 100), timeout=90))
            except Exception as exc:
                out.put(exc)
        t = threading.Thread(target=poll)
        t.start()
        wait_until(lambda: metric_value(d.get("/metrics").body.decode(),
                                        "weft_long_polls_waiting") == 1, 20, "poll waits")
        d.proc.terminate()
        rc = d.proc.wait(timeout=30)
        r = out.get(timeout=30)
        t.join(5)
        check(rc == 0, "daemon exit code %r" % rc)
        check(not isinstance(r, Exception) and r.status == 200, "poll answered at shutdown: %r" % r)
    finally:
        d.stop()


# ---------------------------------------------------------------------------
# Server-sent events (WHATWG HTML, 9.2)
# ---------------------------------------------------------------------------

class Stream:
    """Reads GET /v1/events on a thread and parses it as the standard's
    "interpret an event stream" algorithm does: lines end in LF, ":"
    starts a comment, "field: value" (one leading space dropped), a blank
    line dispatches the event (data lines joined with LF; no data, no
    event)."""

    def __init__(self, last_id=None):
        host, port = D.base[len("http://"):].split(":")
        self.conn = http.client.HTTPConnection(host, int(port), timeout=30)
        hdrs = {"Accept": "text/event-stream"}
        if last_id is not None:
            hdrs["Last-Event-ID"] = str(last_id)
        self.conn.request("GET", "/v1/events", headers=hdrs)
        self.resp = self.conn.getresponse()
        self.events, self.comments = [], []
        self.cv = threading.Condition()
        self.closed = False
        if self.resp.status == 200:
            self.t = threading.Thread(target=self.read, daemon=True)
            self.t.start()

    def read(self):
        buf, data, etype, eid = b"", [], "", None
        try:
            while True:
                chunk = self.resp.read1(4096)
                if not chunk:
                    break
                buf += chunk
                while b"\n" in buf:
                    raw, buf = buf.split(b"\n", 1)
                    line = raw.decode("utf-8")
                    with self.cv:
                        if line == "":
                            if data:
                                self.events.append({"id": eid, "event": etype or "message",
                                                    "data": "\n".join(data)})
                            data, etype = [], ""
                            self.cv.notify_all()
                        elif line.startswith(":"):
                            self.comments.append(line[1:])
                            self.cv.notify_all()
                        else:
                            field, _, value = line.partition(":")
                            if value.startswith(" "):
                                value = value[1:]
                            if field == "data":
                                data.append(value)
                            elif field == "event":
                                etype = value
                            elif field == "id":
                                eid = value
        except Exception:
            pass
        with self.cv:
            self.closed = True
            self.cv.notify_all()

    def wait(self, pred, timeout, what):
        end = time.time() + timeout
        with self.cv:
            while True:
                v = pred(self)
                if v:
                    return v
                left = end - time.time()
                if left <= 0 or self.closed:
                    raise Fail("event stream: %s not seen (events %r)" % (what, self.events[-5:]))
                self.cv.wait(left)

    def find(self, kind, cond=lambda d: True):
        for e in self.events:
            if e["event"] == kind:
                d = json.loads(e["data"])
                if cond(d):
                    return e, d
        return None

    def close(self):
        self.conn.close()


def test_events_model_and_plan():
    s = Stream()
    try:
        check(s.resp.status == 200, "status %d" % s.resp.status)
        check(s.resp.getheader("Content-Type") == "text/event-stream",
              "Content-Type %r" % s.resp.getheader("Content-Type"))
        s.wait(lambda s: s.comments, 10, "the opening comment")
        rev = patch_metric(3)
        _, m = s.wait(lambda s: s.find("model", lambda d: d["model_revision"] == rev), 30,
                      "model event for revision %d" % rev)
        _, p = s.wait(lambda s: s.find("plan", lambda d: d["model_revision"] >= rev), 60,
                      "plan event for revision %d" % rev)
        plan = D.wait_plan(rev, timeout=60, verify=False)
        check(set(p) == {"revision", "model_revision", "status", "max_utilization"}, "plan data %r" % p)
        check(p["revision"] <= plan["revision"] and p["status"] == plan["status"],
              "plan event %r, plan %r" % (p, (plan["revision"], plan["status"])))
        if p["revision"] == plan["revision"]:
            check(p["max_utilization"] == plan["max_utilization"], "max utilisation %r" % p)
        ids = [int(e["id"]) for e in s.events]
        check(ids == sorted(set(ids)), "ids increase: %r" % ids)
        # Keep-alive comments (the daemon sends one a second here).
        s.wait(lambda s: any("keep-alive" in c for c in s.comments), 10, "a keep-alive comment")
        patch_metric(2)
    finally:
        s.close()


def test_events_last_event_id():
    s = Stream()
    try:
        rev = patch_metric(3)
        e, _ = s.wait(lambda s: s.find("model", lambda d: d["model_revision"] == rev), 30, "model event")
        D.wait_plan(rev, timeout=60, verify=False)
    finally:
        s.close()
    # A reconnecting client names the last id it saw and gets what came
    # after it, while the daemon still keeps it.
    r = Stream(last_id=int(e["id"]) - 1)
    try:
        first, _ = r.wait(lambda s: s.events and (s.events[0], None), 30, "a kept event")
        check(first["id"] == e["id"] and first["event"] == "model",
              "first event after reconnecting %r, want id %s" % (first, e["id"]))
    finally:
        r.close()
    patch_metric(2)


def test_events_sweep():
    D.wait_plan(model_rev(), timeout=60, verify=False)
    s = Stream()
    try:
        s.wait(lambda s: s.comments, 10, "the opening comment")
        r = D.request("POST", "/v1/sweeps", {"kind": "links"})
        check(r.status == 202, "sweep start %d %r" % (r.status, r.body[:200]))
        sid, total = r.json()["id"], r.json()["total"]
        s.wait(lambda s: s.find("sweep", lambda d: d["id"] == sid and d["state"] == "running"), 30,
               "sweep %d running" % sid)
        _, d = s.wait(lambda s: s.find("sweep", lambda d: d["id"] == sid and d["state"] != "running"),
                      90, "sweep %d ended" % sid)
        check(d == {"id": sid, "done": total, "total": total, "state": "done"}, "end event %r" % d)
        sw = ok200(D.get("/v1/sweeps/%d" % sid), "sweep")
        check(sw["state"] == "done" and sw["done"] == total, "sweep %r" % sw["state"])
    finally:
        s.close()
    text = scrape().body.decode()
    check(metric_value(text, "weft_sweeps_started_total") >= 1, "sweeps started counted")
    check('weft_sweeps_ended_total{state="done"} ' in text, "sweeps ended counted")


def test_events_bound():
    streams = []
    try:
        # Streams closed by earlier cases may take a keep-alive to notice.
        wait_until(lambda: metric_value(scrape().body.decode(), "weft_event_streams_open") == 0,
                   20, "no stream open")
        for _ in range(EVENTS_MAX):
            streams.append(Stream())
            check(streams[-1].resp.status == 200, "stream %d: %d" % (len(streams), streams[-1].resp.status))
        extra = Stream()
        streams.append(extra)
        check(extra.resp.status == 503, "stream over events_max: %d" % extra.resp.status)
        check(json.loads(extra.resp.read())["error"]["code"] == "busy", "busy")
    finally:
        for s in streams:
            s.close()


# ---------------------------------------------------------------------------

def main():
    global D, PROM
    order = cases.select(globals(), sys.argv[1:])
    failed = 0
    D = Daemon(extra_args=["--long-poll-max", str(LONG_POLL_MAX),
                           "--long-poll-max-s", str(LONG_POLL_MAX_S),
                           "--events-max", str(EVENTS_MAX),
                           "--events-keepalive-s", "1"])
    try:
        ok200(D.put("/v1/topology", TOPO), "topology")
        ok200(D.put("/v1/matrices/tm", TM), "matrix")
        rev = ok200(D.put("/v1/policy", {"objective": "cost", "headroom": 1.0, "matrix": "tm"}),
                    "policy")["model_revision"]
        D.wait_plan(rev, timeout=60, verify=False)
        PROM = Prometheus(D.base[len("http://"):])
        failed = cases.run(globals(), order, CASE_TIMEOUT_S)
        if not cases.exits_cleanly(D, len(order) + 1):
            failed += 1
        order.append("daemon_exits_cleanly")
    finally:
        if failed:
            cases.log_tail(D, 15)
        if PROM is not None:
            if failed:
                for l in PROM.log_text().splitlines()[-5:]:
                    print("# prometheus: " + l)
            PROM.stop()
        D.stop()
    return cases.finish(order, failed)


if __name__ == "__main__":
    sys.exit(main())
