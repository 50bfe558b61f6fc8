# SPDX-License-Identifier: GPL-3.0-or-later
"""weft's benchmark: weft's solves timed against general LP solvers in one run.

DESIGN.  For each SNDlib instance in tests/data/sndlib and for the synthetic
Kdl case (tests/bench/synth.py), on one machine and in one run:

  1. A fresh weftd (tests/lib/weftd.py, 127.0.0.1) per instance and per
     formulation.  The instance is imported (SNDlib: POST /v1/import;
     synthetic: PUT /v1/topology and PUT /v1/matrices/NAME).  If the
     balance plan is "partial", every capacity is doubled until it is
     "optimal" (at most 10 times), so that all timed full solves carry the
     whole matrix; the factor is reported.  This daemon then runs 3 and 4.
  2. Full solves: cost, balance, cost, balance, ... (--runs of each), each
     the first solve of another fresh daemon loaded with the (scaled)
     instance, so that nothing is kept from an earlier solve.  The time is
     the plan's solve_ms (wall time of the engine's solve, all stages, path
     decomposition included); the median is reported.  Peak memory: the
     largest VmHWM (/proc/PID/status; it never decreases, hence a fresh
     daemon each time) of the daemons of one instance and formulation.
  3. Incremental re-solves under balance: 20 links (or all, when fewer),
     drawn by a fixed seed from the links the base plan loads, each set
     down (PATCH /v1/links/ID), planned, set up again, planned; then every
     rate x 1.1 (PUT the matrix), planned, and the matrix restored.
  4. The node-arc LP of the balance plan's "balance" stage (min U) and of
     the cost plan's "cost" stage, exported as MPS (GET /v1/model) by the
     daemon of the first formulation ("arc" when accepted), each
     solved by COIN-OR CLP, glpsol and scipy's HiGHS, one after another
     (never at the same time), with the functions of
     tests/reference/solvers.py.  Timed: CLP and glpsol at their default
     settings, as the wall time of the solver process (the MPS is written
     before the clock starts); HiGHS as solvers.highs() reports it, which
     includes reading the MPS in Python.  Peak memory: ru_maxrss of each
     solver process from os.wait4.  The median of --runs runs, one run on
     the big instances (brain, synthetic).
  5. Checks (checks_of()), relative 1e-6, against the optima of CLP with
     tolerances 1e-10, glpsol and HiGHS on the exported LPs: the balance
     stage's lp_objective; the cost stage's lp_objective and the cost
     plan's total_cost (optimum x the LP's scales).  Where the three solvers differ among themselves by
     more than 1e-6, weft must lie within their spread widened by 1e-6 (as
     in tests/reference/run.py).  A mismatch is FAIL in the table and exit
     code 1.  Incremental re-solves are timed only.
  6. Sweeps (SWEEP_INSTANCES, germany50 and brain, when selected): a fresh
     daemon with the path formulation and the balance plan in force (the
     capacities scaled as in 1), a full single-link sweep (POST /v1/sweeps
     {"kind":"links"}, the daemon's default 2 worker threads) polled until
     done; its elapsed_s against one full balance solve of a fresh daemon
     (the ratio the issue's target is about), and the median scenario.
     Every scenario must end without a solver failure.

No timing is asserted: this is a measurement.  The machine is shared, so
the numbers move from run to run; ratios within one run are the figure to
read (tests/bench/README.md).

Usage: run.py [--quick] [--runs N] [--sites N] [--failures N]
              [--solver-timeout S] [--sweeps-only] [--no-sweeps]
              [instance ...]
  --quick skips brain and the synthetic case; instance names are SNDlib
  file stems (abilene, brain, ...) and "kdl-synth".  --sweeps-only runs
  only part 6, --no-sweeps skips it.
Environment: WEFTD (daemon binary).  Output: the table on stdout and
build/bench/results.json.
"""
import json
import os
import platform
import random
import statistics
import subprocess
import sys
import tempfile
import threading
import time
import traceback

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.dirname(os.path.dirname(HERE))
sys.path.insert(0, os.path.join(ROOT, "tests", "lib"))
sys.path.insert(0, os.path.join(ROOT, "tests", "reference"))
sys.path.insert(0, HERE)

import solvers  # noqa: E402
import synth  # noqa: E402
from weftd import Daemon, SolveFailed  # noqa: E402

