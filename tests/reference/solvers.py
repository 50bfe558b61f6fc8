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


def read_mps(path):
    """A small reader of free MPS (as GLPK writes it): returns
    (c, c0, A (csr), row_lo, row_hi, col_lo, col_hi) with min c'x + c0."""
    import numpy as np
    import scipy.sparse as sp
    rows = {}            # name -> index, objective excluded
    rtype = []
    obj = None
    cols = {}
    entries = []         # (row, col, value)
    cvec = {}
    rhs = {}
    ranges = {}
    bounds = []
    section = None
    with open(path) as f:
        for line in f:
            if not line.strip() or line.startswith("*"):
                continue
            if not line[0].isspace():
                section = line.split()[0]
                continue
            t = line.split()
            if section == "ROWS":
                if t[0] == "N":
                    if obj is None:
                        obj = t[1]
                    continue
                rows[t[1]] = len(rtype)
                rtype.append(t[0])
            elif section == "COLUMNS":
                j = cols.setdefault(t[0], len(cols))
                for k in range(1, len(t) - 1, 2):
                    v = float(t[k + 1])
                    if t[k] == obj:
                        cvec[j] = cvec.get(j, 0.0) + v
                    elif t[k] in rows:
                        entries.append((rows[t[k]], j, v))
            elif section in ("RHS", "RANGES"):
                dst = rhs if section == "RHS" else ranges
                for k in range(1, len(t) - 1, 2):
                    dst[t[k]] = float(t[k + 1])
            elif section == "BOUNDS":
                bounds.append(t)
    n, m = len(cols), len(rtype)
    c = np.zeros(n)
    for j, v in cvec.items():
        c[j] = v
    c0 = -rhs.get(obj, 0.0) if obj is not None else 0.0
    A = sp.csr_matrix(([e[2] for e in entries], ([e[0] for e in entries], [e[1] for e in entries])),
                      shape=(m, n))
    lo = np.full(m, -np.inf)
    hi = np.full(m, np.inf)
    for name, i in rows.items():
        b = rhs.get(name, 0.0)
        r = ranges.get(name)
        ty = rtype[i]
        if ty == "E":
            lo[i] = hi[i] = b
            if r is not None:
                if r > 0:
                    hi[i] = b + r
                else:
                    lo[i] = b + r
        elif ty == "L":
            hi[i] = b
            if r is not None:
                lo[i] = b - abs(r)
        elif ty == "G":
            lo[i] = b
            if r is not None:
                hi[i] = b + abs(r)
    clo = np.zeros(n)
    chi = np.full(n, np.inf)
    for t in bounds:
        ty, j = t[0], cols[t[2]]
        v = float(t[3]) if len(t) > 3 else 0.0
        if ty == "UP":
            chi[j] = v
        elif ty == "LO":
            clo[j] = v
        elif ty == "FX":
            clo[j] = chi[j] = v
        elif ty == "FR":
            clo[j], chi[j] = -np.inf, np.inf
        elif ty == "MI":
            clo[j] = -np.inf
        elif ty == "PL":
            chi[j] = np.inf
        else:
            raise SolverFailed("MPS bound type %s not read here" % ty)
    return c, c0, A, lo, hi, clo, chi


def highs(mps_path):
    """scipy's HiGHS on a free MPS file read by read_mps(), tolerances 1e-9."""
    import numpy as np
    import scipy.sparse as sp
    from scipy.optimize import linprog
    t0 = time.time()
    c, c0, A, lo, hi, clo, chi = read_mps(mps_path)
    eq = np.isfinite(lo) & np.isfinite(hi) & (lo == hi)
    up = np.isfinite(hi) & ~eq
    dn = np.isfinite(lo) & ~eq
    A_ub = sp.vstack([A[up], -A[dn]]).tocsr()
    b_ub = np.concatenate([hi[up], -lo[dn]])
    res = linprog(c, A_ub=A_ub if A_ub.shape[0] else None, b_ub=b_ub if A_ub.shape[0] else None,
                  A_eq=A[eq] if eq.any() else None, b_eq=lo[eq] if eq.any() else None,
                  bounds=list(zip(clo, [None if not np.isfinite(x) else x for x in chi])),
                  method="highs", options={"primal_feasibility_tolerance": 1e-9,
                                           "dual_feasibility_tolerance": 1e-9})
    ms = (time.time() - t0) * 1000.0
    if res.status != 0:
        raise SolverFailed("HiGHS: %s" % res.message)
    return res.fun + c0, ms
