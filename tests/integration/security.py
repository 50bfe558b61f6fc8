#!/usr/bin/python3
# SPDX-License-Identifier: GPL-3.0-or-later
"""Bearer tokens, roles per route, the audit log and HTTPS (make check-security).

Run from the repository root with /usr/bin/python3.  Starts its own weftd
daemons on 127.0.0.1 (WEFT_TEST_ADDR is ignored: the cases need their own
databases and options), each with a database in a temporary directory.
Each case prints TAP; every case is bounded in time (CASE_TIMEOUT_S), and
every wait for the daemon to notice a token change polls with a bound.

What the checks rest on, outside weft:
  - The role of every route is written out below (ROLES), from the issue's
    words (reads need read; matrices, link state, what-ifs and sweeps
    operate; topology, policy and import admin; the map page's files
    none), not read from api/routes.c; and every route docs/api.md lists
    must be in it.
  - RFC 6750 (bearer tokens): 401 with a WWW-Authenticate "Bearer"
    challenge, error="invalid_token" for a bad token and no error code
    when none was sent (3.1); 403 with error="insufficient_scope".
  - FIPS 180-4 SHA-256 as Python's hashlib computes it: the stored hash
    must be SHA-256(salt || token); the token itself must be nowhere in the
    database file.
  - SQLite's own reader (Python's sqlite3 module) for the audit rows and
    tokens, after the daemon has stopped.
  - HTTPS: a certificate made by openssl (openssl req -x509), and curl as
    the client, which must verify it with --cacert and refuse it without.
Listening on a non-loopback address is not tried here (it would listen
beyond this host): the decision is unit-tested (tests/unit/api/
auth_test.c), and `auth always`, which makes the same decision on
loopback, is tested end to end below.
"""
import hashlib
import http.client
import json
import os
import re
import shutil
import sqlite3
import subprocess
import sys
import tempfile
import time

ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
sys.path.insert(0, os.path.join(ROOT, "tests", "lib"))
os.environ.pop("WEFT_TEST_ADDR", None)
from weftd import Daemon, Reply  # noqa: E402
import cases  # noqa: E402
from cases import check  # noqa: E402

CASE_TIMEOUT_S = 120
WEFTD = os.environ.get("WEFTD", os.path.join(ROOT, "build", "weftd"))
CURL = "/usr/bin/curl"
OPENSSL = "/usr/bin/openssl"
NOTICE_S = 15           # bound on the daemon noticing a token change
TOKEN_RE = re.compile(r"^weft_[0-9a-f]{16}_[0-9a-f]{64}$")

# ---------------------------------------------------------------------------
# The role each route needs: (method, route as docs/api.md names it, the
# path requested, role).  "public" needs no token at all.
# ---------------------------------------------------------------------------
ROLES = [
    ("GET", "/v1/health", "/v1/health", "read"),
    ("GET", "/v1/topology", "/v1/topology", "read"),
    ("PUT", "/v1/topology", "/v1/topology", "admin"),
    ("GET", "/v1/links/{id}", "/v1/links/L1", "read"),
    ("PATCH", "/v1/links/{id}", "/v1/links/L1", "operate"),
    ("GET", "/v1/matrices", "/v1/matrices", "read"),
    ("GET", "/v1/matrices/{name}", "/v1/matrices/tm", "read"),
    ("PUT", "/v1/matrices/{name}", "/v1/matrices/tm", "operate"),
    ("DELETE", "/v1/matrices/{name}", "/v1/matrices/gone", "operate"),
    ("GET", "/v1/policy", "/v1/policy", "read"),
    ("PUT", "/v1/policy", "/v1/policy", "admin"),
    ("POST", "/v1/import", "/v1/import?format=csv&matrix=tm", "admin"),
    ("GET", "/v1/plan", "/v1/plan", "read"),
    ("GET", "/v1/plan/routes", "/v1/plan/routes", "read"),
    ("GET", "/v1/plan/loads", "/v1/plan/loads", "read"),
    ("GET", "/v1/plan/forwarding", "/v1/plan/forwarding", "read"),
    ("GET", "/v1/plan/diff", "/v1/plan/diff?from=1", "read"),
    ("GET", "/v1/model", "/v1/model?format=lp", "read"),
    ("GET", "/v1/snapshot", "/v1/snapshot", "read"),
    ("POST", "/v1/whatif", "/v1/whatif", "operate"),
    ("POST", "/v1/sweeps", "/v1/sweeps", "operate"),
    ("GET", "/v1/sweeps", "/v1/sweeps", "read"),
    ("GET", "/v1/sweeps/{id}", "/v1/sweeps/999", "read"),
    ("POST", "/v1/sweeps/{id}/cancel", "/v1/sweeps/999/cancel", "operate"),
    ("DELETE", "/v1/sweeps/{id}", "/v1/sweeps/999", "operate"),
    ("GET", "/v1/sweeps/{id}/results.csv", "/v1/sweeps/999/results.csv", "read"),
    ("GET", "/v1/sweeps/{id}/links.csv", "/v1/sweeps/999/links.csv", "read"),
    ("GET", "/v1/sweeps/{id}/report.svg", "/v1/sweeps/999/report.svg", "read"),
    ("GET", "/v1/events", "/v1/events", "read"),
    ("GET", "/metrics", "/metrics", "read"),
    ("GET", "/", "/", "public"),
    ("GET", "/ui/{file}", "/ui/map.js", "public"),
]
RANK = {"public": 0, "read": 1, "operate": 2, "admin": 3}

