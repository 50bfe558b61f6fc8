/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The sweep runner: scenarios queued on the workers, results batched. */

#include <pthread.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "sweeps.h"
#include "events.h"
#include "service.h"
#include "stats.h"
#include "sweepset.h"
#include "workers.h"
#include "base/clock.h"
#include "base/err.h"
#include "base/log.h"
#include "base/xalloc.h"
#include "../api/codec_sweep.h"
#include "../storage/db.h"

/* Results are written at most this far apart, ms. */
#define FLUSH_MS	1000.0
/* How long a cancel waits for the scenarios in progress, s. */
#define CANCEL_WAIT_S	120
/* Progress events of one sweep at least this far apart, ms. */
#define EVENT_MS	250.0

struct sweep;

struct sweep_task {
	struct task t;		/* first: the pool sees this */
	struct sweep *sw;
	size_t idx;
};

struct sweep {
	struct sweeps *owner;
	int64_t id;
	char kind[16];
	double scale, time_limit_s;
	struct seed_box *box;	/* the live plan: a reference */
	size_t n;		/* scenarios: set.n */
	struct sweepset set;	/* owned: the scenarios */
	struct sweep_task *tasks;
	double t0;		/* ms */
	/* Under owner->mu: */
	size_t done, ended;	/* solved; solved or skipped */
	bool cancel;
	const char *end_state;	/* "cancelled" or "interrupted" */
	struct db_sweep_result *all;	/* by index */
	bool *have;
	size_t *pend;		/* indices not yet written */
	size_t n_pend;
	double last_flush;
	double last_event;	/* ms: the last progress event */
	double *worst;		/* per arc of the live model */
	long *worst_idx;
};

struct sweeps {
	struct service *svc;
	pthread_mutex_t mu;
	pthread_cond_t cv;	/* a sweep ended */
	struct sweep *cur;	/* under mu */
	bool stopping;
};

/* Posts a "sweep" event: sw's progress in state. */
static void
post(struct sweep *sw, const char *state)
{
	struct event ev;

	memset(&ev, 0, sizeof(ev));
	ev.kind = EVENT_SWEEP;
	ev.revision = sw->id;
	snprintf(ev.status, sizeof(ev.status), "%s", state);
	ev.done = (long)sw->done;
	ev.total = (long)sw->n;
	events_post(service_events(sw->owner->svc), &ev);
}

struct sweeps *
sweeps_new(struct service *svc)
{
	struct sweeps *s = xcalloc(1, sizeof(*s));

	s->svc = svc;
	pthread_mutex_init(&s->mu, NULL);
	pthread_cond_init(&s->cv, NULL);
	return s;
}

void
sweeps_free(struct sweeps *s)
{
	if (s == NULL)
		return;
	pthread_cond_destroy(&s->cv);
	pthread_mutex_destroy(&s->mu);
	free(s);
}

static void
sweep_free(struct sweep *sw)
{
	size_t i;

	if (sw == NULL)
		return;
	service_seed_unref(sw->box);
	for (i = 0; i < sw->n && sw->all != NULL; i++) {
		free(sw->all[i].fail_json);
		free(sw->all[i].error);
	}
	sweepset_clear(&sw->set);
	free(sw->tasks);
	free(sw->all);
	free(sw->have);
	free(sw->pend);
	free(sw->worst);
	free(sw->worst_idx);
	free(sw);
}

/* ---- running ---- */

/* Writes the results of the n scenarios idx[]; under owner->mu. */
static void
flush(struct sweep *sw, size_t *idx, size_t n, long done, double elapsed_s)
{
	struct db_sweep_result *rs = xcalloc(n + 1, sizeof(*rs));
	struct service *svc = sw->owner->svc;
	struct err e = { 0 };
	struct db *db;
	size_t i;

	for (i = 0; i < n; i++)
		rs[i] = sw->all[idx[i]];
	db = service_db_lock(svc);
	if (db_sweep_progress(db, sw->id, done, elapsed_s, rs, n, &e) != 0)
		log_warn("sweep results not stored id=%lld msg=\"%s\"",
		    (long long)sw->id, e.msg);
	service_db_unlock(svc);
	free(rs);
}

