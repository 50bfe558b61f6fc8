/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Survivability sweeps: every single failure of a kind, on the workers. */
#ifndef WEFT_DAEMON_SWEEPS_H
#define WEFT_DAEMON_SWEEPS_H

/*
 * DESIGN
 * A sweep is a family of scenarios against the live plan: each link that
 * is up failing alone, each node, each SRLG in use, or each pair of up
 * links.  sweeps_start() records it in SQLite and queues one task per
 * scenario on the worker pool (behind any what-if).  The scenarios and
 * the solve of each come from sweepset.c, which weft-mpisweep shares:
 * each task copies the live model, takes its links down, scales the
 * demands, and solves warm from the live plan's seed.  Results go to
 * SQLite in batches (at most a second apart), so a crash loses at most
 * the last second; the database marks a sweep still "running" at
 * start-up as "interrupted".  The task that finishes last writes the
 * report (worst case per link direction over all scenarios, scenarios
 * with unserved traffic) and the final state.  One sweep runs at a
 * time.  Cancelling lets the scenarios in progress end; queued ones are
 * skipped.
 */

#include <stdbool.h>
#include <stdint.h>

struct err;
struct service;
struct sweeps;

struct sweeps *sweeps_new(struct service *svc);

/*
 * Starts a sweep of kind ("links", "nodes", "srlgs", "link-pairs") with
 * every rate times scale, each scenario within time_limit_s.  Returns 0
 * with its id and scenario count; ERR_INVALID for an unknown kind or
 * more scenarios than the configured maximum (nothing is stored),
 * ERR_CONFLICT while another runs (its id in *idp), ERR_BUSY before the
 * first plan, ERR_DB.
 */
int sweeps_start(struct sweeps *sw, const char *kind, double scale,
    double time_limit_s, const char *params_json, int64_t *idp,
    long *totalp, struct err *e);

/*
 * Progress of sweep id if it is the one running: true with done, total
 * and seconds elapsed; false otherwise.
 */
bool sweeps_progress(struct sweeps *sw, int64_t id, long *donep,
    long *totalp, double *elapsedp);

/*
 * Cancels sweep id and waits (a bounded time) until its scenarios in
 * progress have ended and its state is stored.  ERR_CONFLICT when it is
 * not running.
 */
int sweeps_cancel(struct sweeps *sw, int64_t id, struct err *e);

/* At shutdown: the running sweep ends as "interrupted". */
void sweeps_stop(struct sweeps *sw);

/* After the workers have stopped. */
void sweeps_free(struct sweeps *sw);

#endif /* WEFT_DAEMON_SWEEPS_H */