DATA = os.path.join(ROOT, "tests", "data", "sndlib")
OUT = os.path.join(ROOT, "build", "bench", "results.json")
PYTHON = "/usr/bin/python3"
MATRIX = "bench"
SYNTH = "kdl-synth"
BIG = ("brain", SYNTH)
SWEEP_INSTANCES = ("germany50", "brain")
SWEEP_TIMEOUT = 7200.0
# The incremental daemon's solve time limit: a re-solve past it is
# recorded as "failed" and the run goes on.
SOLVE_LIMIT_S = 300
SEED = 7001
REL = 1e-6
HTTP_TIMEOUT = 1800.0
PLAN_TIMEOUT = 3600.0


class BenchError(Exception):
    pass


# ---- solver processes: wall time and peak memory ----

class _Wait4:
    """Stands in for the subprocess module inside tests/reference/solvers.py
    (solvers.subprocess), so that its solver functions run unchanged while
    this file learns each solver process's wall time and peak resident set
    (os.wait4's rusage).  Only run() and the names solvers.py uses."""
    PIPE = subprocess.PIPE
    STDOUT = subprocess.STDOUT
    TimeoutExpired = subprocess.TimeoutExpired

    def __init__(self):
        self.last = None

    def run(self, args, stdout=None, stderr=None, timeout=None):
        t0 = time.perf_counter()
        p = subprocess.Popen(args, stdout=stdout, stderr=stderr)
        killed = []

        def kill():
            killed.append(True)
            p.kill()

        timer = threading.Timer(timeout, kill) if timeout else None
        if timer:
            timer.start()
        out = p.stdout.read() if p.stdout is not None else b""
        _, status, ru = os.wait4(p.pid, 0)
        wall = time.perf_counter() - t0
        if timer:
            timer.cancel()
        p.returncode = os.waitstatus_to_exitcode(status)
        if p.stdout is not None:
            p.stdout.close()
        self.last = {"wall_s": wall, "maxrss_mib": ru.ru_maxrss / 1024.0,
                     "cpu_s": ru.ru_utime + ru.ru_stime}
        if killed:
            raise subprocess.TimeoutExpired(args, timeout)
        return subprocess.CompletedProcess(args, p.returncode, out, None)


WAIT4 = _Wait4()
solvers.subprocess = WAIT4

_HIGHS_CHILD = """
import json, sys
sys.path.insert(0, sys.argv[1])
import solvers
obj, ms = solvers.highs(sys.argv[2])
print(json.dumps({"obj": obj, "ms": ms}))
"""


def run_clp(path, timeout, tight=False):
    obj, _ = solvers.clp(path, tight=tight, timeout=timeout)
    return obj, WAIT4.last["wall_s"], WAIT4.last["maxrss_mib"]


def run_glpsol(path, timeout):
    obj, _ = solvers.glpsol(path, timeout=timeout)
    return obj, WAIT4.last["wall_s"], WAIT4.last["maxrss_mib"]


def run_highs(path, timeout):
    """solvers.highs() in a child interpreter, for its peak memory; the
    time is what highs() measured (MPS read + linprog), not the start-up
    of the interpreter."""
    p = WAIT4.run([PYTHON, "-c", _HIGHS_CHILD, os.path.join(ROOT, "tests", "reference"), path],
                  stdout=subprocess.PIPE, stderr=subprocess.STDOUT, timeout=timeout)
    out = p.stdout.decode("utf-8", "replace")
    if p.returncode != 0:
        raise solvers.SolverFailed("HiGHS child rc %d:\n%s" % (p.returncode, out[-1500:]))
    j = json.loads(out.strip().splitlines()[-1])
    return j["obj"], j["ms"] / 1000.0, WAIT4.last["maxrss_mib"]


