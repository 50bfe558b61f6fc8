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
#include "whatif.h"
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
	size_t n;		/* scenarios */
	size_t *off, *links;	/* scenario i takes down links[off[i]..] */
	char **fail_json;	/* per scenario */
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
	for (i = 0; i < sw->n; i++) {
		free(sw->fail_json[i]);
		if (sw->all != NULL) {
			free(sw->all[i].fail_json);
			free(sw->all[i].error);
		}
	}
	free(sw->fail_json);
	free(sw->off);
	free(sw->links);
	free(sw->tasks);
	free(sw->all);
	free(sw->have);
	free(sw->pend);
	free(sw->worst);
	free(sw->worst_idx);
	free(sw);
}

/* ---- the scenarios of a kind ---- */

struct builder {
	size_t n, cap_sc, n_links, cap_links;
	size_t *off, *links;
	char **fail_json;
};

static void
add_link(struct builder *b, size_t l)
{
	if (b->n_links == b->cap_links) {
		b->cap_links = 2 * b->cap_links + 64;
		b->links = xreallocarray(b->links, b->cap_links,
		    sizeof(*b->links));
	}
	b->links[b->n_links++] = l;
}

/* Closes the scenario being built, labelled by fail_json (taken). */
static void
close_scenario(struct builder *b, char *fail_json)
{
	if (b->n + 1 >= b->cap_sc) {
		b->cap_sc = 2 * b->cap_sc + 64;
		b->off = xreallocarray(b->off, b->cap_sc + 1,
		    sizeof(*b->off));
		b->fail_json = xreallocarray(b->fail_json, b->cap_sc + 1,
		    sizeof(*b->fail_json));
	}
	b->fail_json[b->n] = fail_json;
	b->n++;
	b->off[b->n] = b->n_links;
}

static int
cmp_u32(const void *x, const void *y)
{
	uint32_t a = *(const uint32_t *)x, c = *(const uint32_t *)y;

	return a < c ? -1 : a > c;
}

/* Counts the scenarios of kind on m without making them. */
static int
count(const struct model *m, const char *kind, long *np, struct err *e)
{
	size_t l, up = 0;

	for (l = 0; l < m->n_links; l++)
		up += m->links[l].up;
	if (strcmp(kind, "links") == 0)
		*np = (long)up;
	else if (strcmp(kind, "nodes") == 0)
		*np = (long)m->n_nodes;
	else if (strcmp(kind, "link-pairs") == 0)
		*np = up < 2 ? 0 : (long)(up * (up - 1) / 2);
	else if (strcmp(kind, "srlgs") == 0)
		*np = -1;	/* counted when built */
	else
		return err_set(e, ERR_INVALID, "kind", "unknown sweep kind "
		    "\"%s\" (links, nodes, srlgs, link-pairs)", kind);
	return 0;
}

