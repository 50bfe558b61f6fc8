#!/usr/bin/python3
# SPDX-License-Identifier: GPL-3.0-or-later
"""Running weftd as a service: readiness and watchdog, stop, backup,
migrations, the unit file, the default configuration, make install.

Run from the repository root with /usr/bin/python3 (make check-service).
Every daemon here is its own, on 127.0.0.1 with a free port and a
temporary directory (WEFT_TEST_ADDR is ignored).  Each case prints TAP
(tests/lib/cases.py) and is bounded in time (CASE_TIMEOUT_S) besides its
own waits.

The checks are against things outside weft, named beside each:
  - systemd's notification protocol (sd_notify(3): datagrams of
    newline-separated VARIABLE=value lines to the AF_UNIX socket named by
    NOTIFY_SOCKET; WATCHDOG_USEC asks for WATCHDOG=1 keep-alives): the
    test is the manager, with a datagram socket of its own.
  - systemd's own unit parser and its exposure score: `systemd-analyze
    verify` and `systemd-analyze security --offline=yes`.
  - SQLite: `PRAGMA integrity_check` and `PRAGMA foreign_key_check` of the
    sqlite3 shell (Debian's sqlite3 package) on the daemon's files, and
    Python's sqlite3 module to build databases at earlier schema versions
    straight from storage/schema/*.sql and to read what the daemon wrote.
  - The state a backup must hold is derived from the writes' own replies
    (each acknowledged write names the model revision it made).
  - GNU make's DESTDIR and PREFIX conventions (the GNU Coding Standards,
    "DESTDIR: Support for Staged Installs") for make install.
"""
import glob
import json
import os
import re
import shutil
import signal
import socket
import sqlite3
import subprocess
import sys
import tempfile
import threading
import time
import urllib.error
import urllib.request

ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
sys.path.insert(0, os.path.join(ROOT, "tests", "lib"))
os.environ.pop("WEFT_TEST_ADDR", None)
from weftd import free_port  # noqa: E402
import cases  # noqa: E402
from cases import Fail, check  # noqa: E402
import sndlib  # noqa: E402

WEFTD = os.environ.get("WEFTD", os.path.join(ROOT, "build", "weftd"))
BUILD = os.environ.get("BUILD", "build")
MAKE = os.environ.get("MAKE", "make")
SQLITE3 = "/usr/bin/sqlite3"
SYSTEMD_ANALYZE = "/usr/bin/systemd-analyze"
CASE_TIMEOUT_S = 300
STOP_WAIT_S = 60        # how long a stopping daemon may take before the case fails
BRAIN = os.path.join(ROOT, "tests", "data", "sndlib", "brain.txt")
ABILENE = os.path.join(ROOT, "tests", "data", "sndlib", "abilene.txt")
TMP = None              # the suite's directory, removed when every case passed


# ---------------------------------------------------------------------------
# A daemon of this suite, and the manager's end of the notification socket.
# ---------------------------------------------------------------------------

class Weftd:
    """weftd on db at 127.0.0.1:free port, with env added to a copy of
    ours (without any NOTIFY_SOCKET or WATCHDOG_* of our own)."""

    def __init__(self, db, extra=(), env=None, wait=True):
        self.db = db
        self.port = free_port()
        self.base = "http://127.0.0.1:%d" % self.port
        self.log_path = "%s.%d.log" % (db, self.port)
        self.log = open(self.log_path, "wb")
        e = {k: v for k, v in os.environ.items()
             if k not in ("NOTIFY_SOCKET", "WATCHDOG_USEC", "WATCHDOG_PID")}
        e.update(env or {})
        self.proc = subprocess.Popen(
            [WEFTD, "--db", db, "--listen", "127.0.0.1:%d" % self.port,
             "--debounce-ms", "20"] + list(extra),
            stdout=self.log, stderr=subprocess.STDOUT, env=e)
        if wait:
            self.wait_ready()

    def wait_ready(self, timeout=30.0):
        end = time.time() + timeout
        while time.time() < end:
            if self.proc.poll() is not None:
                raise Fail("weftd exited with %d: %s" % (self.proc.returncode, self.log_text()[-2000:]))
            try:
                if self.req("GET", "/v1/health", timeout=2)[0] == 200:
                    return
            except OSError:
                pass
            time.sleep(0.05)
        raise Fail("weftd did not answer in %.0f s" % timeout)

    def req(self, method, path, body=None, ctype="application/json", timeout=60):
        """(status, decoded JSON or None) of one request."""
        data = None
        hdrs = {}
        if body is not None:
            data = body if isinstance(body, bytes) else \
                body.encode() if isinstance(body, str) else json.dumps(body).encode()
            hdrs["Content-Type"] = ctype
        r = urllib.request.Request(self.base + path, data=data, method=method, headers=hdrs)
        try:
            with urllib.request.urlopen(r, timeout=timeout) as resp:
                status, raw = resp.status, resp.read()
        except urllib.error.HTTPError as exc:
            status, raw = exc.code, exc.read()
        try:
            return status, json.loads(raw.decode())
        except ValueError:
            return status, None

    def ok(self, method, path, body=None, **kw):
        status, j = self.req(method, path, body, **kw)
        check(status == 200, "%s %s: %d %r" % (method, path, status, j))
        return j

    def wait_plan(self, model_revision, timeout=120.0):
        end = time.time() + timeout
        while time.time() < end:
            status, p = self.req("GET", "/v1/plan")
            if status == 200 and p["model_revision"] >= model_revision:
                return p
            time.sleep(0.05)
        raise Fail("no plan for model revision %d in %.0f s" % (model_revision, timeout))

    def wait_log(self, pattern, timeout=60.0):
        """The first match of regex pattern in the log, waiting for it."""
        end = time.time() + timeout
        while time.time() < end:
            m = re.search(pattern, self.log_text())
            if m:
                return m
            if self.proc.poll() is not None:
                break
            time.sleep(0.02)
        raise Fail("log line /%s/ did not come" % pattern)

    def log_text(self):
        with open(self.log_path, "rb") as f:
            return f.read().decode("utf-8", "replace")

    def stop(self, timeout=STOP_WAIT_S):
        """SIGTERM; the exit code (None when it had to be killed)."""
        if self.proc.poll() is None:
            self.proc.send_signal(signal.SIGTERM)
        try:
            rc = self.proc.wait(timeout=timeout)
        except subprocess.TimeoutExpired:
            self.proc.kill()
            self.proc.wait()
            rc = None
        self.log.close()
        return rc