def reference(path, runs, timeout):
    """The three solvers on one MPS file, one at a time.  Returns
    {solver: {"obj", "s" (median), "times", "mib", "error"}} plus the
    tight CLP run under "CLP tol 1e-10"."""
    res = {}
    for name, fn in (("CLP", lambda: run_clp(path, timeout)),
                     ("glpsol", lambda: run_glpsol(path, timeout)),
                     ("HiGHS", lambda: run_highs(path, timeout)),
                     ("CLP tol 1e-10", lambda: run_clp(path, timeout, tight=True))):
        n = 1 if name == "CLP tol 1e-10" else runs
        r = {"times": [], "mib": 0.0, "obj": None, "error": None}
        for _ in range(n):
            try:
                obj, s, mib = fn()
            except subprocess.TimeoutExpired:
                r["error"] = "timeout %.0f s" % timeout
                break
            except solvers.SolverFailed as e:
                r["error"] = str(e)[:300]
                break
            r["obj"] = obj
            r["times"].append(s)
            r["mib"] = max(r["mib"], mib)
        r["s"] = statistics.median(r["times"]) if r["times"] else None
        res[name] = r
        print("    %-14s %s" % (name, r["error"] or "obj %.10g  %s s  %.0f MiB" % (
            r["obj"], "/".join("%.3f" % t for t in r["times"]), r["mib"])), flush=True)
    return res


# ---- talking to weft ----

def _ok(r, what):
    if r.status // 100 != 2:
        raise BenchError("%s: HTTP %d %s" % (what, r.status, r.body[:300]))
    return r.json() if r.body else {}


def write(d, method, path, body, ctype="application/json"):
    j = _ok(d.request(method, path, body, ctype=ctype, timeout=HTTP_TIMEOUT),
            "%s %s" % (method, path))
    return j


def get(d, path):
    return _ok(d.get(path, timeout=HTTP_TIMEOUT), "GET " + path)


def policy(objective, form):
    p = {"objective": objective, "headroom": 1.0, "matrix": MATRIX}
    if form is not None:
        p["formulation"] = form
    return p


def solve(d, method, path, body):
    """One write, then the plan of its model revision.  Returns a record
    of the plan (times in s)."""
    t0 = time.perf_counter()
    rev = write(d, method, path, body)["model_revision"]
    try:
        p = d.wait_plan(rev, timeout=PLAN_TIMEOUT, verify=False)
    except SolveFailed as e:
        # Past the daemon's solve time limit: recorded, not fatal.
        return {"solve_s": time.perf_counter() - t0, "wall_s": time.perf_counter() - t0,
                "status": "failed", "warm": None, "plan": None, "total_cost": None,
                "max_utilization": None, "error": str(e), "stages": []}
    wall = time.perf_counter() - t0
    if p["model_revision"] != rev:
        raise BenchError("plan of model revision %d seen for %d (a write raced)"
                         % (p["model_revision"], rev))
    if p["status"] == "failed":
        raise BenchError("solve failed after %s %s: %s" % (method, path, p.get("warnings")))
    return {"solve_s": p["solve_ms"] / 1000.0, "wall_s": wall, "status": p["status"],
            "warm": p.get("warm"), "plan": p, "total_cost": p.get("total_cost"),
            "max_utilization": p.get("max_utilization"),
            "stages": [{k: s.get(k) for k in ("name", "lp_objective", "iterations", "ms")}
                       for s in p.get("stages", [])]}


def vm_hwm_mib(d):
    if d.proc is None:
        return None
    with open("/proc/%d/status" % d.proc.pid) as f:
        for line in f:
            if line.startswith("VmHWM:"):
                return int(line.split()[1]) / 1024.0
    return None


def probe_formulations():
    """Which values of the policy member "formulation" the daemon takes."""
    acc = []
    with Daemon() as d:
        for form in ("arc", "path"):
            r = d.put("/v1/policy", policy("balance", form))
            if r.status == 200:
                acc.append(form)
            elif r.status != 400:
                raise BenchError("PUT /v1/policy formulation %s: HTTP %d %s"
                                 % (form, r.status, r.body[:200]))
    return acc


# ---- one instance, one formulation ----

def load(d, inst):
    if inst["kind"] == "sndlib":
        with open(inst["path"], "rb") as f:
            body = f.read()
        j = write(d, "POST", "/v1/import?format=sndlib&matrix=" + MATRIX, body, ctype="text/plain")
        return j["nodes"], j["links"], j["demands"]
    s = inst["synth"]
    write(d, "PUT", "/v1/topology", s["topology"])
    write(d, "PUT", "/v1/matrices/" + MATRIX, {"demands": s["demands"]})
    return len(s["topology"]["nodes"]), len(s["topology"]["links"]), len(s["demands"])


