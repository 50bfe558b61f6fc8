/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Counters the daemon keeps for monitoring: solves, what-ifs, sweeps. */
#ifndef WEFT_DAEMON_STATS_H
#define WEFT_DAEMON_STATS_H

/*
 * DESIGN
 * Plain atomic counters, bumped by the thread that sees the event (the
 * solver thread for solves, a worker for what-ifs and sweep scenarios, an
 * HTTP thread for refused what-ifs) and read by GET /metrics without any
 * lock.  Counters only grow while the daemon runs and start at zero.  The
 * solve time histogram keeps one count per bucket (not cumulative); a
 * reader sums them, so its _count always equals its +Inf bucket.
 */

#include <stdatomic.h>
#include <stddef.h>

/* Outcomes of a what-if. */
enum stats_whatif {
	STATS_WHATIF_OK = 0,	/* solved (whatever the plan's status) */
	STATS_WHATIF_FAILED = 1,	/* the solve failed */
	STATS_WHATIF_BUSY = 2,	/* refused: every worker busy */
	STATS_WHATIF_STOPPED = 3,	/* cancelled: the daemon stopped */
	STATS_WHATIF_N = 4,
};

/* Final states of a sweep. */
enum stats_sweep {
	STATS_SWEEP_DONE = 0,
	STATS_SWEEP_CANCELLED = 1,
	STATS_SWEEP_INTERRUPTED = 2,
	STATS_SWEEP_FAILED = 3,
	STATS_SWEEP_N = 4,
};

/* Upper bounds of the solve time buckets, s; a last bucket is +Inf. */
#define STATS_SOLVE_BUCKETS	12
extern const double stats_solve_bounds_s[STATS_SOLVE_BUCKETS];

struct stats {
	atomic_ulong whatif[STATS_WHATIF_N];	/* by outcome */
	atomic_ulong sweeps_started;
	atomic_ulong sweeps_ended[STATS_SWEEP_N];	/* by final state */
	atomic_ulong sweep_scenarios;	/* scenarios solved (or failed) */
	atomic_ulong solves_failed;	/* live solves that published
					   nothing */
	atomic_ulong solve_bucket[STATS_SOLVE_BUCKETS + 1];	/* live
					   solves per bucket, not cumulative;
					   the last is +Inf */
	atomic_ullong solve_sum_us;	/* their total time, microseconds */
};

/* Records one live solve of solve_ms milliseconds.  Any thread. */
void stats_solve(struct stats *st, double solve_ms);

/* Returns "done", ... for a final sweep state, or -1 when unknown. */
int stats_sweep_state(const char *state);

/* The label of enum stats_whatif / stats_sweep values. */
const char *stats_whatif_str(enum stats_whatif o);
const char *stats_sweep_str(enum stats_sweep s);

#endif /* WEFT_DAEMON_STATS_H */