# A triangle; one demand.  The bodies are valid, so an allowed request is
# answered by its handler (200, or 404/409/503 for what does not exist).
TOPO = {"nodes": [{"id": "A"}, {"id": "B"}, {"id": "C"}],
        "links": [{"id": "L1", "a": "A", "b": "B", "capacity_bps": 1e9, "te_metric": 1},
                  {"id": "L2", "a": "B", "b": "C", "capacity_bps": 1e9, "te_metric": 1},
                  {"id": "L3", "a": "A", "b": "C", "capacity_bps": 1e9, "te_metric": 3}]}
TM = {"demands": [{"src": "A", "dst": "C", "rate_bps": 2e8}]}
POLICY = {"objective": "cost", "headroom": 1.0, "matrix": "tm"}
CSV = ("node,A\nnode,B\nnode,C\n"
       "link,L1,A,B,1G,1,up\nlink,L2,B,C,1G,1,up\nlink,L3,A,C,1G,3,up\n"
       "demand,A,C,200M\n")
BODIES = {
    ("PUT", "/v1/topology"): (TOPO, "application/json"),
    ("PATCH", "/v1/links/{id}"): ({"te_metric": 2}, "application/json"),
    ("PUT", "/v1/matrices/{name}"): (TM, "application/json"),
    ("PUT", "/v1/policy"): (POLICY, "application/json"),
    ("POST", "/v1/import"): (CSV, "text/csv"),
    ("POST", "/v1/whatif"): ({"fail": {"links": ["L1"]}}, "application/json"),
    ("POST", "/v1/sweeps"): ({"kind": "links"}, "application/json"),
}

# The writes that change the model, and so answer with the revision they
# made (docs/api.md); the others (what-ifs, sweeps) make none.
MODEL_WRITES = {("PUT", "/v1/topology"), ("PATCH", "/v1/links/{id}"),
                ("PUT", "/v1/matrices/{name}"), ("DELETE", "/v1/matrices/{name}"),
                ("PUT", "/v1/policy"), ("POST", "/v1/import")}

TMP = None