def make_fit(d, form):
    """Balance plan; doubles capacities until it is optimal.  Returns the
    capacity factor and that first (untimed) plan."""
    rec = solve(d, "PUT", "/v1/policy", policy("balance", form))
    factor = 1
    while rec["status"] == "partial":
        if factor >= 1024:
            raise BenchError("still partial with capacities x %d" % factor)
        factor *= 2
        topo = get(d, "/v1/topology")
        for l in topo["links"]:
            l["capacity_bps"] *= 2
        rec = solve(d, "PUT", "/v1/topology", topo)
    return factor, rec


def stage_obj(rec, name):
    for s in rec["stages"]:
        if s["name"] == name:
            return s["lp_objective"]
    return None


def export(d, rec, stage_name, tmp, tag):
    names = [s["name"] for s in rec["stages"]]
    if stage_name not in names:
        raise BenchError("plan has no stage %r (stages %s)" % (stage_name, names))
    r = d.get("/v1/model?format=mps&stage=%d" % names.index(stage_name), timeout=HTTP_TIMEOUT)
    if r.status != 200:
        raise BenchError("GET /v1/model stage %s: HTTP %d %s" % (stage_name, r.status, r.body[:200]))
    path = os.path.join(tmp, "%s-%s.mps" % (tag, stage_name))
    with open(path, "wb") as f:
        f.write(r.body)
    return path


def pick_links(name, loads, topo, n):
    """n links by a fixed seed: first among those the base plan loads."""
    rng = random.Random("%s-%d" % (name, SEED))
    loaded = [l["id"] for l in loads["links"]
              if l["a_to_b"]["load_bps"] > 0 or l["b_to_a"]["load_bps"] > 0]
    rest = [l["id"] for l in topo["links"] if l["id"] not in set(loaded)]
    pick = rng.sample(loaded, min(n, len(loaded)))
    if len(pick) < n:
        pick += rng.sample(rest, min(n - len(pick), len(rest)))
    return pick


def cold_solve(inst, topo, form, objective):
    """A full solve: a fresh daemon (no state kept from an earlier solve),
    the instance loaded with topology topo, then the policy.  Returns the
    plan record with the daemon's VmHWM."""
    d = Daemon()
    try:
        load(d, inst)
        write(d, "PUT", "/v1/topology", topo)
        rec = solve(d, "PUT", "/v1/policy", policy(objective, form))
        rec["peak_mib"] = vm_hwm_mib(d)
        return rec
    finally:
        d.stop()