/* The last task: report, final state, the sweep's end. */
static void
finish(struct sweep *sw)
{
	struct sweeps *s = sw->owner;
	struct service *svc = s->svc;
	const struct published *live = sw->box->pub;
	const char *state;
	struct err e = { 0 };
	char *report;
	double elapsed_s = (clock_ms() - sw->t0) / 1e3;
	struct db *db;
	int k;

	state = sw->end_state != NULL ? sw->end_state : "done";
	report = strcmp(state, "interrupted") == 0 ? NULL :
	    codec_sweep_report(live->model, live->plan,
	    live->model->policy.headroom, sw->worst, sw->worst_idx, sw->all,
	    sw->have, sw->n);
	db = service_db_lock(svc);
	if (db_sweep_finish(db, sw->id, state, elapsed_s, report, NULL,
	    &e) != 0)
		log_err("sweep state not stored id=%lld msg=\"%s\"",
		    (long long)sw->id, e.msg);
	service_db_unlock(svc);
	free(report);
	k = stats_sweep_state(state);
	atomic_fetch_add(&service_stats(svc)->sweeps_ended[k >= 0 ? k :
	    STATS_SWEEP_FAILED], 1);
	post(sw, state);
	log_info("sweep ended id=%lld kind=%s state=%s done=%zu total=%zu "
	    "s=%.1f", (long long)sw->id, sw->kind, state, sw->done, sw->n,
	    elapsed_s);
	pthread_mutex_lock(&s->mu);
	if (s->cur == sw)
		s->cur = NULL;
	pthread_cond_broadcast(&s->cv);
	pthread_mutex_unlock(&s->mu);
	sweep_free(sw);
}

static void
run(struct task *t, bool cancelled)
{
	struct sweep_task *st = (struct sweep_task *)t;
	struct sweep *sw = st->sw;
	struct sweeps *s = sw->owner;
	struct plan *p = NULL;
	bool skip, last;
	double now;

	pthread_mutex_lock(&s->mu);
	if (cancelled && sw->end_state == NULL)
		sw->end_state = "interrupted";
	skip = cancelled || sw->cancel;
	pthread_mutex_unlock(&s->mu);
	if (!skip)
		sweepset_eval(&sw->set, st->idx, sw->box->pub->model,
		    sw->box->sd, sw->scale, sw->time_limit_s,
		    &sw->all[st->idx], &p);

	if (!skip)
		atomic_fetch_add(&service_stats(s->svc)->sweep_scenarios, 1);
	pthread_mutex_lock(&s->mu);
	if (!skip) {
		sw->have[st->idx] = true;
		sw->done++;
		sw->pend[sw->n_pend++] = st->idx;
		sweepset_worst(sw->worst, sw->worst_idx, p, (long)st->idx);
	}
	sw->ended++;
	last = sw->ended == sw->n;
	now = clock_ms();
	/*
	 * Written under the lock, so that no task still uses sw when the
	 * last one frees it; at most once a second.
	 */
	if (sw->n_pend > 0 && (last || now - sw->last_flush >= FLUSH_MS)) {
		flush(sw, sw->pend, sw->n_pend, (long)sw->done,
		    (now - sw->t0) / 1e3);
		sw->n_pend = 0;
		sw->last_flush = now;
	}
	/* A few progress events a second at most; finish() posts the end. */
	if (!skip && !last && now - sw->last_event >= EVENT_MS) {
		sw->last_event = now;
		post(sw, "running");
	}
	pthread_mutex_unlock(&s->mu);
	plan_free(p);
	/* Every task has run: nobody else touches sw now. */
	if (last)
		finish(sw);
}

