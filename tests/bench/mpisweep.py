#!/usr/bin/python3
# SPDX-License-Identifier: GPL-3.0-or-later
"""The speed-up of weft-mpisweep from 1 to 2 MPI ranks (part of make bench).

DESIGN.  One weftd (tests/lib/weftd.py, 127.0.0.1) is loaded with an
SNDlib instance (default germany50, every capacity x FACTOR so the balance
plan carries the whole matrix with U* near 0.65; tests/reference/whatif.py
uses the same factor), balance, headroom 1, path formulation; `weft
snapshot` writes the snapshot and the daemon is stopped.  Then
`mpirun -np 1` and `mpirun -np 2` weft-mpisweep --kind KIND (default
link-pairs) run alternately, --runs times each (default 3), on 127.0.0.1
with the loopback and shared-memory transports.  Reported per rank count:
the median wall time of the whole mpirun (start-up, snapshot read, base
solve on every rank, the scenarios, the report) and the median of the
sweep's own elapsed_s (the scenarios only, from sweep.json), and the
ratios 1 rank / 2 ranks of both; each 2-rank run also prints how many
scenarios each rank solved (the dealing is dynamic: both near half, rank
0 included).  CPU is the user and system time of mpirun and its ranks
(RUSAGE_CHILDREN): nearly equal CPU for 1 and 2 ranks means the dealing
costs little, and CPU/wall near 2 that both ranks had a core; below
that, other work on the machine took the cores.  Each run's results must equal the
first run's (every scenario's status, and unserved_bps and
max_utilization within 1e-6 relative): a difference fails the bench.

No timing is asserted.  The machine has 2 cores shared with whatever else
runs, so read the ratio, not the seconds (tests/bench/README.md).

Usage: mpisweep.py [--runs N] [--kind KIND] [--instance NAME] [--factor F]
Environment: WEFTD, WEFT, WEFT_MPISWEEP, MPIRUN.  Output: a table on
stdout and build/bench/mpisweep.json.
"""
import json
import os
import resource
import shutil
import statistics
import subprocess
import sys
import tempfile
import time

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.dirname(os.path.dirname(HERE))
sys.path.insert(0, os.path.join(ROOT, "tests", "lib"))
from weftd import Daemon  # noqa: E402
import mpirun as mpi  # noqa: E402

WEFT = os.environ.get("WEFT", os.path.join(ROOT, "build", "weft"))
DATA = os.path.join(ROOT, "tests", "data", "sndlib")
OUT = os.path.join(ROOT, "build", "bench", "mpisweep.json")
RUN_TIMEOUT_S = 1800
REL = 1e-6


def args_of(argv):
    a = {"runs": 3, "kind": "link-pairs", "instance": "germany50", "factor": 5.0}
    i = 0
    while i < len(argv):
        k = argv[i][2:] if argv[i].startswith("--") else None
        if k not in a or i + 1 >= len(argv):
            raise SystemExit(__doc__[__doc__.index("Usage:"):])
        a[k] = type(a[k])(argv[i + 1])
        i += 2
    if a["runs"] < 1 or a["factor"] <= 0 or a["kind"] not in (
            "links", "nodes", "srlgs", "link-pairs"):
        raise SystemExit("--runs >= 1, --factor > 0, --kind links|nodes|srlgs|link-pairs")
    if not os.path.exists(os.path.join(DATA, a["instance"] + ".txt")):
        raise SystemExit("no instance %s in %s" % (a["instance"], DATA))
    return a


def snapshot(a, path):
    d = Daemon(debounce_ms=1000)
    try:
        body = open(os.path.join(DATA, a["instance"] + ".txt"), "rb").read()
        r = d.request("POST", "/v1/import?format=sndlib&matrix=m", body, ctype="text/plain")
        assert r.status == 200, r.body[:300]
        topo = d.get("/v1/topology").json()
        for l in topo["links"]:
            l["capacity_bps"] *= a["factor"]
        assert d.put("/v1/topology", topo).status == 200
        rev = d.put("/v1/policy", {"objective": "balance", "headroom": 1.0, "matrix": "m",
                                   "formulation": "path"}).json()["model_revision"]
        plan = d.wait_plan(rev, verify=False)
        subprocess.run([WEFT, "--url", d.base, "snapshot", "--output", path], check=True,
                       timeout=120)
        return plan
    finally:
        d.stop()