static void
build(struct builder *b, const struct model *m, const char *kind)
{
	const char *ids[2];
	uint32_t *g = NULL;
	size_t l, j, v, n_g = 0, cap_g = 0, i;

	b->off = xcalloc(1, sizeof(*b->off));
	b->cap_sc = 0;
	if (strcmp(kind, "links") == 0) {
		for (l = 0; l < m->n_links; l++) {
			if (!m->links[l].up)
				continue;
			add_link(b, l);
			ids[0] = m->links[l].id;
			close_scenario(b, codec_fail_json("links", ids, 1));
		}
	} else if (strcmp(kind, "link-pairs") == 0) {
		for (l = 0; l < m->n_links; l++)
			for (j = l + 1; m->links[l].up && j < m->n_links; j++) {
				if (!m->links[j].up)
					continue;
				add_link(b, l);
				add_link(b, j);
				ids[0] = m->links[l].id;
				ids[1] = m->links[j].id;
				close_scenario(b, codec_fail_json("links", ids,
				    2));
			}
	} else if (strcmp(kind, "nodes") == 0) {
		for (v = 0; v < m->n_nodes; v++) {
			for (l = 0; l < m->n_links; l++)
				if (m->links[l].up && (m->links[l].a == v ||
				    m->links[l].b == v))
					add_link(b, l);
			ids[0] = m->nodes[v].id;
			close_scenario(b, codec_fail_json("nodes", ids, 1));
		}
	} else {
		for (l = 0; l < m->n_links; l++)
			for (j = 0; m->links[l].up && j < m->links[l].n_srlgs;
			    j++) {
				if (n_g == cap_g) {
					cap_g = 2 * cap_g + 16;
					g = xreallocarray(g, cap_g, sizeof(*g));
				}
				g[n_g++] = m->links[l].srlgs[j];
			}
		if (n_g > 0)
			qsort(g, n_g, sizeof(*g), cmp_u32);
		for (i = 0; i < n_g; i++) {
			if (i > 0 && g[i] == g[i - 1])
				continue;
			for (l = 0; l < m->n_links; l++)
				if (m->links[l].up &&
				    link_in_srlg(&m->links[l], g[i]))
					add_link(b, l);
			close_scenario(b, codec_fail_srlg_json(g[i]));
		}
		free(g);
	}
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

/* Solves scenario i into sw->all[i]; updates nothing shared. */
static void
solve(struct sweep *sw, size_t i, struct plan **pp)
{
	const struct published *live = sw->box->pub;
	struct db_sweep_result *res = &sw->all[i];
	struct model *m = model_copy(live->model);
	struct err e = { 0 };
	struct plan *p = NULL;
	double t0 = clock_ms();
	size_t j, k;
	int r;

	for (j = sw->off[i]; j < sw->off[i + 1]; j++)
		m->links[sw->links[j]].up = false;
	if (sw->scale != 1)
		for (k = 0; k < m->n_demands; k++)
			m->demands[k].rate_bps *= sw->scale;
	r = whatif_solve(sw->box->sd, m, sw->time_limit_s, &p, &e);
	res->idx = (long)i;
	res->fail_json = xstrdup(sw->fail_json[i]);
	res->solve_ms = clock_ms() - t0;
	if (r != 0) {
		snprintf(res->status, sizeof(res->status), "failed");
		res->error = xstrdup(e.msg);
		res->moved_bps = -1;
	} else {
		snprintf(res->status, sizeof(res->status), "%s",
		    plan_status_str(p->status));
		res->max_util = p->max_util;
		res->carried_bps = p->carried_bps;
		res->unserved_bps = p->unserved_bps;
		res->total_cost = p->total_cost;
		res->moved_bps = p->moved_bps;
	}
	model_free(m);
	*pp = p;
}

static void
run(struct task *t, bool cancelled)
{
	struct sweep_task *st = (struct sweep_task *)t;
	struct sweep *sw = st->sw;
	struct sweeps *s = sw->owner;
	struct plan *p = NULL;
	size_t a;
	bool skip, last;
	double now;

	pthread_mutex_lock(&s->mu);
	if (cancelled && sw->end_state == NULL)
		sw->end_state = "interrupted";
	skip = cancelled || sw->cancel;
	pthread_mutex_unlock(&s->mu);
	if (!skip)
		solve(sw, st->idx, &p);

	if (!skip)
		atomic_fetch_add(&service_stats(s->svc)->sweep_scenarios, 1);
	pthread_mutex_lock(&s->mu);
	if (!skip) {
		sw->have[st->idx] = true;
		sw->done++;
		sw->pend[sw->n_pend++] = st->idx;
		for (a = 0; p != NULL && a < p->n_arcs; a++)
			if (p->arcs[a].load_bps > sw->worst[a]) {
				sw->worst[a] = p->arcs[a].load_bps;
				sw->worst_idx[a] = (long)st->idx;
			}
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
	struct builder b = { 0 };
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
	if ((r = count(box->pub->model, kind, &total, e)) != 0)
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
	build(&b, box->pub->model, kind);
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
	sw->off = b.off;
	sw->links = b.links;
	sw->fail_json = b.fail_json;
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
	for (i = 0; i < b.n; i++)
		free(b.fail_json[i]);
	free(b.fail_json);
	free(b.off);
	free(b.links);
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