class NotifySocket:
    """The manager's end (sd_notify(3)): an AF_UNIX datagram socket; each
    datagram is newline-separated VARIABLE=value assignments."""

    def __init__(self, directory):
        self.path = os.path.join(directory, "notify")
        self.sock = socket.socket(socket.AF_UNIX, socket.SOCK_DGRAM)
        self.sock.bind(self.path)
        self.messages = []

    def receive(self, timeout):
        self.sock.settimeout(max(timeout, 0.01))
        try:
            data = self.sock.recv(65536)
        except socket.timeout:
            return None
        msg = {}
        for line in data.decode().split("\n"):
            if line:
                k, _, v = line.partition("=")
                msg[k] = v
        self.messages.append(msg)
        return msg

    def wait_for(self, key, value=None, timeout=30.0, count=1):
        """Receives until count messages have set key (to value when given)."""
        end = time.time() + timeout
        while True:
            n = sum(1 for m in self.messages if key in m and (value is None or m[key] == value))
            if n >= count:
                return
            if self.receive(end - time.time()) is None and time.time() >= end:
                raise Fail("no %d %s=%s notifications in %.0f s (got %r)"
                           % (count, key, value, timeout, self.messages[-5:]))

    def drain(self):
        while self.receive(0.01) is not None:
            pass

    def close(self):
        self.sock.close()


def case_dir(name):
    d = os.path.join(TMP, name)
    os.makedirs(d)
    return d


def sqlite_shell(db, sql):
    """The sqlite3 shell's output lines for sql on db."""
    out = subprocess.run([SQLITE3, db, sql], capture_output=True, text=True, timeout=120)
    check(out.returncode == 0, "sqlite3 %s: %s" % (sql, out.stderr))
    return out.stdout.splitlines()


def check_integrity(db):
    # The sqlite3 shell's own checks of the file (sqlite.org/pragma.html).
    lines = sqlite_shell(db, "PRAGMA integrity_check")
    check(lines == ["ok"], "integrity_check of %s: %r" % (db, lines[:5]))
    lines = sqlite_shell(db, "PRAGMA foreign_key_check")
    check(lines == [], "foreign_key_check of %s: %r" % (db, lines[:5]))


def weftd_run(args, timeout=120):
    return subprocess.run([WEFTD] + args, capture_output=True, text=True, timeout=timeout)


# ---------------------------------------------------------------------------
# The default configuration and the unit.
# ---------------------------------------------------------------------------

def conf_entries(path):
    """(key, value) of each commented-out "#key value" line of weft.conf
    (prose comments are "# text")."""
    out = []
    with open(path) as f:
        for line in f:
            m = re.match(r"^#([a-z_]+)(?:[ \t]+(.*?))?\s*$", line)
            if m:
                out.append((m.group(1), m.group(2) or ""))
    return out


def dump_entries(args):
    r = weftd_run(args + ["-T"])
    check(r.returncode == 0, "weftd -T: %s" % r.stderr)
    out = []
    for line in r.stdout.splitlines():
        # An option without a value prints as "#key".
        k, _, v = line.lstrip("#").partition(" ")
        out.append((k, v))
    return out


