# SPDX-License-Identifier: GPL-3.0-or-later
"""Run the external LP solvers (COIN-OR CLP, glpsol) on a free MPS file.

Each function returns (objective, wall ms) or raises SolverFailed with the
solver's output.  Runs are bounded by a timeout.
"""
import os
import re
import subprocess
import tempfile
import time

CLP = "/usr/bin/clp"
GLPSOL = "/usr/bin/glpsol"


class SolverFailed(Exception):
    pass


def _clp_bounds(mps_path):
    """CLP 1.17's free-MPS reader rejects a BOUNDS line whose bound-set name
    is "BND1", as GLPK's MPS writer names it ("No match for column <value>"),
    while it reads the same line with the name "BND".  The bound-set name
    carries no meaning in a file with one bound set, so rename it in a copy
    next to the original and solve that.
    """
    out = mps_path + ".clp.mps"
    section = None
    with open(mps_path, "r") as f, open(out, "w") as g:
        for line in f:
            if line[:1] not in (" ", "*", "\n", ""):
                section = line.split()[0] if line.split() else section
            elif section == "BOUNDS":
                t = line.split()
                if len(t) >= 3 and t[1] == "BND1":
                    t[1] = "BND"
                    line = " " + " ".join(t) + "\n"
            g.write(line)
    return out


def clp(mps_path, tight=False, timeout=300):
    """COIN-OR CLP.  tight=True sets primal and dual tolerances to 1e-10
    (CLP's defaults are 1e-7)."""
    args = [CLP, _clp_bounds(mps_path)]
    if tight:
        args += ["-primalT", "1e-10", "-dualT", "1e-10"]
    args += ["-solve"]
    t0 = time.time()
    p = subprocess.run(args, stdout=subprocess.PIPE, stderr=subprocess.STDOUT,
                       timeout=timeout)
    ms = (time.time() - t0) * 1000.0
    out = p.stdout.decode("utf-8", "replace")
    # "Optimal objective 0.451504677 - 83809 iterations time 5.74"
    m = re.search(r"^Optimal objective\s+(\S+)", out, re.M)
    if p.returncode != 0 or m is None:
        raise SolverFailed("clp rc %d:\n%s" % (p.returncode, out[-2000:]))
    return float(m.group(1)), ms


def glpsol(mps_path, timeout=300):
    """glpsol (GLPK's stand-alone solver) with default settings."""
    with tempfile.TemporaryDirectory(prefix="weft-glpsol-") as tmp:
        sol = os.path.join(tmp, "sol.txt")
        t0 = time.time()
        p = subprocess.run([GLPSOL, "--freemps", mps_path, "-w", sol],
                           stdout=subprocess.PIPE, stderr=subprocess.STDOUT,
                           timeout=timeout)
        ms = (time.time() - t0) * 1000.0
        out = p.stdout.decode("utf-8", "replace")
        if p.returncode != 0 or not os.path.exists(sol):
            raise SolverFailed("glpsol rc %d:\n%s" % (p.returncode, out[-2000:]))
        with open(sol) as f:
            for line in f:
                t = line.split()
                # s bas <rows> <cols> <primal status> <dual status> <objective>
                if len(t) == 7 and t[:2] == ["s", "bas"]:
                    if t[4] != "f" or t[5] != "f":
                        raise SolverFailed("glpsol: not optimal: %s" % line.strip())
                    return float(t[6]), ms
    raise SolverFailed("glpsol: no solution line:\n%s" % out[-2000:])
