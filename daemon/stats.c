/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The monitoring counters: the solve time histogram and the labels. */

#include <math.h>
#include <string.h>

#include "stats.h"

/*
 * Solves take from milliseconds (a warm re-solve of a small network) to
 * the configured limit (600 s by default): roughly three buckets a
 * decade.
 */
const double stats_solve_bounds_s[STATS_SOLVE_BUCKETS] = {
	0.005, 0.01, 0.025, 0.05, 0.1, 0.25, 0.5, 1, 2.5, 10, 60, 300,
};

static const char *const whatif_words[STATS_WHATIF_N] = {
	"ok", "failed", "busy", "stopped",
};

static const char *const sweep_words[STATS_SWEEP_N] = {
	"done", "cancelled", "interrupted", "failed",
};

void
stats_solve(struct stats *st, double solve_ms)
{
	double s = solve_ms / 1e3;
	size_t i;

	if (!isfinite(s) || s < 0)
		s = 0;
	for (i = 0; i < STATS_SOLVE_BUCKETS; i++)
		if (s <= stats_solve_bounds_s[i])
			break;
	atomic_fetch_add(&st->solve_bucket[i], 1);
	atomic_fetch_add(&st->solve_sum_us,
	    (unsigned long long)llround(s * 1e6));
}

int
stats_sweep_state(const char *state)
{
	int i;

	for (i = 0; i < STATS_SWEEP_N; i++)
		if (strcmp(state, sweep_words[i]) == 0)
			return i;
	return -1;
}

const char *
stats_whatif_str(enum stats_whatif o)
{
	return (unsigned)o < STATS_WHATIF_N ? whatif_words[o] : "unknown";
}

const char *
stats_sweep_str(enum stats_sweep s)
{
	return (unsigned)s < STATS_SWEEP_N ? sweep_words[s] : "unknown";
}