def test_weft_conf_lists_every_key_with_its_default():
    # deploy/weft.conf against the daemon's own option table (weftd -T with
    # no file prints every key with its default), in the same order.
    conf = conf_entries(os.path.join(ROOT, "deploy", "weft.conf"))
    dump = dump_entries([])
    check([k for k, _ in conf] == [k for k, _ in dump],
          "weft.conf keys %s differ from weftd -T %s"
          % (sorted(set(k for k, _ in conf) ^ set(k for k, _ in dump)),
             [k for k, _ in dump]))
    # A key without a default ("" in weftd -T) may show an example value.
    check(all(a == b or (a[0] == b[0] and b[1] == "") for a, b in zip(conf, dump)),
          "defaults differ: %r" % [(a, b) for a, b in zip(conf, dump) if a != b and b[1] != ""])
    # Uncommented, the file must be accepted (-t) and give the defaults.
    d = case_dir("conf")
    p = os.path.join(d, "all.conf")
    with open(p, "w") as f:
        for (k, v), (_, default) in zip(conf, dump):
            if default != "":
                f.write("%s %s\n" % (k, v))
    r = weftd_run(["-f", p, "-t"])
    check(r.returncode == 0, "weftd -t on weft.conf uncommented: %s" % r.stderr)
    check(dump_entries(["-f", p]) == dump, "weft.conf's values read back differ from the defaults")
    r = weftd_run(["-f", os.path.join(ROOT, "deploy", "weft.conf"), "-t"])
    check(r.returncode == 0, "weftd -t on weft.conf: %s" % r.stderr)
    # docs/config.md's table names the same keys.
    with open(os.path.join(ROOT, "docs", "config.md")) as f:
        documented = re.findall(r"^\| `([a-z_]+)` \|", f.read(), re.M)
    check(sorted(documented) == sorted(k for k, _ in dump),
          "docs/config.md keys differ: %s" % sorted(set(documented) ^ set(k for k, _ in dump)))


def unit_entries(path):
    """(section, key, value) of each assignment of a unit file."""
    out, section = [], None
    with open(path) as f:
        for line in f:
            line = line.strip()
            if not line or line[0] in "#;":
                continue
            if line.startswith("["):
                section = line.strip("[]")
                continue
            k, _, v = line.partition("=")
            out.append((section, k.strip(), v.strip()))
    return out


def unit_for_here(src, dst):
    """src with ExecStart's program replaced by the weftd under test (verify
    wants an executable that exists)."""
    with open(src) as f:
        text = f.read()
    text = re.sub(r"^ExecStart=\S+", "ExecStart=" + os.path.abspath(WEFTD), text, flags=re.M)
    with open(dst, "w") as f:
        f.write(text)


def test_unit_passes_systemd_verify_and_security():
    src = os.path.join(ROOT, "deploy", "weftd.service")
    d = case_dir("unit")
    u = os.path.join(d, "weftd.service")
    unit_for_here(src, u)
    # systemd's own unit loader: unknown keys, bad values, a missing
    # executable are errors.  (Documentation=man:weft(1) is checked in
    # make install's case, where the manual exists.)
    r = subprocess.run([SYSTEMD_ANALYZE, "verify", "--man=no", u], capture_output=True,
                       text=True, timeout=120)
    check(r.returncode == 0 and r.stderr.strip() == "", "systemd-analyze verify: %s" % r.stderr)
    # systemd's exposure score, 0 (locked down) .. 10: at most 2.0.
    r = subprocess.run([SYSTEMD_ANALYZE, "security", "--offline=yes", "--man=no",
                        "--threshold=20", u], capture_output=True, text=True, timeout=120)
    last = (r.stdout.strip().splitlines() or [""])[-1]
    check(r.returncode == 0, "exposure above 2.0: %s %s" % (last, r.stderr))
    e = unit_entries(src)
    have = {(s, k): v for s, k, v in e}
    for key, want in [("Type", "notify"), ("NoNewPrivileges", "yes"), ("ProtectSystem", "strict"),
                      ("ProtectHome", "yes"), ("PrivateTmp", "yes"), ("PrivateDevices", "yes"),
                      ("ProtectKernelTunables", "yes"), ("ProtectKernelModules", "yes"),
                      ("ProtectKernelLogs", "yes"), ("MemoryDenyWriteExecute", "yes"),
                      ("RestrictAddressFamilies", "AF_INET AF_INET6 AF_UNIX"),
                      ("StateDirectory", "weft"), ("ReadWritePaths", "/var/lib/weft")]:
        check(have.get(("Service", key)) == want, "%s=%r, want %r" % (key, have.get(("Service", key)), want))
    check("@system-service" in [v for s, k, v in e if k == "SystemCallFilter"], "SystemCallFilter")
    check(int(have.get(("Service", "WatchdogSec"), "0")) > 0, "WatchdogSec")
    check(have.get(("Service", "DynamicUser")) == "yes" or have.get(("Service", "User")), "a user of its own")
    check("--db /var/lib/weft/" in have.get(("Service", "ExecStart"), ""), "the database in the state directory")


