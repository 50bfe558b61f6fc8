/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The solver thread: waits for changes, debounces, solves, publishes. */
#ifndef WEFT_DAEMON_SOLVER_THREAD_H
#define WEFT_DAEMON_SOLVER_THREAD_H

#include <stdint.h>

struct err;
struct model;
struct plan;
struct solver;

struct engine_seed;

/*
 * Called on the solver thread after each solve: with a plan (the callee
 * takes ownership of m, p and sd, the seed of the kept master the plan
 * came from, NULL when there is none) or, when the solve failed, with p
 * and sd NULL and the error in e (m is still handed over).
 */
typedef void solver_publish_fn(void *ctx, struct model *m, struct plan *p,
    struct engine_seed *sd, const struct err *e);

struct solver_conf {
	const char *db_path;	/* the thread opens its own connection */
	int debounce_ms;	/* quiet time before solving */
	double time_limit_s;	/* per solve, 0: none */
};

/*
 * Opens the solver's database connection and starts the thread, which
 * solves once at once.  Returns 0, or ERR_DB / ERR_INTERNAL with detail.
 */
int solver_start(const struct solver_conf *c, solver_publish_fn *fn,
    void *ctx, struct solver **sp, struct err *e);

/* Tells the thread the model changed (any thread may call it). */
void solver_notify(struct solver *s);

/*
 * Stops and joins the thread, frees s (NULL ok).  A solve in progress is
 * cancelled: it ends at its next LP call and publishes nothing.  When it
 * is still inside one simplex call after a few seconds, the thread is
 * left to run until the process exits (s is then not freed, and the
 * thread no longer uses the database or the publish callback).
 */
void solver_stop(struct solver *s);

/*
 * Seconds the running solve has been inside the engine, 0 when the thread
 * is not solving (for the service watchdog).  Any thread.
 */
double solver_busy_s(struct solver *s);

#endif /* WEFT_DAEMON_SOLVER_THREAD_H */