def run_weft(inst, form, args, export_dir):
    """All weft measurements of one instance under one formulation (None:
    the daemon's default).  With export_dir, also exports the two LPs."""
    out = {"formulation": form or "default (node-arc)"}
    strip = (lambda rs: [{kk: v for kk, v in r.items() if kk not in ("plan", "stages")}
                         for r in rs])
    d = Daemon(extra_args=["--solve-time-limit-s", str(SOLVE_LIMIT_S)])
    try:
        n, l, k = load(d, inst)
        out["size"] = (n, l, k)
        factor, _ = make_fit(d, form)
        out["capacity_factor"] = factor
        topo = get(d, "/v1/topology")
        # bit/s per LP unit x metric unit of the node-arc LP (DESIGN of
        # daemon/engine/form_arc.c): turns its cost optimum into total_cost.
        up = [x for x in topo["links"] if x.get("state", "up") == "up"]
        out["cost_scale"] = max(x["capacity_bps"] for x in up) * max(x["te_metric"] for x in up)
        # Incremental, under balance (the policy in force).
        loads = get(d, "/v1/plan/loads")
        links = pick_links(inst["name"], loads, topo, args.failures)
        down, up = [], []
        for lid in links:
            r = solve(d, "PATCH", "/v1/links/" + lid, {"state": "down"})
            r["link"] = lid
            down.append(r)
            up.append(solve(d, "PATCH", "/v1/links/" + lid, {"state": "up"}))
        out["link_down"] = strip(down)
        out["link_up"] = strip(up)
        mat = get(d, "/v1/matrices/" + MATRIX)["demands"]
        more = [dict(x, rate_bps=x["rate_bps"] * 1.1) for x in mat]
        dc = solve(d, "PUT", "/v1/matrices/" + MATRIX, {"demands": more})
        back = solve(d, "PUT", "/v1/matrices/" + MATRIX, {"demands": mat})
        out["demand_change"] = strip([dc])[0]
        out["demand_restore"] = strip([back])[0]
        print("    weft %-8s incremental: %d link failures median %.3g s (%d partial, "
              "%d failed), demand x1.1 %.3g s (%s)" % (
                  out["formulation"], len(down),
                  statistics.median(r["solve_s"] for r in down) if down else float("nan"),
                  sum(r["status"] == "partial" for r in down),
                  sum(r["status"] == "failed" for r in down), dc["solve_s"], dc["status"]),
              flush=True)
        peaks = [vm_hwm_mib(d)]
        if export_dir is not None:
            # After VmHWM was read: an export solves the model once more.
            paths = {"balance": export(d, back, "balance", export_dir, inst["name"])}
            rec = solve(d, "PUT", "/v1/policy", policy("cost", form))
            paths["cost"] = export(d, rec, "cost", export_dir, inst["name"])
            out["mps"] = paths
    finally:
        d.stop()
    # Full solves, each in a fresh daemon: cost, balance, cost, balance, ...
    full = {"balance": [], "cost": []}
    for _ in range(args.runs):
        for obj in ("cost", "balance"):
            rec = cold_solve(inst, topo, form, obj)
            if rec["status"] != "optimal":
                raise BenchError("%s plan %s after the capacity scaling" % (obj, rec["status"]))
            peaks.append(rec.pop("peak_mib"))
            full[obj].append(rec)
    out["full"] = {o: [{kk: v for kk, v in r.items() if kk != "plan"} for r in rs]
                   for o, rs in full.items()}
    out["peak_mib"] = max(x for x in peaks if x is not None) if any(peaks) else None
    print("    weft %-8s full: balance %s s, cost %s s (capacity x %d)" % (
        out["formulation"], "/".join("%.3g" % r["solve_s"] for r in full["balance"]),
        "/".join("%.3g" % r["solve_s"] for r in full["cost"]), factor), flush=True)
    return out, full


# ---- sweeps ----

def run_sweep(inst):
    """Part 6: a single-link sweep against one full solve (path, balance)."""
    d = Daemon()
    try:
        load(d, inst)
        factor, _ = make_fit(d, "path")
        topo = get(d, "/v1/topology")
        t0 = time.perf_counter()
        r = d.request("POST", "/v1/sweeps", {"kind": "links"}, timeout=HTTP_TIMEOUT)
        if r.status != 202:
            raise BenchError("POST /v1/sweeps: HTTP %d %s" % (r.status, r.body[:300]))
        sid = r.json()["id"]
        while True:
            sw = get(d, "/v1/sweeps/%d" % sid)
            if sw["state"] != "running":
                break
            if time.perf_counter() - t0 > SWEEP_TIMEOUT:
                raise BenchError("sweep still running after %.0f s" % SWEEP_TIMEOUT)
            time.sleep(0.5)
        wall = time.perf_counter() - t0
        peak = vm_hwm_mib(d)
    finally:
        d.stop()
    full = cold_solve(inst, topo, "path", "balance")
    res = sw["results"]
    failed = [x for x in res if x["status"] == "failed"]
    out = {"name": inst["name"], "capacity_factor": factor, "state": sw["state"],
           "scenarios": sw["total"], "done": sw["done"], "sweep_s": sw["elapsed_s"],
           "wall_s": wall, "full_s": full["solve_s"], "peak_mib": peak,
           "ratio": sw["elapsed_s"] / full["solve_s"] if full["solve_s"] > 0 else None,
           "scenario_ms_median": statistics.median(x["solve_ms"] for x in res) if res else None,
           "scenario_ms_max": max(x["solve_ms"] for x in res) if res else None,
           "partial": sum(x["status"] == "partial" for x in res),
           "failed": len(failed), "ok": sw["state"] == "done" and not failed}
    print("    sweep links: %d scenarios in %.1f s = %.1f x one full balance solve (%.2f s); "
          "scenario median %.0f ms, max %.0f ms; %d partial, %d failed" % (
              out["scenarios"], out["sweep_s"], out["ratio"] or float("nan"), out["full_s"],
              out["scenario_ms_median"] or 0, out["scenario_ms_max"] or 0, out["partial"],
              out["failed"]), flush=True)
    return out