def test_make_install_honours_destdir_and_prefix():
    d = case_dir("install")
    dest = os.path.join(d, "root")
    # -o: install what is built; never rebuild here (another flag set
    # would rebuild the tree).
    cmd = [MAKE, "-s", "-o", BUILD + "/weftd", "-o", BUILD + "/weft", "install",
           "DESTDIR=" + dest, "PREFIX=/usr", "BUILD=" + BUILD]
    r = subprocess.run(cmd, cwd=ROOT, capture_output=True, text=True, timeout=300)
    check(r.returncode == 0, "make install: %s" % r.stderr[-2000:])
    files = sorted(os.path.relpath(os.path.join(dp, f), dest)
                   for dp, _, fs in os.walk(dest) for f in fs)
    want = sorted(["usr/bin/weftd", "usr/bin/weft", "usr/share/man/man1/weft.1",
                   "usr/share/doc/weft/weft.conf", "usr/lib/systemd/system/weftd.service",
                   "etc/weft/weft.conf"])
    check(files == want, "installed %r, want %r" % (files, want))
    for f in ("usr/bin/weftd", "usr/bin/weft"):
        check(os.stat(os.path.join(dest, f)).st_mode & 0o777 == 0o755, "%s mode" % f)
    for f, src in (("usr/bin/weftd", os.path.join(BUILD, "weftd")),
                   ("usr/bin/weft", os.path.join(BUILD, "weft")),
                   ("usr/share/man/man1/weft.1", "docs/weft.1"),
                   ("etc/weft/weft.conf", "deploy/weft.conf")):
        with open(os.path.join(dest, f), "rb") as a, open(os.path.join(ROOT, src), "rb") as b:
            check(a.read() == b.read(), "%s is not %s" % (f, src))
    unit = os.path.join(dest, "usr/lib/systemd/system/weftd.service")
    ex = [v for s, k, v in unit_entries(unit) if k == "ExecStart"]
    check(ex == ["/usr/bin/weftd -f /etc/weft/weft.conf --db /var/lib/weft/weft.db"],
          "installed ExecStart %r" % ex)
    # The installed unit, its program the installed weftd under DESTDIR;
    # where man(1) exists, Documentation=man:weft(1) must find the
    # installed manual (systemd-analyze runs man for it).
    u = os.path.join(d, "weftd.service")
    with open(unit) as f, open(u, "w") as g:
        g.write(re.sub(r"^ExecStart=/usr/bin/", "ExecStart=" + dest + "/usr/bin/", f.read(),
                       flags=re.M))
    man = shutil.which("man") is not None
    r = subprocess.run([SYSTEMD_ANALYZE, "verify"] + ([] if man else ["--man=no"]) + [u],
                       capture_output=True, text=True, timeout=120,
                       env=dict(os.environ, MANPATH=os.path.join(dest, "usr/share/man")))
    check(r.returncode == 0 and r.stderr.strip() == "", "systemd-analyze verify: %s" % r.stderr)
    # An operator's configuration is never overwritten.
    conf = os.path.join(dest, "etc/weft/weft.conf")
    with open(conf, "w") as f:
        f.write("listen 127.0.0.1:9999\n")
    r = subprocess.run(cmd, cwd=ROOT, capture_output=True, text=True, timeout=300)
    check(r.returncode == 0, "make install again: %s" % r.stderr[-2000:])
    with open(conf) as f:
        check(f.read() == "listen 127.0.0.1:9999\n", "make install replaced /etc/weft/weft.conf")
    r = subprocess.run([os.path.join(dest, "usr/bin/weftd"), "-f", conf, "-T"],
                       capture_output=True, text=True, timeout=60)
    check(r.returncode == 0 and "listen 127.0.0.1:9999" in r.stdout, "installed weftd -T")


# ---------------------------------------------------------------------------
# Readiness, watchdog, stop.
# ---------------------------------------------------------------------------

def test_ready_watchdog_and_stopping_notifications():
    d = case_dir("notify")
    ns = NotifySocket(d)
    w = None
    try:
        # WATCHDOG_USEC 2 s: keep-alives every second (sd_watchdog_enabled(3)).
        w = Weftd(os.path.join(d, "weft.db"), env={"NOTIFY_SOCKET": ns.path,
                                                   "WATCHDOG_USEC": "2000000"}, wait=False)
        ns.wait_for("READY", "1")
        first = ns.messages[0]
        check(first.get("READY") == "1", "the first notification is READY=1: %r" % first)
        # READY=1 comes once HTTP listens: the first request is answered.
        status, h = w.req("GET", "/v1/health", timeout=10)
        check(status == 200 and h["status"] == "ok", "health right after READY=1: %d" % status)
        ns.wait_for("WATCHDOG", "1", count=3, timeout=60)
        check(any("STATUS" in m and "plan" in m["STATUS"] for m in ns.messages),
              "a STATUS= line with the plan: %r" % ns.messages)
        check(w.proc.poll() is None, "still running")
        rc = w.stop()
        check(rc == 0, "exit code %r" % rc)
        ns.wait_for("STOPPING", "1", timeout=10)
        ns.drain()
        stop_at = [i for i, m in enumerate(ns.messages) if m.get("STOPPING") == "1"][0]
        check(not any(m.get("WATCHDOG") for m in ns.messages[stop_at + 1:]),
              "no keep-alive after STOPPING=1")
    finally:
        if w is not None and w.proc.poll() is None:
            w.stop()
        ns.close()