def one(np, snap, out):
    ru0 = resource.getrusage(resource.RUSAGE_CHILDREN)
    t0 = time.perf_counter()
    p = mpi.run(np, ["--snapshot", snap, "--kind", KIND, "--out", out], RUN_TIMEOUT_S)
    wall = time.perf_counter() - t0
    ru1 = resource.getrusage(resource.RUSAGE_CHILDREN)
    # CPU of mpirun and its ranks (their parent reaps them, so it adds up).
    cpu = (ru1.ru_utime - ru0.ru_utime) + (ru1.ru_stime - ru0.ru_stime)
    if p.returncode != 0:
        raise RuntimeError("mpirun -np %d: exit %d\n%s" % (np, p.returncode,
                                                          p.stderr.decode()[-1000:]))
    with open(os.path.join(out, "sweep.json")) as f:
        sw = json.load(f)
    # "scenarios per rank: A B ..." on stderr (more than one rank).
    sw["per_rank"] = [int(x) for line in p.stderr.decode().splitlines()
                      if "scenarios per rank:" in line for x in line.split(":")[-1].split()]
    sw["cpu_s"] = cpu
    return wall, sw


def same(a, b):
    def close(x, y):
        return abs(x - y) <= REL * max(abs(x), abs(y)) + 1e-9
    return len(a["results"]) == len(b["results"]) and all(
        x["status"] == y["status"] and close(x["unserved_bps"], y["unserved_bps"]) and
        close(x["max_utilization"], y["max_utilization"])
        for x, y in zip(a["results"], b["results"]))


KIND = "link-pairs"


def main(argv):
    global KIND
    a = args_of(argv)
    KIND = a["kind"]
    why = mpi.missing(WEFT)
    if why is not None:
        print(why)
        return 2
    tmp = tempfile.mkdtemp(prefix="weft-mpibench-")
    res = {"instance": a["instance"], "factor": a["factor"], "kind": KIND, "runs": a["runs"],
           "cpus": os.cpu_count(), "ranks": {}}
    ok = True
    try:
        snap = os.path.join(tmp, "snap.json")
        plan = snapshot(a, snap)
        print("== %s x %g, balance: U* %.4f, %s; %s sweep, %d runs per rank count" % (
            a["instance"], a["factor"], plan["max_utilization"], plan["status"], KIND,
            a["runs"]), flush=True)
        first = None
        walls = {1: [], 2: []}
        per = {}
        cpus = {}
        sweeps = {1: [], 2: []}
        for i in range(a["runs"]):
            for np in (1, 2):
                wall, sw = one(np, snap, os.path.join(tmp, "out-%d-%d" % (np, i)))
                walls[np].append(wall)
                sweeps[np].append(sw["elapsed_s"])
                if first is None:
                    first = sw
                elif not same(first, sw):
                    ok = False
                    print("    run %d on %d ranks: results differ from the first run" % (i, np))
                per.setdefault(np, []).append(sw["per_rank"])
                cpus.setdefault(np, []).append(sw["cpu_s"])
                print("    run %d, %d rank(s): %d scenarios, wall %.2f s, sweep %.2f s, "
                      "CPU %.2f s%s" % (
                    i + 1, np, sw["total"], wall, sw["elapsed_s"], sw["cpu_s"],
                    "; per rank %s" % " ".join(map(str, sw["per_rank"])) if sw["per_rank"]
                    else ""), flush=True)
        for np in (1, 2):
            res["ranks"][str(np)] = {"wall_s": walls[np], "sweep_s": sweeps[np],
                                     "scenarios_per_rank": per.get(np, []),
                                     "cpu_s": cpus[np],
                                     "cpu_median_s": statistics.median(cpus[np]),
                                     "wall_median_s": statistics.median(walls[np]),
                                     "sweep_median_s": statistics.median(sweeps[np])}
        res["scenarios"] = first["total"]
        r1, r2 = res["ranks"]["1"], res["ranks"]["2"]
        res["speedup_wall"] = r1["wall_median_s"] / r2["wall_median_s"]
        res["speedup_sweep"] = r1["sweep_median_s"] / r2["sweep_median_s"]
        res["results_equal"] = ok
        print()
        print("ranks  wall median s  sweep median s  CPU median s  CPU/wall")
        for np in (1, 2):
            r = res["ranks"][str(np)]
            print("%-5d  %13.2f  %14.2f  %12.2f  %8.2f" % (
                np, r["wall_median_s"], r["sweep_median_s"], r["cpu_median_s"],
                r["cpu_median_s"] / r["wall_median_s"]))
        print("speed-up 1 -> 2 ranks: %.2f x wall (whole mpirun), %.2f x sweep (scenarios "
              "only); %d scenarios; results equal across runs: %s" % (
                  res["speedup_wall"], res["speedup_sweep"], res["scenarios"],
                  "yes" if ok else "NO"))
        with open("/proc/loadavg") as f:
            res["loadavg_end"] = f.read().split()[:3]
        print("load average at end %s; %d CPUs" % (" ".join(res["loadavg_end"]),
                                                   os.cpu_count() or 0))
    finally:
        shutil.rmtree(tmp, ignore_errors=True)
    os.makedirs(os.path.dirname(OUT), exist_ok=True)
    with open(OUT, "w") as f:
        json.dump(res, f, indent=1)
    print("results: %s" % os.path.relpath(OUT, os.getcwd()))
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