def sweep_table(rows):
    head = ("instance", "links", "cap x", "full s", "sweep s", "sweep/full", "scen. ms med",
            "scen. ms max", "partial", "weft MiB", "check")
    body = [(r["name"], str(r["scenarios"]), str(r["capacity_factor"]), f3(r["full_s"]),
             "%.1f" % r["sweep_s"], "%.1f" % r["ratio"], "%.0f" % r["scenario_ms_median"],
             "%.0f" % r["scenario_ms_max"], str(r["partial"]),
             "%.0f" % r["peak_mib"] if r["peak_mib"] else "-",
             "ok" if r["ok"] else "FAIL") for r in rows]
    w = [max(len(h), *(len(b[i]) for b in body)) if body else len(h)
         for i, h in enumerate(head)]
    lines = ["  ".join(h.ljust(w[i]) for i, h in enumerate(head)),
             "  ".join("-" * x for x in w)]
    lines += ["  ".join(c.ljust(w[i]) for i, c in enumerate(b)) for b in body]
    return "\n".join(lines)


# ---- checks and the table ----

def check(weft, ref, scale=1.0):
    """weft: a value of weft's; ref: reference() of the LP it belongs to,
    whose optimum times scale is the value's counterpart.  Returns (ok,
    note)."""
    vals = {n: r["obj"] * scale for n, r in ref.items()
            if n != "CLP" and r["obj"] is not None}
    if weft is None:
        return False, "absent from the plan"
    if not vals:
        return False, "no reference solver finished"
    lo, hi = min(vals.values()), max(vals.values())
    spread = abs(hi - lo) / max(abs(hi), abs(lo), 1e-300)
    bad = [n for n, v in vals.items() if abs(weft - v) > max(REL * abs(v), 1e-12 * scale)]
    if not bad:
        return True, ""
    if spread > REL and lo - REL * abs(lo) <= weft <= hi + REL * abs(hi):
        return True, "within the solvers' spread %.1e" % spread
    return False, "weft %.10g vs %s" % (weft, ", ".join("%s %.10g" % (n, vals[n]) for n in bad))


def checks_of(w, full, refs):
    """The checks of one formulation's full solves.  References: CLP (tol
    1e-10), glpsol and HiGHS on the exported node-arc LPs.
      balance: the "balance" stage's lp_objective (U, no units) against
        the min-U LP's optimum;
      cost: the "cost" stage's lp_objective against the cost LP's optimum,
        and the plan's total_cost against that optimum x cost_scale (as
        tests/reference/run.py check_mps does).  The full solves are cold,
        so the path formulation's master is in the node-arc LP's units too
        (bit/s / largest capacity, metric / largest metric: DESIGN of
        daemon/engine/form_path.c)."""
    out = []
    for obj in ("balance", "cost"):
        for i, r in enumerate(full[obj]):
            items = [("lp_objective", stage_obj(r, obj), 1.0)]
            if obj == "cost":
                items.append(("total_cost", r["total_cost"], w["cost_scale"]))
            for what, val, scale in items:
                ok, note = check(val, refs[obj], scale)
                out.append({"formulation": w["formulation"], "objective": obj, "run": i,
                            "value": what, "weft": val, "ok": ok, "note": note})
                if not ok:
                    print("    FAIL %s %s run %d %s: %s" % (w["formulation"], obj, i, what, note))
    return out


def med(xs):
    xs = [x for x in xs if x is not None]
    return statistics.median(xs) if xs else None


def f3(x):
    if x is None:
        return "-"
    return "%.3g" % x if x < 1 else ("%.2f" % x if x < 100 else "%.0f" % x)


def f2(x):
    return "-" if x is None else "%.2f" % x