def sigterm_during_brain_solve(formulation):
    d = case_dir("sigterm-" + formulation)
    db = os.path.join(d, "weft.db")
    ns = NotifySocket(d)
    w = None
    try:
        # No WATCHDOG_USEC: no keep-alives (sd_watchdog_enabled(3)).
        # -d: the engine logs each LP call (arc) or column generation
        # round (path), so the signal can come in the middle of the solve.
        w = Weftd(db, extra=["-d", "--solve-time-limit-s", "0"], env={"NOTIFY_SOCKET": ns.path})
        demands = sndlib.load(BRAIN).demands
        with open(BRAIN, "rb") as f:
            j = w.ok("POST", "/v1/import?format=sndlib&matrix=brain", f.read(), ctype="text/plain")
        check(j["demands"] == len(demands), "brain's demands: %r" % j)
        rev = w.ok("PUT", "/v1/policy", {"objective": "balance", "headroom": 0.9, "matrix": "brain",
                                          "formulation": formulation})["model_revision"]
        m = w.wait_log(r"solve started model_revision=%d .*demands=%d" % (rev, len(demands)))
        w.wait_log(r"(?s).{%d}.*(lp solved stage=|column generation stage=)" % m.end())
        rc = w.stop()
        log = w.log_text()
        check(rc == 0, "exit code %r after SIGTERM during a solve; log: %s" % (rc, log[-1500:]))
        check(re.search(r"plan published .*model_revision=%d " % rev, log) is None,
              "the solve ran to its end instead of being cancelled")
        check(re.search(r"solve cancelled model_revision=%d" % rev, log) or
              "solver left inside a simplex call" in log, "no cancel in the log: %s" % log[-1500:])
        ns.wait_for("STOPPING", "1", timeout=10)
        ns.drain()
        check(not any("WATCHDOG" in m for m in ns.messages), "keep-alives without WATCHDOG_USEC")
        # The database was closed: the last connection folds the log
        # into the file and removes it (sqlite.org/wal.html).
        check(not os.path.exists(db + "-wal"), "weft.db-wal left behind")
        check_integrity(db)
        # The next start has every write.
        w = Weftd(db)
        status, h = w.req("GET", "/v1/health")
        check(status == 200 and h["model_revision"] == rev, "model revision after restart: %r" % h)
        rc = w.stop()
        check(rc == 0, "exit code %r of the second daemon" % rc)
        check_integrity(db)
    finally:
        if w is not None and w.proc.poll() is None:
            w.stop()
        ns.close()


def test_sigterm_cancels_a_path_solve_of_brain():
    sigterm_during_brain_solve("path")


def test_sigterm_cancels_an_arc_solve_of_brain():
    sigterm_during_brain_solve("arc")


# ---------------------------------------------------------------------------
# Online backup and restore.
# ---------------------------------------------------------------------------

def read_copy(db):
    """(model revision, user_version) of a database file, via Python's
    sqlite3 module (read-only)."""
    c = sqlite3.connect("file:%s?mode=ro" % db, uri=True)
    try:
        rev = c.execute("SELECT value FROM meta WHERE key = 'model_revision'").fetchone()[0]
        ver = c.execute("PRAGMA user_version").fetchone()[0]
    finally:
        c.close()
    return int(rev), ver