class Weftd(Daemon):
    """A weftd on its own database file (kept after the daemon stops, for
    the audit checks), ready when the public page answers: that works
    whatever the token rules are.  With ca, it serves HTTPS and is asked
    through curl."""

    def __init__(self, db, extra=(), ca=None):
        self.ca = ca
        Daemon.__init__(self, extra_args=["--db", db] + list(extra))
        self.db_file = db

    def stop(self):
        """Stops the daemon; it must end with exit code 0 and no
        sanitizer report in its log (leaks included, under ASan)."""
        if self.proc is None:
            return
        self.proc.terminate()
        try:
            rc = self.proc.wait(timeout=30)
        except subprocess.TimeoutExpired:
            rc = None
        log = self.log_text()
        Daemon.stop(self)
        check(rc == 0, "weftd exit code %r; log ends %r" % (rc, log[-300:]))
        bad = [l for l in log.splitlines() if any(m in l for m in cases.SANITIZER_MARKS)]
        check(not bad, "sanitizer report: %r" % bad[:3])

    def wait_ready(self, timeout=20.0):
        end = time.time() + timeout
        while time.time() < end:
            if self.proc.poll() is not None:
                raise RuntimeError("weftd exited with %d:\n%s"
                                   % (self.proc.returncode, self.log_text()))
            try:
                if self.ca is not None:
                    if curl(self, "GET", "/", ca=self.ca)[0] == 200:
                        return
                elif call(self, "GET", "/").status == 200:
                    return
            except OSError:
                pass
            time.sleep(0.05)
        raise RuntimeError("weftd did not become ready in %.0f s" % timeout)


def call(d, method, path, token=None, body=None, ctype="application/json",
         authorization=None, timeout=30):
    """One request over plain HTTP; headers come back with lower-case
    names.  An event stream is not read: its status is what counts."""
    conn = http.client.HTTPConnection("127.0.0.1", d.port, timeout=timeout)
    headers = {}
    if token is not None:
        headers["Authorization"] = "Bearer " + token
    if authorization is not None:
        headers["Authorization"] = authorization
    data = None
    if body is not None:
        data = json.dumps(body).encode() if isinstance(body, (dict, list)) else body.encode()
        headers["Content-Type"] = ctype
    try:
        conn.request(method, path, body=data, headers=headers)
        r = conn.getresponse()
        hdrs = {k.lower(): v for k, v in r.getheaders()}
        text = b"" if hdrs.get("content-type", "").startswith("text/event-stream") else r.read()
        return Reply(r.status, hdrs, text)
    finally:
        conn.close()


def curl(d, method, path, ca=None, token=None, body=None, insecure_scheme=False):
    """One request through curl; returns (HTTP status or 0, curl's exit
    code, body text)."""
    scheme = "http" if insecure_scheme else "https"
    args = [CURL, "-sS", "--max-time", "20", "-o", "-", "-w", "\n%{http_code}",
            "-X", method]
    if ca is not None:
        args += ["--cacert", ca]
    if token is not None:
        args += ["-H", "Authorization: Bearer " + token]
    if body is not None:
        args += ["-H", "Content-Type: application/json", "--data-binary", json.dumps(body)]
    args.append("%s://127.0.0.1:%d%s" % (scheme, d.port, path))
    p = subprocess.run(args, capture_output=True, text=True, timeout=30)
    text, _, code = p.stdout.rpartition("\n")
    return (int(code) if code.isdigit() else 0), p.returncode, text


def token_cmd(db, *args):
    return subprocess.run([WEFTD, "token"] + list(args[:1]) + ["--db", db] + list(args[1:]),
                          capture_output=True, text=True, timeout=30)


def make_token(db, role, name=None):
    """weftd token add; checks that standard output is the token alone."""
    args = ["add", "--role", role] + (["--name", name] if name else [])
    p = token_cmd(db, *args)
    check(p.returncode == 0, "token add %s: %d %s" % (role, p.returncode, p.stderr))
    check(p.stdout.endswith("\n") and p.stdout.count("\n") == 1,
          "token add prints one line: %r" % p.stdout)
    tok = p.stdout.strip()
    check(TOKEN_RE.match(tok), "token form: %r" % tok)
    return tok


def wait_status(pred, what):
    """Polls pred() (a status) until it holds, at most NOTICE_S."""
    end = time.time() + NOTICE_S
    while True:
        st = pred()
        if st:
            return
        check(time.time() < end, "within %d s: %s" % (NOTICE_S, what))
        time.sleep(0.05)


def send(d, row, token=None):
    method, route, path, _role = row
    body, ctype = BODIES.get((method, route), (None, None))
    return call(d, method, path, token=token, body=body, ctype=ctype or "application/json")


def error_code(r):
    try:
        return r.json()["error"]["code"]
    except (ValueError, KeyError, TypeError):
        return None