int
sweeps_start(struct sweeps *s, const char *kind, double scale,
    double time_limit_s, const char *params_json, int64_t *idp,
    long *totalp, struct err *e)
{
	const struct service_conf *conf = service_conf(s->svc);
	struct seed_box *box;
	struct sweepset b = { 0 };
	struct sweep *sw;
	struct db *db;
	long total = 0;
	size_t i;
	int r;

	*idp = 0;
	*totalp = 0;
	if ((box = service_seed_ref(s->svc)) == NULL)
		return err_set(e, ERR_BUSY, NULL, "no plan has been published "
		    "yet");
	if ((r = sweepset_count(box->pub->model, kind, &total, e)) != 0)
		goto fail;
	if (total > conf->sweep_max_scenarios) {
		r = err_set(e, ERR_INVALID, "kind", "a %s sweep here has %ld "
		    "scenarios, more than sweep_max_scenarios (%ld)", kind,
		    total, conf->sweep_max_scenarios);
		goto fail;
	}
	pthread_mutex_lock(&s->mu);
	if (s->cur != NULL || s->stopping) {
		*idp = s->cur != NULL ? s->cur->id : 0;
		pthread_mutex_unlock(&s->mu);
		r = err_set(e, s->stopping ? ERR_BUSY : ERR_CONFLICT, NULL,
		    s->stopping ? "the daemon is stopping" :
		    "sweep %lld is running", (long long)*idp);
		goto fail;
	}
	(void)sweepset_build(box->pub->model, kind, &b, NULL);
	if ((long)b.n > conf->sweep_max_scenarios) {
		pthread_mutex_unlock(&s->mu);
		r = err_set(e, ERR_INVALID, "kind", "a %s sweep here has %zu "
		    "scenarios, more than sweep_max_scenarios (%ld)", kind,
		    b.n, conf->sweep_max_scenarios);
		goto fail_b;
	}
	sw = xcalloc(1, sizeof(*sw));
	sw->owner = s;
	snprintf(sw->kind, sizeof(sw->kind), "%s", kind);
	sw->scale = scale;
	sw->time_limit_s = time_limit_s;
	sw->box = box;
	sw->n = b.n;
	sw->set = b;
	sw->tasks = xcalloc(b.n + 1, sizeof(*sw->tasks));
	sw->all = xcalloc(b.n + 1, sizeof(*sw->all));
	sw->have = xcalloc(b.n + 1, sizeof(*sw->have));
	sw->pend = xcalloc(b.n + 1, sizeof(*sw->pend));
	sw->worst = xcalloc(box->pub->model->n_links * 2 + 1,
	    sizeof(*sw->worst));
	sw->worst_idx = xcalloc(box->pub->model->n_links * 2 + 1,
	    sizeof(*sw->worst_idx));
	for (i = 0; i < box->pub->model->n_links * 2; i++)
		sw->worst_idx[i] = -1;
	db = service_db_lock(s->svc);
	r = db_sweep_create(db, kind, box->pub->model_revision,
	    box->pub->revision, (long)b.n, params_json, &sw->id, e);
	service_db_unlock(s->svc);
	if (r != 0) {
		pthread_mutex_unlock(&s->mu);
		box = NULL;
		sweep_free(sw);
		return r;
	}
	sw->t0 = clock_ms();
	sw->last_flush = sw->t0;
	sw->last_event = sw->t0;
	*idp = sw->id;
	*totalp = (long)sw->n;
	atomic_fetch_add(&service_stats(s->svc)->sweeps_started, 1);
	post(sw, "running");
	log_info("sweep started id=%lld kind=%s scenarios=%zu "
	    "plan_revision=%lld", (long long)sw->id, kind, sw->n,
	    (long long)box->pub->revision);
	if (sw->n == 0) {
		pthread_mutex_unlock(&s->mu);
		finish(sw);
		return 0;
	}
	s->cur = sw;
	pthread_mutex_unlock(&s->mu);
	/* Queued only once s->cur is set: a task may end at once. */
	for (i = 0; i < sw->n; i++) {
		sw->tasks[i].t.run = run;
		sw->tasks[i].sw = sw;
		sw->tasks[i].idx = i;
	}
	for (i = 0; i < b.n; i++)
		if (workers_submit(service_workers(s->svc), &sw->tasks[i].t,
		    TASK_SWEEP) != 0)
			/* Stopping: this one never runs; end it here. */
			sw->tasks[i].t.run(&sw->tasks[i].t, true);
	return 0;
fail_b:
	sweepset_clear(&b);
fail:
	service_seed_unref(box);
	return r;
}

bool
sweeps_progress(struct sweeps *s, int64_t id, long *donep, long *totalp,
    double *elapsedp)
{
	bool found = false;

	pthread_mutex_lock(&s->mu);
	if (s->cur != NULL && s->cur->id == id) {
		found = true;
		*donep = (long)s->cur->done;
		*totalp = (long)s->cur->n;
		*elapsedp = (clock_ms() - s->cur->t0) / 1e3;
	}
	pthread_mutex_unlock(&s->mu);
	return found;
}

int
sweeps_cancel(struct sweeps *s, int64_t id, struct err *e)
{
	struct timespec ts;

	pthread_mutex_lock(&s->mu);
	if (s->cur == NULL || s->cur->id != id) {
		pthread_mutex_unlock(&s->mu);
		return err_set(e, ERR_CONFLICT, NULL, "sweep %lld is not "
		    "running", (long long)id);
	}
	s->cur->cancel = true;
	if (s->cur->end_state == NULL)
		s->cur->end_state = "cancelled";
	clock_deadline(&ts, CANCEL_WAIT_S * 1000L);
	while (s->cur != NULL && s->cur->id == id)
		if (pthread_cond_timedwait(&s->cv, &s->mu, &ts) != 0)
			break;
	pthread_mutex_unlock(&s->mu);
	return 0;
}

void
sweeps_stop(struct sweeps *s)
{
	if (s == NULL)
		return;
	pthread_mutex_lock(&s->mu);
	s->stopping = true;
	if (s->cur != NULL) {
		s->cur->cancel = true;
		s->cur->end_state = "interrupted";
	}
	pthread_mutex_unlock(&s->mu);
}