def test_backup_during_writes_restores_that_state():
    d = case_dir("backup")
    db = os.path.join(d, "weft.db")
    w = Weftd(db)
    writes = []                   # (model revision, link, capacity), as acknowledged
    failures = []
    stop = threading.Event()
    try:
        with open(ABILENE, "rb") as f:
            w.ok("POST", "/v1/import?format=sndlib&matrix=abilene", f.read(), ctype="text/plain")
        rev0 = w.ok("PUT", "/v1/policy", {"objective": "cost", "headroom": 1.0,
                                           "matrix": "abilene"})["model_revision"]
        w.wait_plan(rev0)
        topo0 = w.ok("GET", "/v1/topology")
        matrix0 = w.ok("GET", "/v1/matrices/abilene")
        policy0 = w.ok("GET", "/v1/policy")
        ids = [l["id"] for l in topo0["links"]][:6]

        def writer():
            k = 0
            while not stop.is_set() and k < 5000:
                link, cap = ids[k % len(ids)], 1e9 + 1000 * k
                status, j = w.req("PATCH", "/v1/links/" + link, {"capacity_bps": cap})
                if status != 200:
                    failures.append((status, j))
                    return
                writes.append((j["model_revision"], link, cap))
                k += 1

        t = threading.Thread(target=writer)
        t.start()
        while len(writes) < 5 and t.is_alive():
            time.sleep(0.01)
        # Back up while the writer goes on, until one copy was taken with
        # a write acknowledged during it (bounded number of tries).
        chosen = None
        for i in range(20):
            out = os.path.join(d, "backup-%d.db" % i)
            before = writes[-1][0]
            r = weftd_run(["backup", "--db", db, "--to", out])
            after = writes[-1][0]
            check(r.returncode == 0, "weftd backup: %s" % r.stderr)
            check("integrity ok" in r.stdout, "backup output: %r" % r.stdout)
            if after > before:
                chosen = (out, before, after, r.stdout)
                break
        stop.set()
        t.join(60)
        check(not failures, "a write failed during the backups: %r" % failures[:1])
        check(chosen is not None, "no backup overlapped a write in 20 tries")
        out, before, after, text = chosen
        check_integrity(out)
        rev, ver = read_copy(out)
        # The copy is one committed state of the time of the backup: at
        # least every write acknowledged before it began, one of the
        # states the writes made, and what `weftd backup` reported.
        check(rev >= before, "copy's revision %d older than the last write before it (%d)" % (rev, before))
        check(rev in [x[0] for x in writes], "copy's revision %d is no acknowledged state" % rev)
        check("model revision %d," % rev in text, "reported revision: %r vs %d" % (text, rev))
        live_rev, live_ver = read_copy(db)
        check(ver == live_ver, "schema version %d of the copy, %d live" % (ver, live_ver))
        expect = {l["id"]: l["capacity_bps"] for l in topo0["links"]}
        for r_, link, cap in writes:
            if r_ <= rev:
                expect[link] = cap
        rc = w.stop()
        check(rc == 0, "exit code %r" % rc)

        # Restore as docs/operations.md says: stop, move the database and
        # its -wal and -shm aside, put the copy in its place, start.
        aside = os.path.join(d, "aside")
        os.makedirs(aside)
        for sfx in ("", "-wal", "-shm"):
            if os.path.exists(db + sfx):
                shutil.move(db + sfx, aside)
        shutil.copyfile(out, db)
        w = Weftd(db)
        h = w.ok("GET", "/v1/health")
        check(h["model_revision"] == rev, "restored model revision %d, copy's %d" % (h["model_revision"], rev))
        topo = w.ok("GET", "/v1/topology")
        check(topo["nodes"] == topo0["nodes"], "restored nodes differ")
        got = {l["id"]: l["capacity_bps"] for l in topo["links"]}
        check(got == expect, "restored capacities differ: %r" %
              [(k, got.get(k), v) for k, v in expect.items() if got.get(k) != v][:3])
        check(w.ok("GET", "/v1/matrices/abilene") == matrix0, "restored matrix differs")
        check(w.ok("GET", "/v1/policy") == policy0, "restored policy differs")
        p = w.wait_plan(rev)
        check(p["model_revision"] == rev, "restored plan's revision")
        rc = w.stop()
        check(rc == 0, "exit code %r after the restore" % rc)
        check_integrity(db)
        # With no daemon running, a backup is still a backup.
        r = weftd_run(["backup", "--db", db, "--to", os.path.join(d, "offline.db")])
        check(r.returncode == 0, "offline backup: %s" % r.stderr)
        check(read_copy(os.path.join(d, "offline.db"))[0] == rev, "offline copy's revision")
        check(not os.path.exists(db + "-wal") and not os.path.exists(db + "-shm"),
              "the offline backup left -wal or -shm files beside the database")
        check_integrity(os.path.join(d, "offline.db"))
    finally:
        stop.set()
        if w.proc.poll() is None:
            w.stop()


def test_backup_refuses_what_is_not_a_weft_database():
    d = case_dir("backup-bad")
    out = os.path.join(d, "out.db")
    r = weftd_run(["backup", "--db", os.path.join(d, "missing.db"), "--to", out])
    check(r.returncode == 1 and "missing.db" in r.stderr, "missing source: %d %s" % (r.returncode, r.stderr))
    check(not os.path.exists(os.path.join(d, "missing.db")), "backup created its source")
    text = os.path.join(d, "text.db")
    with open(text, "w") as f:
        f.write("not a database\n" * 100)
    r = weftd_run(["backup", "--db", text, "--to", out])
    check(r.returncode == 1, "a text file backed up: %s" % r.stdout)
    other = os.path.join(d, "other.db")
    c = sqlite3.connect(other)
    c.execute("CREATE TABLE t (x)")
    c.commit()
    c.close()
    r = weftd_run(["backup", "--db", other, "--to", out])
    check(r.returncode == 1 and "not a weft database" in r.stderr, "another SQLite file: %s" % r.stderr)
    check(sorted(os.listdir(d)) == ["other.db", "text.db"], "files left: %r" % os.listdir(d))
    r = weftd_run(["backup", "--db", other])
    check(r.returncode == 2, "no --to: exit %d" % r.returncode)


