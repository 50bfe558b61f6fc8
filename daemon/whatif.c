/* SPDX-License-Identifier: GPL-3.0-or-later */
/* What-ifs on the worker pool. */

#include <stdlib.h>

#include "whatif.h"
#include "service.h"
#include "stats.h"
#include "sweepset.h"
#include "workers.h"
#include "base/log.h"
#include "base/xalloc.h"
#include "engine/engine.h"

struct whatif_task {
	struct task t;		/* first: the pool sees this */
	struct whatif_result *res;
	double time_limit_s;
	whatif_done_fn *done;
	void *ctx;
	struct stats *stats;	/* the service's */
};

static void
run(struct task *t, bool cancelled)
{
	struct whatif_task *wt = (struct whatif_task *)t;
	struct whatif_result *res = wt->res;

	if (cancelled) {
		res->r = err_set(&res->e, ERR_BUSY, NULL,
		    "the daemon is stopping");
		atomic_fetch_add(&wt->stats->whatif[STATS_WHATIF_STOPPED], 1);
	} else {
		res->r = sweepset_solve(res->box->sd, res->m, wt->time_limit_s,
		    &res->p, &res->e);
		if (res->r != 0)
			log_warn("what-if failed code=%s msg=\"%s\"",
			    err_word(res->r), res->e.msg);
		atomic_fetch_add(&wt->stats->whatif[res->r == 0 ?
		    STATS_WHATIF_OK : STATS_WHATIF_FAILED], 1);
	}
	wt->done(wt->ctx, res);
	free(wt);
}

int
whatif_submit(struct service *svc, struct seed_box *box, struct model *m,
    size_t *failed, size_t n_failed, double time_limit_s,
    whatif_done_fn *done, void *ctx, struct err *e)
{
	struct whatif_task *wt = xcalloc(1, sizeof(*wt));
	struct whatif_result *res = xcalloc(1, sizeof(*res));
	struct workers *w = service_workers(svc);
	int r;

	res->box = box;
	res->m = m;
	res->failed = failed;
	res->n_failed = n_failed;
	wt->t.run = run;
	wt->res = res;
	wt->time_limit_s = time_limit_s;
	wt->done = done;
	wt->ctx = ctx;
	wt->stats = service_stats(svc);
	r = w != NULL ? workers_submit(w, &wt->t, TASK_WHATIF) : ERR_BUSY;
	if (r != 0) {
		atomic_fetch_add(&wt->stats->whatif[STATS_WHATIF_BUSY], 1);
		whatif_result_free(res);
		free(wt);
		return err_set(e, ERR_BUSY, NULL, "every worker is busy; "
		    "try again shortly");
	}
	return 0;
}

void
whatif_result_free(struct whatif_result *res)
{
	if (res == NULL)
		return;
	service_seed_unref(res->box);
	model_free(res->m);
	plan_free(res->p);
	free(res->failed);
	free(res);
}