def expect_refusal(r, status, what, bad_token=False):
    check(r.status == status, "%s: %d, want %d (%r)" % (what, r.status, status, r.body[:200]))
    code = {401: "unauthorized", 403: "forbidden"}[status]
    check(error_code(r) == code, "%s: error code %r, want %s" % (what, error_code(r), code))
    err = r.json()["error"]
    check(err.get("where") == "Authorization" and err.get("message"),
          "%s: where and message: %r" % (what, err))
    ch = r.headers.get("www-authenticate", "")
    check(ch.startswith("Bearer"), "%s: WWW-Authenticate Bearer: %r" % (what, ch))
    if status == 403:
        check('error="insufficient_scope"' in ch, "%s: insufficient_scope: %r" % (what, ch))
    elif bad_token:
        check('error="invalid_token"' in ch, "%s: invalid_token: %r" % (what, ch))
    else:
        # RFC 6750 3.1: no error code when the request had no credentials.
        check("error=" not in ch, "%s: no error code without a token: %r" % (what, ch))


def audit_rows(db):
    con = sqlite3.connect(db)
    try:
        return [dict(zip(("who", "token_id", "method", "path", "status", "model_revision",
                          "client", "request_id", "at"), row))
                for row in con.execute("SELECT who, token_id, method, path, status, "
                                       "model_revision, client, request_id, at "
                                       "FROM audit ORDER BY id")]
    finally:
        con.close()


def new_db(name):
    return os.path.join(TMP, name + ".db")


# ---------------------------------------------------------------------------
# cases
# ---------------------------------------------------------------------------

def test_role_table_covers_the_documented_routes():
    """Every (method, path) of docs/api.md's Contents table has a role in
    ROLES, and ROLES names no route the document lacks."""
    with open(os.path.join(ROOT, "docs", "api.md"), encoding="utf-8") as f:
        text = f.read()
    doc = set()
    for m in re.finditer(r"^\| (GET|PUT|POST|PATCH|DELETE) \| `([^`]+)` \|", text, re.M):
        doc.add((m.group(1), m.group(2).split("?")[0]))
    ours = {(r[0], r[1]) for r in ROLES}
    check(doc, "docs/api.md lists routes")
    check(doc - ours == set(), "routes without a role in this test: %s" % sorted(doc - ours))
    check(ours - doc == set(), "roles for routes docs/api.md lacks: %s" % sorted(ours - doc))


def test_first_start_everything_open():
    """Loopback and no token: every route answers without one, and the
    writes are recorded as "local" with the revision they made."""
    db = new_db("first")
    d = Weftd(db)
    revs = {}
    try:
        for row in ROLES:
            r = send(d, row)
            check(r.status not in (401, 403), "%s %s without a token: %d %r"
                  % (row[0], row[2], r.status, r.body[:200]))
            if (row[0], row[1]) in MODEL_WRITES and r.status == 200:
                revs[(row[0], row[2])] = r.json()["model_revision"]
        check(("PUT", "/v1/topology") in revs, "the topology was stored: %r" % revs)
    finally:
        d.stop()
    rows = audit_rows(db)
    writes = [r for r in ROLES if r[3] in ("operate", "admin")]
    check(len(rows) == len(writes), "one audit row per write: %d rows, %d writes"
          % (len(rows), len(writes)))
    for row, a in zip(writes, rows):
        check((a["method"], a["path"]) == (row[0], row[2].split("?")[0]),
              "audit row for %s %s: %r" % (row[0], row[2], a))
        check(a["who"] == "local" and a["token_id"] is None, "who: %r" % a)
        check(a["client"] == "127.0.0.1", "client: %r" % a)
        check(re.match(r"^\d{4}-\d\d-\d\dT\d\d:\d\d:\d\dZ$", a["at"]), "at: %r" % a)
        want = revs.get((row[0], row[2]))
        check(a["model_revision"] == want, "%s %s made revision %r, audit says %r"
              % (row[0], row[2], want, a["model_revision"]))
    # Reads are not audited.
    check(all(a["method"] != "GET" for a in rows), "no GET in the audit log")