# ---------------------------------------------------------------------------
# Migrations from every earlier schema version.
# ---------------------------------------------------------------------------

MIGRATIONS = sorted(glob.glob(os.path.join(ROOT, "storage", "schema", "[0-9][0-9][0-9]_*.sql")))
MODEL_REVISION = 7
LAST_PLAN = 3


def fill_1(c):
    # Migration 1's tables (storage/schema/001_init.sql).
    c.execute("UPDATE meta SET value = ? WHERE key = 'model_revision'", (MODEL_REVISION,))
    c.executemany("INSERT INTO nodes (id, ordinal, name, lat, lon) VALUES (?, ?, ?, ?, ?)",
                  [("A", 0, "Alpha", 10.5, 20.25), ("B", 1, None, None, None), ("C", 2, "Gamma", -3.0, 4.0)])
    c.executemany("INSERT INTO links (id, ordinal, a, b, capacity_bps, te_metric, up) "
                  "VALUES (?, ?, ?, ?, ?, ?, ?)",
                  [("L1", 0, "A", "B", 1e9, 1, 1), ("L2", 1, "B", "C", 2e9, 2, 1),
                   ("L3", 2, "A", "C", 5e8, 5, 0)])
    c.execute("INSERT INTO matrices (name, updated_revision) VALUES ('m', 5)")
    c.executemany("INSERT INTO demands (matrix, ordinal, src, dst, rate_bps, priority) "
                  "VALUES ('m', ?, ?, ?, ?, ?)",
                  [(0, "A", "C", 3e8, 0), (1, "B", "C", 1e8, 1), (2, "C", "A", 2e8, 7)])
    c.execute("INSERT INTO policy (id, objective, headroom, matrix, balance_tol) "
              "VALUES (1, 'balance', 0.8, 'm', 0.01)")
    c.execute("INSERT INTO plan_history (plan_revision, model_revision, created_at, summary_json) "
              "VALUES (?, ?, 1764660000, '{}')", (LAST_PLAN, MODEL_REVISION))


def fill_2(c):
    # 002_policy_solver.sql: the policy's new columns.
    c.execute("UPDATE policy SET objective = 'cost', formulation = 'path', gap_target = 1e-4, "
              "keep_paths = 1, keep_paths_tol = 0.01")


def fill_3(c):
    # 003_srlg_sweeps.sql: SRLGs and sweeps (one done, one left running).
    c.executemany("INSERT INTO link_srlg (link, srlg) VALUES (?, ?)",
                  [("L1", 10), ("L1", 4294967295), ("L2", 10)])
    report = json.dumps({"headroom": 0.8, "worst_max_utilization": {"value": 0.5, "index": 1},
                         "unserved": [], "links": []})
    c.execute("INSERT INTO sweeps (id, kind, state, model_revision, plan_revision, total, done, "
              "elapsed_s, created_at, finished_at, params_json, report_json) VALUES "
              "(5, 'links', 'done', 6, 2, 2, 2, 1.5, '2026-12-01T10:00:00Z', '2026-12-01T10:00:02Z', "
              "'{\"kind\":\"links\"}', ?)", (report,))
    c.executemany("INSERT INTO sweep_results (sweep, idx, fail_json, status, max_util, carried_bps, "
                  "unserved_bps, total_cost, solve_ms, moved_bps) VALUES (5, ?, ?, 'optimal', ?, "
                  "5e8, 0, 1e9, 3.5, 0)",
                  [(0, '{"links":["L1"]}', 0.25), (1, '{"links":["L2"]}', 0.5)])
    c.execute("INSERT INTO sweeps (id, kind, state, model_revision, plan_revision, total, done, "
              "elapsed_s, created_at, params_json) VALUES (6, 'nodes', 'running', 7, 3, 3, 0, 0.5, "
              "'2026-12-01T11:00:00Z', '{\"kind\":\"nodes\"}')")


FILLS = {1: fill_1, 2: fill_2, 3: fill_3}


def database_at(path, k):
    """A database at schema version k: migrations 1..k applied from the
    .sql files themselves, each followed by data for its tables."""
    c = sqlite3.connect(path)
    try:
        c.execute("PRAGMA journal_mode = WAL")
        for i in range(1, k + 1):
            with open(MIGRATIONS[i - 1]) as f:
                c.executescript("BEGIN;" + f.read() + ";PRAGMA user_version = %d; COMMIT;" % i)
            if i in FILLS:
                FILLS[i](c)
                c.commit()
    finally:
        c.close()


def schema_of(db):
    c = sqlite3.connect("file:%s?mode=ro" % db, uri=True)
    try:
        rows = c.execute("SELECT type, name, tbl_name, sql FROM sqlite_master "
                         "ORDER BY type, name").fetchall()
        ver = c.execute("PRAGMA user_version").fetchone()[0]
    finally:
        c.close()
    return ver, rows


