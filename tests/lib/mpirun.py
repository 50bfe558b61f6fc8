# SPDX-License-Identifier: GPL-3.0-or-later
"""mpirun of build/weft-mpisweep on 127.0.0.1 only, for the tests and the bench.

The ranks talk over the self and shared-memory transports and Open MPI's
out-of-band channel stays on the loopback interface, so a run needs no
network set up (a minimal chroot will do); shared memory copies through
its own buffers rather than cross-process reads (which a sandbox's ptrace
rules may forbid); --oversubscribe lets more ranks than cores start.
As root (CI, the chroot) Open MPI also wants both OMPI_ALLOW_RUN_AS_ROOT
variables.  Environment: MPIRUN (default
mpirun), WEFT_MPISWEEP (default build/weft-mpisweep).
"""
import os
import shutil
import signal
import subprocess

ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
MPIRUN = os.environ.get("MPIRUN", "mpirun")
MPISWEEP = os.environ.get("WEFT_MPISWEEP", os.path.join(ROOT, "build", "weft-mpisweep"))
LOCAL_ARGS = ["--oversubscribe", "--mca", "btl", "self,vader",
              "--mca", "btl_vader_single_copy_mechanism", "none",
              "--mca", "oob_tcp_if_include", "lo"]


def run(np, args, timeout):
    """Runs weft-mpisweep args on np ranks within timeout seconds; returns
    the subprocess.CompletedProcess (bytes stdout and stderr).  mpirun
    starts in a process group of its own, so that on a timeout the ranks
    it started end with it (SIGTERM, then SIGKILL to that group), and
    subprocess.TimeoutExpired is raised."""
    env = dict(os.environ, OMPI_ALLOW_RUN_AS_ROOT="1", OMPI_ALLOW_RUN_AS_ROOT_CONFIRM="1")
    env.pop("WEFT_TEST_ADDR", None)
    cmd = [MPIRUN, "-np", str(np)] + LOCAL_ARGS + [MPISWEEP] + list(args)
    p = subprocess.Popen(cmd, stdout=subprocess.PIPE, stderr=subprocess.PIPE,
                         stdin=subprocess.DEVNULL, env=env, start_new_session=True)
    try:
        out, err = p.communicate(timeout=timeout)
    except subprocess.TimeoutExpired:
        for sig in (signal.SIGTERM, signal.SIGKILL):
            try:
                os.killpg(p.pid, sig)
            except ProcessLookupError:
                break
            try:
                p.communicate(timeout=5)
                break
            except subprocess.TimeoutExpired:
                pass
        raise
    return subprocess.CompletedProcess(cmd, p.returncode, out, err)


def missing(*programs):
    """Why these programs (and mpirun) cannot run here, or None."""
    for prog in programs + (MPISWEEP,):
        if not os.access(prog, os.X_OK):
            return "%s is not built" % prog
    if shutil.which(MPIRUN) is None:
        return "%s not found (sh deploy/install-deps.sh)" % MPIRUN
    return None