def test_roles_per_route():
    """Once tokens exist: for every route, no token / read / operate /
    admin give 401 / 403 / allowed as the route's role says; reads stay
    open without a token (auth_reads auto, on loopback).  A revoked token
    is refused.  The tokens are stored as salted hashes only, and the
    audit log says who did what."""
    db = new_db("roles")
    d = Weftd(db)
    try:
        check(call(d, "PUT", "/v1/topology", body=TOPO).status == 200, "topology, before tokens")
        toks = {"read": make_token(db, "read", "mon"),
                "operate": make_token(db, "operate", "ops"),
                "admin": make_token(db, "admin")}
        check(len(set(toks.values())) == 3, "three different tokens")
        # The daemon notices the first token (another process made it).
        wait_status(lambda: call(d, "PATCH", "/v1/links/L1", body={"te_metric": 2}).status == 401,
                    "a write without a token is refused once a token exists")

        for row in ROLES:
            method, _route, path, role = row
            what = "%s %s" % (method, path)
            r = send(d, row)
            if role in ("operate", "admin"):
                expect_refusal(r, 401, what + " without a token")
            else:
                check(r.status not in (401, 403), "%s without a token: %d" % (what, r.status))
            for trole, tok in toks.items():
                r = send(d, row, token=tok)
                if role != "public" and RANK[trole] < RANK[role]:
                    expect_refusal(r, 403, "%s with a %s token" % (what, trole))
                else:
                    check(r.status not in (401, 403), "%s with a %s token: %d %r"
                          % (what, trole, r.status, r.body[:200]))

        # Bad tokens, everywhere: a wrong secret, an unknown selector, no
        # bearer scheme.  Also on routes that need none.
        forged = toks["admin"][:-4] + ("0000" if not toks["admin"].endswith("0000") else "1111")
        for auth in ("Bearer " + forged, "Bearer weft_" + "0" * 16 + "_" + "0" * 64,
                     "Basic YWRtaW46YWRtaW4=", "Bearer"):
            for method, path, body in (("PUT", "/v1/policy", POLICY), ("GET", "/v1/plan", None),
                                       ("GET", "/", None)):
                r = call(d, method, path, body=body, authorization=auth)
                expect_refusal(r, 401, "%s %s with %r" % (method, path, auth[:20]),
                               bad_token=True)

        # The write with a good admin token, for the audit check.
        r = call(d, "PUT", "/v1/policy", body=POLICY, token=toks["admin"])
        check(r.status == 200, "policy with admin: %r" % r)
        admin_rev = r.json()["model_revision"]

        # list: ids, roles, names; no token, no secret, no selector.
        p = token_cmd(db, "list")
        check(p.returncode == 0, "token list: %s" % p.stderr)
        lines = p.stdout.strip().splitlines()
        check(len(lines) == 4, "a header and three tokens: %r" % p.stdout)
        check(re.match(r"^1\s+read\s+mon\s", lines[1]) and re.match(r"^2\s+operate\s+ops\s", lines[2])
              and re.match(r"^3\s+admin\s+-\s", lines[3]), "list rows: %r" % lines)
        for t in toks.values():
            check(t[5:21] not in p.stdout and t[22:] not in p.stdout, "list shows no token part")

        # Revocation: the operate token stops working.
        p = token_cmd(db, "revoke", "2")
        check(p.returncode == 0 and p.stdout == "", "revoke: %d %r %r"
              % (p.returncode, p.stdout, p.stderr))
        wait_status(lambda: call(d, "PATCH", "/v1/links/L1", body={"te_metric": 2},
                                 token=toks["operate"]).status == 401,
                    "a revoked token is refused")
        r = call(d, "GET", "/v1/plan", token=toks["operate"])
        expect_refusal(r, 401, "a read with a revoked token", bad_token=True)
        check(call(d, "PATCH", "/v1/links/L1", body={"te_metric": 2},
                   token=toks["admin"]).status == 200, "admin still works")
        p = token_cmd(db, "list")
        check(re.search(r"^2\s+operate\s+ops\s+\S+\s+\d{4}-", p.stdout, re.M),
              "list shows token 2 revoked: %r" % p.stdout)
        p = token_cmd(db, "revoke", "2")
        check(p.returncode == 0 and "already" in p.stderr, "revoke twice: %r" % p.stderr)
        p = token_cmd(db, "revoke", "99")
        check(p.returncode == 1, "revoke an unknown id: %d" % p.returncode)
    finally:
        d.stop()

    # Stored: SHA-256(salt || token), never the token.
    con = sqlite3.connect(db)
    try:
        stored = {row[0]: row[1:] for row in
                  con.execute("SELECT id, selector, salt, hash, role FROM tokens")}
    finally:
        con.close()
    for tid, role in ((1, "read"), (2, "operate"), (3, "admin")):
        sel, salt, h, srole = stored[tid]
        tok = toks[role]
        check(srole == role and sel == tok[5:21], "token %d row: %r" % (tid, stored[tid]))
        check(len(salt) == 16 and len(h) == 32, "salt and hash sizes")
        check(h == hashlib.sha256(bytes(salt) + tok.encode()).digest(),
              "token %d: hash = SHA-256(salt || token)" % tid)
        check(h != hashlib.sha256(tok.encode()).digest(), "the salt is in the hash")
    check(len({s[1] for s in stored.values()}) == 3, "a salt per token")
    data = b""
    for suffix in ("", "-wal"):
        if os.path.exists(db + suffix):
            with open(db + suffix, "rb") as f:
                data += f.read()
    for tok in toks.values():
        check(tok.encode() not in data and tok[22:].encode() not in data,
              "the token's secret is nowhere in the database")

    rows = audit_rows(db)
    refused = [a for a in rows if a["status"] == 401 and a["who"] == "anonymous"]
    check(len(refused) >= len([r for r in ROLES if r[3] in ("operate", "admin")]),
          "every write refused without a token is recorded: %d" % len(refused))
    check(all(a["token_id"] is None for a in refused), "no token id on refusals")
    weak = [a for a in rows if a["status"] == 403]
    check(weak and all(a["who"] in ("mon", "ops") and a["token_id"] in (1, 2) for a in weak),
          "403s name the weak token: %r" % weak[:3])
    check(any(a["who"] == "mon" and a["token_id"] == 1 and a["method"] == "PUT"
              and a["path"] == "/v1/topology" and a["status"] == 403 for a in rows),
          "the read token's topology attempt is recorded")
    check(any(a["who"] == "invalid" and a["token_id"] is None and a["status"] == 401
              for a in rows), "bad tokens are recorded as invalid")
    check(any(a["who"] == "token 3" and a["token_id"] == 3 and a["path"] == "/v1/policy"
              and a["status"] == 200 and a["model_revision"] == admin_rev for a in rows),
          "the admin's policy write, with its revision %d" % admin_rev)
    check(all(a["request_id"] for a in rows), "every row has its request id")