def test_migrations_from_every_earlier_schema_version():
    d = case_dir("migrate")
    n = len(MIGRATIONS)
    check(n >= 3 and [os.path.basename(p)[:3] for p in MIGRATIONS] ==
          ["%03d" % i for i in range(1, n + 1)], "numbered migrations: %r" % MIGRATIONS)
    fresh = os.path.join(d, "fresh.db")
    w = Weftd(fresh)
    check(w.stop() == 0, "fresh daemon's exit")
    want = schema_of(fresh)
    check(want[0] == n, "a fresh database's user_version %d, %d migrations" % (want[0], n))
    for k in range(1, n):
        db = os.path.join(d, "v%d.db" % k)
        database_at(db, k)
        check(schema_of(db)[0] == k, "built at version %d" % k)
        w = Weftd(db)
        try:
            what = "from version %d: " % k
            h = w.ok("GET", "/v1/health")
            check(h["model_revision"] == MODEL_REVISION, what + "model revision %r" % h)
            t = w.ok("GET", "/v1/topology")
            check(t["nodes"] == [{"id": "A", "name": "Alpha", "lat": 10.5, "lon": 20.25},
                                 {"id": "B"}, {"id": "C", "name": "Gamma", "lat": -3.0, "lon": 4.0}],
                  what + "nodes %r" % t["nodes"])
            srlgs = {"L1": [10, 4294967295], "L2": [10], "L3": []} if k >= 3 else \
                {"L1": [], "L2": [], "L3": []}
            check(t["links"] == [
                {"id": "L1", "a": "A", "b": "B", "capacity_bps": 1e9, "te_metric": 1, "state": "up",
                 "srlgs": srlgs["L1"]},
                {"id": "L2", "a": "B", "b": "C", "capacity_bps": 2e9, "te_metric": 2, "state": "up",
                 "srlgs": srlgs["L2"]},
                {"id": "L3", "a": "A", "b": "C", "capacity_bps": 5e8, "te_metric": 5, "state": "down",
                 "srlgs": srlgs["L3"]}], what + "links %r" % t["links"])
            m = w.ok("GET", "/v1/matrices/m")
            check([(x["src"], x["dst"], x["rate_bps"], x["priority"]) for x in m["demands"]] ==
                  [("A", "C", 3e8, 0), ("B", "C", 1e8, 1), ("C", "A", 2e8, 7)], what + "matrix %r" % m)
            p = w.ok("GET", "/v1/policy")
            if k == 1:
                # 002 keeps an existing policy on the node-arc formulation.
                want_p = {"objective": "balance", "formulation": "arc", "gap_target": 1e-7,
                          "keep_paths": False, "keep_paths_tolerance": 1e-3}
            else:
                want_p = {"objective": "cost", "formulation": "path", "gap_target": 1e-4,
                          "keep_paths": True, "keep_paths_tolerance": 0.01}
            want_p.update({"headroom": 0.8, "matrix": "m", "balance_tolerance": 0.01})
            check({x: p.get(x) for x in want_p} == want_p, what + "policy %r" % p)
            if k >= 3:
                s5 = w.ok("GET", "/v1/sweeps/5")
                check(s5["state"] == "done" and [r["index"] for r in s5["results"]] == [0, 1] and
                      s5["results"][1]["max_utilization"] == 0.5, what + "sweep 5 %r" % s5)
                # A sweep left running by a process that is gone.
                s6 = w.ok("GET", "/v1/sweeps/6")
                check(s6["state"] == "interrupted", what + "sweep 6 %r" % s6)
            # Plan revisions go on from the stored history.
            plan = w.wait_plan(MODEL_REVISION)
            check(plan["revision"] == LAST_PLAN + 1, what + "plan revision %d" % plan["revision"])
        finally:
            rc = w.stop()
        check(rc == 0, "exit code %r" % rc)
        got = schema_of(db)
        check(got[0] == want[0], "from version %d: user_version %d" % (k, got[0]))
        diff = [r for r in got[1] if r not in want[1]] + [r for r in want[1] if r not in got[1]]
        check(got[1] == want[1], "from version %d: schema differs from a fresh one: %r" % (k, diff[:3]))
        check_integrity(db)


# ---------------------------------------------------------------------------

def main():
    global TMP
    order = cases.select(globals(), sys.argv[1:])
    TMP = tempfile.mkdtemp(prefix="weft-service-")
    failed = 0
    try:
        failed = cases.run(globals(), order, CASE_TIMEOUT_S)
    finally:
        if failed:
            print("# files kept in %s" % TMP)
            for log in sorted(glob.glob(os.path.join(TMP, "*", "*.log")))[-3:]:
                with open(log, "rb") as f:
                    for l in f.read().decode("utf-8", "replace").splitlines()[-8:]:
                        print("# %s: %s" % (os.path.basename(log), l))
        else:
            shutil.rmtree(TMP, ignore_errors=True)
    return cases.finish(order, failed)


if __name__ == "__main__":
    sys.exit(main())
