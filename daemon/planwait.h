/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Long polls: callers waiting for a plan newer than a revision. */
#ifndef WEFT_DAEMON_PLANWAIT_H
#define WEFT_DAEMON_PLANWAIT_H

/*
 * DESIGN
 * A waiter names a plan revision and a deadline.  It is told exactly once:
 * when a newer plan is published (planwait_published(), on the solver
 * thread), when its deadline passes (on the module's one timer thread,
 * which sleeps until the earliest deadline), or when the daemon stops
 * (planwait_stop(), on the thread stopping it).  No thread waits per
 * waiter: the HTTP request behind it is suspended.  The newest published
 * revision is kept here, under the same lock as the list, so a waiter
 * added just as a plan is published is either told at once or is in the
 * list that publication scans.  The list is bounded (max); past it the
 * caller answers 503.  Callbacks run without the lock held.
 */

#include <stdbool.h>
#include <stdint.h>

struct err;
struct planwait;

/* Why a waiter is told. */
enum planwait_why {
	PLANWAIT_NEWER = 0,	/* a plan newer than the revision exists */
	PLANWAIT_TIMEOUT = 1,	/* the deadline passed */
	PLANWAIT_STOPPING = 2,	/* the daemon is stopping */
};

typedef void planwait_fn(void *ctx, enum planwait_why why);

/*
 * Starts the timer thread; at most max waiters at once (0: none).
 * newest is the newest plan revision already published (0: none).
 * Returns 0 or ERR_INTERNAL.
 */
int planwait_start(int max, int64_t newest, struct planwait **pwp);

/*
 * Registers a waiter for a plan newer than after, for at most wait_ms.
 * Returns 0 with *queuedp true (fn will be called once, on another
 * thread, perhaps before this returns) or false (a newer plan is already
 * published: fn is not called); ERR_BUSY when max waiters wait or the
 * module is stopping, with detail in e.  Any thread.
 */
int planwait_add(struct planwait *pw, int64_t after, double wait_ms,
    planwait_fn *fn, void *ctx, bool *queuedp, struct err *e);

/* Plan revision rev was published: tells the waiters it satisfies. */
void planwait_published(struct planwait *pw, int64_t rev);

/* Waiters registered now. */
int planwait_count(struct planwait *pw);

/* Tells every waiter PLANWAIT_STOPPING and refuses new ones (NULL ok). */
void planwait_stop(struct planwait *pw);

/* Stops (if not yet) and joins the timer thread, frees pw (NULL ok). */
void planwait_free(struct planwait *pw);

#endif /* WEFT_DAEMON_PLANWAIT_H */