def test_reads_closed():
    """auth_reads yes: reads need a read token too (/metrics included);
    the page's files stay public.  The token was made before the daemon
    ever ran: token add creates the database."""
    db = new_db("reads")
    tok = make_token(db, "read", "scraper")
    d = Weftd(db, ["--auth-reads", "yes"])
    try:
        for path in ("/v1/health", "/v1/plan", "/metrics", "/v1/topology"):
            expect_refusal(call(d, "GET", path), 401, "GET %s without a token" % path)
            r = call(d, "GET", path, token=tok)
            check(r.status not in (401, 403), "GET %s with a read token: %d" % (path, r.status))
        check(call(d, "GET", "/metrics", token=tok).status == 200, "metrics with a read token")
        check(call(d, "GET", "/").status == 200, "the page needs no token")
        expect_refusal(call(d, "PUT", "/v1/topology", body=TOPO, token=tok), 403,
                       "a write with a read token")
    finally:
        d.stop()


def test_auth_always_before_any_token():
    """auth always (the decision a non-loopback address makes, on
    loopback): with no token yet, writes are refused; reads are open
    (auth_reads auto on loopback); the first admin token, made while the
    daemon runs, opens writes to its holder."""
    db = new_db("always")
    d = Weftd(db, ["--auth", "always"])
    try:
        expect_refusal(call(d, "PUT", "/v1/topology", body=TOPO), 401, "a write, no token exists")
        check(call(d, "GET", "/v1/health").status == 200, "reads are open")
        tok = make_token(db, "admin", "first-admin")
        wait_status(lambda: call(d, "PUT", "/v1/topology", body=TOPO, token=tok).status == 200,
                    "the new admin token is accepted")
        expect_refusal(call(d, "PUT", "/v1/topology", body=TOPO), 401, "still no anonymous write")
    finally:
        d.stop()