def row_of(name, w, refs, checks):
    bal = med(r["solve_s"] for r in w["full"]["balance"])
    cost = med(r["solve_s"] for r in w["full"]["cost"])
    inc = med(r["solve_s"] for r in w["link_down"])
    rb, rc = refs.get("balance", {}), refs.get("cost", {})

    def pair(solver):
        return "%s/%s" % (f3(rb.get(solver, {}).get("s")), f3(rc.get(solver, {}).get("s")))

    clp_b = rb.get("CLP", {}).get("s")
    warm = [r["warm"] for r in w["link_down"] if r.get("warm") is not None]
    clp_mib = max([r.get("mib", 0) for x in (rb, rc) for n, r in x.items() if n.startswith("CLP")]
                  or [0]) or None
    fails = [c for c in checks if not c["ok"]]
    row = {
        "instance": name, "formulation": w["formulation"],
        "N/L/D": "%d/%d/%d" % tuple(w["size"]),
        "cap x": str(w["capacity_factor"]),
        "weft bal s": f3(bal), "weft cost s": f3(cost),
        "CLP s b/c": pair("CLP"), "glpsol s b/c": pair("glpsol"), "HiGHS s b/c": pair("HiGHS"),
        "weft/CLP bal": f2(bal / clp_b if bal is not None and clp_b else None),
        "incr s (down)": f3(inc),
        "incr/full": f2(inc / bal if inc is not None and bal else None),
        "demand x1.1 s": f3(w["demand_change"]["solve_s"]),
        "warm": "%d/%d" % (sum(bool(x) for x in warm), len(w["link_down"])) if warm else "-",
        "weft MiB": "%.0f" % w["peak_mib"] if w.get("peak_mib") else "-",
        "CLP MiB": "%.0f" % clp_mib if clp_mib else "-",
        "check": "FAIL" if fails else ("ok" if checks else "-"),
    }
    assert list(row) == COLUMNS
    return row


COLUMNS = ["instance", "formulation", "N/L/D", "cap x", "weft bal s", "weft cost s",
           "CLP s b/c", "glpsol s b/c", "HiGHS s b/c", "weft/CLP bal", "incr s (down)",
           "incr/full", "demand x1.1 s", "warm", "weft MiB", "CLP MiB", "check"]


def table(rows):
    if not rows:
        return "(no rows)"
    hdr = COLUMNS
    w = [max(len(h), *(len(str(r[h])) for r in rows)) for h in hdr]
    lines = ["  ".join(h.ljust(w[i]) for i, h in enumerate(hdr)),
             "  ".join("-" * w[i] for i in range(len(hdr)))]
    for r in rows:
        lines.append("  ".join(str(r[h]).ljust(w[i]) for i, h in enumerate(hdr)))
    return "\n".join(lines)


# ---- main ----

class Args:
    def __init__(self, argv):
        self.quick = False
        self.runs = 3
        self.sites = synth.SITES
        self.failures = 20
        self.solver_timeout = 900.0
        self.names = []
        self.sweeps = True
        self.main = True
        i = 0
        while i < len(argv):
            a = argv[i]
            if a == "--quick":
                self.quick = True
            elif a == "--sweeps-only":
                self.main = False
            elif a == "--no-sweeps":
                self.sweeps = False
            elif a in ("--runs", "--sites", "--failures", "--solver-timeout") and i + 1 < len(argv):
                setattr(self, a[2:].replace("-", "_"), type(getattr(self, a[2:].replace("-", "_")))(
                    argv[i + 1]))
                i += 1
            elif a.startswith("--"):
                raise SystemExit(__doc__[__doc__.index("Usage:"):])
            else:
                self.names.append(a)
            i += 1
        if self.runs < 1 or self.failures < 0:
            raise SystemExit("--runs must be >= 1, --failures >= 0")


def instances(args):
    out = []
    for f in sorted((f for f in os.listdir(DATA) if f.endswith(".txt")),
                    key=lambda f: os.path.getsize(os.path.join(DATA, f))):
        out.append({"name": f[:-4], "kind": "sndlib", "path": os.path.join(DATA, f)})
    out.append({"name": SYNTH, "kind": "synth"})
    if args.names:
        known = {x["name"] for x in out}
        unknown = [n for n in args.names if n not in known]
        if unknown:
            raise SystemExit("unknown instance(s) %s; known: %s" % (unknown, sorted(known)))
        out = [x for x in out if x["name"] in args.names]
    if args.quick:
        out = [x for x in out if x["name"] not in BIG]
    return out


def machine():
    with open("/proc/loadavg") as f:
        la = f.read().split()[:3]
    return {"host": platform.node(), "cpus": os.cpu_count(), "loadavg": la,
            "kernel": platform.release(), "time": time.strftime("%Y-%m-%dT%H:%M:%S%z")}


