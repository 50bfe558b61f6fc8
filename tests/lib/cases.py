# SPDX-License-Identifier: GPL-3.0-or-later
"""The case runner of the integration suites (tests/integration/*.py).

A suite is a module whose test_* functions are its cases.  select() lists
them in the order they stand in the file; run() runs each one, bounded in
time by SIGALRM, and prints TAP (https://testanything.org, version 12):
"ok N - name", "ok N - name # SKIP reason" for a case that raised Skip, or
"not ok N - name" followed by the end of the traceback as "# " lines.
exits_cleanly() is the usual last case (run_then_stop() does both and stops
the daemon), and finish() prints the plan line
and gives the exit code.  One thread: the alarm interrupts the main one.
"""
import signal
import sys
import traceback

# The sanitizers' reports begin with these (ASan, UBSan).
SANITIZER_MARKS = ("Sanitizer", "runtime error")


class Fail(Exception):
    """A check of a case failed."""


class Skip(Exception):
    """The case cannot run here; it passes with the reason as a SKIP."""


def check(cond, what):
    if not cond:
        raise Fail(what)


def select(ns, words):
    """The names of the test_* functions of namespace ns (a module's
    globals()) in file order; with words, only those containing one."""
    names = [n for n in ns if n.startswith("test_")]
    order = sorted(names, key=lambda n: ns[n].__code__.co_firstlineno)
    if words:
        order = [n for n in order if any(a in n for a in words)]
    return order


def run(ns, order, timeout_s, before=None):
    """Runs the cases named in order (functions of ns), numbered from 1,
    each within timeout_s seconds; before(name), when given, runs first
    as part of the case.  Returns the number of cases that failed."""
    def alarm(signum, frame):
        raise Fail("case took longer than %d s" % timeout_s)

    signal.signal(signal.SIGALRM, alarm)
    failed = 0
    for i, name in enumerate(order, 1):
        signal.alarm(timeout_s)
        try:
            if before is not None:
                before(name)
            ns[name]()
            print("ok %d - %s" % (i, name))
        except Skip as exc:
            print("ok %d - %s # SKIP %s" % (i, name, exc))
        except Exception as exc:
            failed += 1
            print("not ok %d - %s" % (i, name))
            for line in traceback.format_exception(type(exc), exc, exc.__traceback__)[-3:]:
                for l in line.rstrip().splitlines():
                    print("# " + l)
        finally:
            signal.alarm(0)
        sys.stdout.flush()
    return failed


def exits_cleanly(d, n, scan_log=False):
    """Case n, after the others: the daemon d started (tests/lib/weftd.py)
    ends on SIGTERM with exit code 0 and, with scan_log, its log holds no
    sanitizer report.  Prints the case's TAP line; True when it passed."""
    d.proc.terminate()
    try:
        rc = d.proc.wait(timeout=30)
    except Exception:
        rc = None
    bad = []
    if scan_log:
        bad = [l for l in d.log_text().splitlines() if any(m in l for m in SANITIZER_MARKS)]
    if rc == 0 and not bad:
        print("ok %d - daemon_exits_cleanly" % n)
        return True
    print("not ok %d - daemon_exits_cleanly" % n)
    print("# exit code %r; %s" % (rc, bad[:3]))
    return False


def run_then_stop(d, ns, order, timeout_s, before=None):
    """run() against daemon d, then, when d is ours, exits_cleanly() (with
    the sanitizer scan) as the last case, appended to order; the log tail
    when anything failed; d stopped whatever happens.  Returns the count
    of failed cases, for finish()."""
    failed = 0
    try:
        failed = run(ns, order, timeout_s, before=before)
        if d.proc is not None:
            if not exits_cleanly(d, len(order) + 1, scan_log=True):
                failed += 1
            order.append("daemon_exits_cleanly")
    finally:
        if failed:
            log_tail(d, 15)
        d.stop()
    return failed


def log_tail(d, lines):
    """Prints the last lines of daemon d's log as TAP comments (nothing
    when the daemon is not ours)."""
    if d is None or d.tmp is None:
        return
    print("# daemon log (last lines):")
    for l in d.log_text().splitlines()[-lines:]:
        print("# " + l)


def finish(order, failed):
    """Prints the TAP plan for the cases of order and a count of the
    failed ones; returns the exit code, 1 if any failed."""
    print("1..%d" % len(order))
    if failed:
        print("# %d of %d failed" % (failed, len(order)))
    return 1 if failed else 0