def test_token_command_refusals():
    """weftd token: bad roles, names, ids and usage are refused; nothing
    goes to standard output then."""
    db = new_db("cmd")
    for args, rc in ((["add", "--role", "root"], 2), (["add"], 2),
                     (["add", "--role", "read", "--name", "bad name"], 2),
                     (["add", "--role", "read", "--name", "local"], 2),
                     (["revoke", "x"], 2), (["revoke", "5"], 1), (["frob"], 2)):
        p = token_cmd(db, *args)
        check(p.returncode == rc and p.stdout == "", "token %s: %d %r, want %d"
              % (" ".join(args), p.returncode, p.stdout, rc))
    p = subprocess.run([WEFTD, "token", "list"], capture_output=True, text=True, timeout=30)
    check(p.returncode == 2, "list without --db is usage: %d" % p.returncode)


def test_config_refusals():
    """Bad values of auth and auth_reads, and half a TLS setting, stop
    weftd at start (weftd -t checks them)."""
    for extra in (["--auth", "sometimes"], ["--auth-reads", "maybe"],
                  ["--tls-cert", "/nonexistent.pem"]):
        p = subprocess.run([WEFTD, "--db", new_db("conf")] + extra + ["-t"],
                           capture_output=True, text=True, timeout=30)
        check(p.returncode != 0 and "fatal" in p.stderr, "%s: %d %r"
              % (extra, p.returncode, p.stderr))


def test_https_with_curl():
    """TLS: a self-signed certificate from openssl; curl verifies it with
    --cacert, refuses it without, and a plain HTTP request gets no reply;
    tokens work the same over HTTPS."""
    cert = os.path.join(TMP, "cert.pem")
    key = os.path.join(TMP, "key.pem")
    p = subprocess.run([OPENSSL, "req", "-x509", "-newkey", "rsa:2048", "-nodes",
                        "-keyout", key, "-out", cert, "-days", "2", "-subj", "/CN=localhost",
                        "-addext", "subjectAltName=IP:127.0.0.1,DNS:localhost"],
                       capture_output=True, text=True, timeout=60)
    check(p.returncode == 0, "openssl req: %s" % p.stderr)
    db = new_db("tls")
    d = Weftd(db, ["--tls-cert", cert, "--tls-key", key], ca=cert)
    try:
        st, rc, text = curl(d, "GET", "/v1/health", ca=cert)
        check(st == 200 and rc == 0 and "model_revision" in json.loads(text),
              "health over HTTPS: %d %d %r" % (st, rc, text[:200]))
        st, rc, _ = curl(d, "GET", "/v1/health")
        check(rc == 60 and st == 0, "an unknown certificate is refused (curl 60): %d %d" % (rc, st))
        st, rc, _ = curl(d, "GET", "/v1/health", insecure_scheme=True)
        check(st != 200, "no HTTP reply on the HTTPS port: %d (curl %d)" % (st, rc))
        st, rc, text = curl(d, "PUT", "/v1/topology", ca=cert, body=TOPO)
        check(st == 200, "a write before any token: %d %r" % (st, text[:200]))
        tok = make_token(db, "admin", "tls-admin")
        end = time.time() + NOTICE_S
        while curl(d, "PUT", "/v1/topology", ca=cert, body=TOPO)[0] != 401:
            check(time.time() < end, "the token is noticed over HTTPS")
            time.sleep(0.05)
        st, rc, text = curl(d, "PUT", "/v1/topology", ca=cert, body=TOPO, token=tok)
        check(st == 200 and json.loads(text)["nodes"] == 3, "write with the token: %d %r"
              % (st, text[:200]))
    finally:
        d.stop()


def main():
    global TMP
    order = cases.select(globals(), sys.argv[1:])
    TMP = tempfile.mkdtemp(prefix="weft-security-")
    try:
        failed = cases.run(globals(), order, CASE_TIMEOUT_S)
    finally:
        shutil.rmtree(TMP, ignore_errors=True)
    return cases.finish(order, failed)


if __name__ == "__main__":
    sys.exit(main())