def main(argv):
    args = Args(argv)
    t_start = time.time()
    result = {"machine_start": machine(), "runs": args.runs, "failures": args.failures,
              "sites": args.sites, "seed": SEED, "synth_seed": synth.SEED, "rel": REL,
              "weftd": os.environ.get("WEFTD", os.path.join(ROOT, "build", "weftd")),
              "instances": []}
    try:
        forms = probe_formulations()
    except Exception as e:
        print("cannot start weftd: %s" % e)
        return 2
    fnote = ("formulations: %s" % ", ".join(forms)) if forms else \
        "formulation: default (node-arc) (the policy has no \"formulation\" member)"
    print("== " + fnote, flush=True)
    result["formulations"] = forms or ["default (node-arc)"]
    rows = []
    any_fail = False
    for inst in instances(args) if args.main else []:
        name = inst["name"]
        big = name in BIG
        runs = 1 if big else args.runs
        print("== %s" % name, flush=True)
        t0 = time.time()
        rec = {"name": name, "weft": [], "reference": {}, "checks": []}
        result["instances"].append(rec)
        try:
            if inst["kind"] == "synth":
                inst["synth"] = synth.build(sites=args.sites)
                rec["synth"] = inst["synth"]["info"]
            with tempfile.TemporaryDirectory(prefix="weft-bench-") as tmp:
                ws = []
                for i, form in enumerate(forms or [None]):
                    exp = tmp if i == 0 else None
                    w, full = run_weft(inst, form, args, exp)
                    ws.append((w, full))
                    rec["weft"].append(w)
                refs = {}
                for obj in ("balance", "cost"):
                    print("    reference, %s stage LP (%.0f KiB MPS)" % (
                        obj, os.path.getsize(ws[0][0]["mps"][obj]) / 1024.0), flush=True)
                    refs[obj] = reference(ws[0][0]["mps"][obj], runs, args.solver_timeout)
                rec["reference"] = refs
            for w, full in ws:
                checks = checks_of(w, full, refs)
                rec["checks"] += checks
                any_fail |= any(not c["ok"] for c in checks)
                rows.append(row_of(name, w, refs, checks))
        except Exception as e:
            traceback.print_exc()
            rec["error"] = "%s: %s" % (type(e).__name__, str(e)[:500])
            any_fail = True
            row = {k: "-" for k in COLUMNS}
            row.update({"instance": name, "check": "FAIL",
                        "formulation": "error: " + rec["error"][:40]})
            rows.append(row)
        rec["wall_s"] = time.time() - t0
        print("   %s done in %.1f s" % (name, rec["wall_s"]), flush=True)
    sweeps = []
    for inst in instances(args) if args.sweeps else []:
        if inst["name"] not in SWEEP_INSTANCES:
            continue
        print("== %s sweep" % inst["name"], flush=True)
        try:
            sweeps.append(run_sweep(inst))
            any_fail |= not sweeps[-1]["ok"]
        except Exception as e:
            traceback.print_exc()
            any_fail = True
            result.setdefault("sweep_errors", []).append(
                "%s: %s: %s" % (inst["name"], type(e).__name__, str(e)[:500]))
    result["sweeps"] = sweeps
    result["machine_end"] = machine()
    result["wall_s"] = time.time() - t_start
    result["table"] = rows
    os.makedirs(os.path.dirname(OUT), exist_ok=True)
    with open(OUT, "w") as f:
        json.dump(result, f, indent=1)
    print()
    if rows:
        print(table(rows))
        print()
    if sweeps:
        print(sweep_table(sweeps))
        print()
        print("sweep: one scenario per link that is up, each warm-started from the live "
              "plan's master on the worker threads; sweep/full: the sweep's elapsed_s over "
              "one full balance solve of a fresh daemon.")
    print("weft s: median plan solve_ms of %d full solves (all stages); CLP/glpsol/HiGHS s "
          "b/c: balance-stage LP / cost-stage LP; incr: median of the link-down re-solves; "
          "big instances (%s): 1 reference run." % (args.runs, ", ".join(BIG)))
    print(fnote + ".  load average at start %s, at end %s; %d CPUs."
          % (" ".join(result["machine_start"]["loadavg"]),
             " ".join(result["machine_end"]["loadavg"]), os.cpu_count() or 0))
    print("results: %s  (%.0f s)" % (os.path.relpath(OUT, os.getcwd()), result["wall_s"]))
    return 1 if any_fail else 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
