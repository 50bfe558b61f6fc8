# SPDX-License-Identifier: GPL-3.0-or-later
"""The congestion objective through the daemon, against scipy's HiGHS.

DESIGN.  Starts one real weftd (tests/lib/weftd.py) and, for each instance
of congestion_ref.INSTANCES: imports the SNDlib file, multiplies every
capacity by the instance's factor (so all demand fits), sets the policy
objective "congestion" and compares the published plan with the optimum
of the LP that congestion_ref.py builds independently (Fortz & Thorup,
INFOCOM 2000, cost function; breakpoints and slopes recalled from memory,
see congestion_ref.py):

  - the "congestion" stage's objective against Phi* (bit/s);
  - the summary field "congestion" (sum of Phi over the final loads)
    against Phi of HiGHS's final loads (Phi* within 1e-7: the cost stage
    uses the slack);
  - total_cost against the min cost with sum Phi held at Phi*;
  - the plan passes tests/lib/plancheck.py.

Relative tolerance 1e-6.  Exits 0 when every check passed, 1 when one
failed, 2 when the daemon could not be run, 3 when the daemon refused the
objective "congestion" (its API does not offer it yet): that is a failure
too, reported apart so the reason shows.

Usage: congestion.py   (environment: WEFTD, WEFT_SNDLIB_DIR, as run.py)
"""
import json
import os
import sys
import time

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.dirname(os.path.dirname(HERE))
sys.path.insert(0, os.path.join(ROOT, "tests", "lib"))
sys.path.insert(0, HERE)

import congestion_ref  # noqa: E402
import plancheck  # noqa: E402
from weftd import Daemon  # noqa: E402

DATA = os.environ.get("WEFT_SNDLIB_DIR", os.path.join(ROOT, "tests", "data", "sndlib"))
REL = 1e-6
MATRIX = "ref"
TIMEOUT = 120.0


class Refused(Exception):
    pass


def _json(r, what):
    if r.status // 100 != 2:
        raise RuntimeError("%s: HTTP %d %s" % (what, r.status, r.body[:300]))
    return r.json() if r.body else {}


def check_instance(d, name, factor, out):
    """Appends (check, weft, ref, ok) rows to out."""
    net, pb = congestion_ref.instance(name, factor, DATA)
    t0 = time.time()
    phi_star, cost, phi_final, _, ref_ms = congestion_ref.min_congestion(pb)
    body = open(os.path.join(DATA, name + ".txt"), "rb").read()
    _json(d.request("POST", "/v1/import?format=sndlib&matrix=" + MATRIX, body,
                    ctype="text/plain", timeout=TIMEOUT), "import " + name)
    topo = _json(d.get("/v1/topology", timeout=TIMEOUT), "GET /v1/topology")
    for l in topo["links"]:
        l["capacity_bps"] = l["capacity_bps"] * factor
    _json(d.put("/v1/topology", topo, timeout=TIMEOUT), "PUT /v1/topology")
    policy = {"objective": "congestion", "headroom": 1.0, "matrix": MATRIX}
    r = d.put("/v1/policy", policy, timeout=TIMEOUT)
    if r.status == 400:
        raise Refused("PUT /v1/policy objective congestion: HTTP 400 %s" % r.body[:200])
    rev = _json(r, "PUT /v1/policy")["model_revision"]
    p = d.wait_plan(rev, timeout=TIMEOUT, verify=False)
    if p.get("objective") != "congestion":
        raise Refused("the plan's objective is %r, not \"congestion\"" % p.get("objective"))
    stages = {s["name"]: s for s in p.get("stages", [])}

    def cmp(check, weft, ref):
        ok = weft is not None and abs(float(weft) - ref) <= REL * abs(ref)
        out.append((name, check, weft, ref, ok))

    cmp("stage congestion == HiGHS Phi*", stages.get("congestion", {}).get("objective"),
        phi_star)
    cmp("plan congestion == Phi(HiGHS final loads)", p.get("congestion"), phi_final)
    cmp("total_cost == HiGHS min cost at Phi*", p.get("total_cost"), cost)
    out.append((name, "status optimal", p.get("status"), "optimal", p.get("status") == "optimal"))
    routes = _json(d.get("/v1/plan/routes", timeout=TIMEOUT), "routes")
    loads = _json(d.get("/v1/plan/loads", timeout=TIMEOUT), "loads")
    matrix = _json(d.get("/v1/matrices/" + MATRIX, timeout=TIMEOUT), "matrix")
    fails = plancheck.check(topo, matrix["demands"], policy, p, routes, loads)
    out.append((name, "plancheck", "%d fail" % len(fails), "0 fail", not fails))
    print("   %s: weft %.0f ms, HiGHS %.0f ms, %.1f s in all" % (
        name, p.get("solve_ms", 0), ref_ms, time.time() - t0), flush=True)


def main():
    try:
        d = Daemon()
    except Exception as e:
        print("cannot start weftd: %s" % e)
        return 2
    rows = []
    code = 0
    try:
        for name, factor in congestion_ref.INSTANCES:
            check_instance(d, name, factor, rows)
    except Refused as e:
        print("the daemon does not offer the congestion objective yet: %s" % e)
        code = 3
    except Exception as e:
        print("congestion check failed: %s: %s" % (type(e).__name__, e))
        code = 1
    finally:
        d.stop()
    for inst, check, weft, ref, ok in rows:
        print("  [%s] %-9s %-44s weft=%s ref=%s" % ("ok" if ok else "FAIL", inst, check,
                                                    json.dumps(weft), json.dumps(ref)))
    if code == 0 and any(not r[4] for r in rows):
        code = 1
    print("%d congestion checks, %d failed" % (len(rows), sum(1 for r in rows if not r[4])))
    return code


if __name__ == "__main__":
    sys.exit(main())
