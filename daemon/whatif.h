/* SPDX-License-Identifier: GPL-3.0-or-later */
/* What-ifs: a scenario model solved on a worker from the live plan's seed. */
#ifndef WEFT_DAEMON_WHATIF_H
#define WEFT_DAEMON_WHATIF_H

/*
 * DESIGN
 * The HTTP thread builds the scenario model (api/, engine/scenario.c),
 * so a bad scenario is refused before anything is queued, then hands it
 * here.  A worker rebuilds the live master from the seed
 * (engine_state_from_seed(), in sweepset_solve()) and solves the
 * scenario warm from it; with no seed (the live plan was solved
 * node-arc) it solves from nothing.
 * The result goes to the caller's callback on the worker thread; the
 * callee owns it.
 */

#include <stddef.h>

#include "base/err.h"

struct model;
struct plan;
struct seed_box;
struct service;

struct whatif_result {
	int r;			/* 0, or the error (e has the detail) */
	struct err e;
	struct seed_box *box;	/* the live plan: a reference */
	struct model *m;	/* the scenario, owned */
	struct plan *p;		/* its plan, owned; NULL on error */
	size_t *failed;		/* owned: links the scenario took down */
	size_t n_failed;
};

/* Called once per submitted what-if, on a worker thread (or, with r =
   ERR_BUSY, on the thread stopping the daemon). */
typedef void whatif_done_fn(void *ctx, struct whatif_result *res);

/*
 * Queues the what-if.  Takes box (a reference), m, and failed in every
 * case.  Returns 0 (done will be called), or ERR_BUSY when every worker
 * is busy and the queue is full (done will not be called).
 */
int whatif_submit(struct service *svc, struct seed_box *box,
    struct model *m, size_t *failed, size_t n_failed, double time_limit_s,
    whatif_done_fn *done, void *ctx, struct err *e);

void whatif_result_free(struct whatif_result *res);

#endif /* WEFT_DAEMON_WHATIF_H */
