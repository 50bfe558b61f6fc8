/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The service: committed writes, plan publication, reads for the API. */

/*
 * DESIGN
 * HTTP threads call in here.  Writes and table reads go through one
 * SQLite connection under db_mu (WAL lets the solver thread read its own
 * snapshot meanwhile); a write wakes the solver only after it commits.
 * The solver thread calls publish(), which renders the plan's summary
 * once (the routes and loads are streamed from the plan by the HTTP
 * layer, never held as text: api/plan_list.h), records it in the plan
 * history and swaps the published pointer under pub_mu.  Readers take a
 * reference under pub_mu and release it whenever they are done; the last
 * reference frees the plan.  A failed solve leaves the last good plan
 * published and records the error.  The last SERVICE_PLANS_KEPT published
 * plans (fewer when together they would hold more than
 * SERVICE_PLANS_BYTES, but at least SERVICE_PLANS_MIN) also stay
 * referenced, oldest first (under pub_mu), so GET
 * /v1/plan/diff can compare with them and a page cursor can be served
 * from its own plan.  After the swap, publish() tells the long polls
 * waiting for a newer plan (planwait.c) and posts a "plan" event
 * (events.c); a committed write posts a "model" event.  The monitoring
 * counters (stats.h) live here.
 */

#include <sys/stat.h>

#include <errno.h>
#include <pthread.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "service.h"
#include "events.h"
#include "planwait.h"
#include "solver_thread.h"
#include "stats.h"
#include "sweeps.h"
#include "workers.h"
#include "base/err.h"
#include "base/log.h"
#include "base/xalloc.h"
#include "../api/codec_plan.h"
#include "../api/metrics.h"

struct service {
	struct service_conf conf;
	pthread_mutex_t db_mu;
	struct db *db;			/* owned, under db_mu */
	pthread_mutex_t pub_mu;
	struct published *cur;		/* owned reference, under pub_mu */
	struct published *kept[SERVICE_PLANS_KEPT + 1];	/* owned
					   references, oldest first, under
					   pub_mu */
	size_t kept_n;
	size_t kept_bytes;		/* sum of their bytes */
	int64_t next_plan_revision;	/* solver thread only */
	struct service_status st;	/* failure fields under pub_mu */
	struct solver *solver;		/* owned */
	struct seed_box *seed;		/* owned reference, under pub_mu */
	struct workers *workers;	/* owned */
	struct sweeps *sweeps;		/* owned */
	struct planwait *waits;		/* owned: long polls */
	struct events *events;		/* owned: change notifications */
	struct stats stats;
	bool quiesced;
};

static void
published_free(struct published *p)
{
	model_free(p->model);
	plan_free(p->plan);
	free(p->summary_json);
	free(p->metrics_text);
	free(p);
}

void
service_seed_unref(struct seed_box *b)
{
	if (b == NULL || atomic_fetch_sub(&b->refs, 1) != 1)
		return;
	engine_seed_free(b->sd);
	service_plan_unref(b->pub);
	free(b);
}

struct seed_box *
service_seed_ref(struct service *svc)
{
	struct seed_box *b;

	pthread_mutex_lock(&svc->pub_mu);
	if ((b = svc->seed) != NULL)
		atomic_fetch_add(&b->refs, 1);
	pthread_mutex_unlock(&svc->pub_mu);
	return b;
}

const struct service_conf *
service_conf(const struct service *svc)
{
	return &svc->conf;
}

struct workers *
service_workers(struct service *svc)
{
	return svc->workers;
}

struct sweeps *
service_sweeps(struct service *svc)
{
	return svc->sweeps;
}

struct stats *
service_stats(struct service *svc)
{
	return &svc->stats;
}

struct events *
service_events(struct service *svc)
{
	return svc->events;
}

struct solver *
service_solver(struct service *svc)
{
	return svc->solver;
}

int
service_plan_wait(struct service *svc, int64_t after, double wait_ms,
    planwait_fn *fn, void *ctx, bool *queuedp, struct err *e)
{
	return planwait_add(svc->waits, after, wait_ms, fn, ctx, queuedp, e);
}

int
service_plan_waiters(struct service *svc)
{
	return planwait_count(svc->waits);
}

struct db *
service_db_lock(struct service *svc)
{
	pthread_mutex_lock(&svc->db_mu);
	return svc->db;
}

void
service_db_unlock(struct service *svc)
{
	pthread_mutex_unlock(&svc->db_mu);
}

int
service_load_matrix(struct service *svc, const char *name,
    struct matrix **mxp, struct err *e)
{
	int r;

	pthread_mutex_lock(&svc->db_mu);
	r = db_load_matrix(svc->db, name, mxp, e);
	pthread_mutex_unlock(&svc->db_mu);
	return r;
}

void
service_plan_unref(struct published *p)
{
	if (p != NULL && atomic_fetch_sub(&p->refs, 1) == 1)
		published_free(p);
}

struct published *
service_plan_ref(struct service *svc)
{
	struct published *p;

	pthread_mutex_lock(&svc->pub_mu);
	if ((p = svc->cur) != NULL)
		atomic_fetch_add(&p->refs, 1);
	pthread_mutex_unlock(&svc->pub_mu);
	return p;
}

struct published *
service_plan_ref_rev(struct service *svc, int64_t rev)
{
	struct published *p = NULL;
	size_t i;

	pthread_mutex_lock(&svc->pub_mu);
	for (i = 0; i < svc->kept_n; i++) {
		if (svc->kept[i]->revision == rev) {
			p = svc->kept[i];
			atomic_fetch_add(&p->refs, 1);
			break;
		}
	}
	pthread_mutex_unlock(&svc->pub_mu);
	return p;
}

void
service_plans_kept(struct service *svc, int64_t *oldestp, int64_t *newestp)
{
	size_t i;

	*oldestp = *newestp = 0;
	pthread_mutex_lock(&svc->pub_mu);
	for (i = 0; i < svc->kept_n; i++) {
		if (*oldestp == 0 || svc->kept[i]->revision < *oldestp)
			*oldestp = svc->kept[i]->revision;
		if (svc->kept[i]->revision > *newestp)
			*newestp = svc->kept[i]->revision;
	}
	pthread_mutex_unlock(&svc->pub_mu);
}

/* About how much memory a published plan holds: plan, model, texts. */
static size_t
published_bytes(const struct published *pub)
{
	const struct model *m = pub->model;
	const struct plan *p = pub->plan;
	size_t n = sizeof(*pub) + pub->summary_len + pub->metrics_len, k, i;

	n += m->n_nodes * (sizeof(struct node) + 2 * MODEL_ID_MAX / 4) +
	    m->n_links * (sizeof(struct link) + MODEL_ID_MAX / 4) +
	    m->n_demands * sizeof(struct demand);
	if (p == NULL)
		return n;
	n += p->n_routes * sizeof(struct plan_route) +
	    p->n_arcs * sizeof(struct plan_arc);
	for (k = 0; k < p->n_routes; k++) {
		n += p->routes[k].n_paths * sizeof(struct plan_path);
		for (i = 0; i < p->routes[k].n_paths; i++)
			n += p->routes[k].paths[i].n_arcs * sizeof(size_t);
	}
	return n;
}

/*
 * Adds pub to the kept plans with a reference of its own and drops the
 * oldest beyond SERVICE_PLANS_KEPT, or beyond SERVICE_PLANS_BYTES (keeping
 * SERVICE_PLANS_MIN); returns how many it put in out[] (whose references
 * the caller drops after unlocking).  Called under pub_mu.
 */
static size_t
keep(struct service *svc, struct published *pub, struct published **out)
{
	size_t n_out = 0;

	atomic_fetch_add(&pub->refs, 1);
	svc->kept[svc->kept_n++] = pub;
	svc->kept_bytes += pub->bytes;
	while (svc->kept_n > SERVICE_PLANS_KEPT ||
	    (svc->kept_n > SERVICE_PLANS_MIN &&
	    svc->kept_bytes > SERVICE_PLANS_BYTES)) {
		out[n_out++] = svc->kept[0];
		svc->kept_bytes -= svc->kept[0]->bytes;
		svc->kept_n--;
		memmove(svc->kept, svc->kept + 1,
		    svc->kept_n * sizeof(svc->kept[0]));
	}
	return n_out;
}

/* Runs on the solver thread; takes ownership of m, p and sd. */
static void
publish(void *ctx, struct model *m, struct plan *p, struct engine_seed *sd,
    const struct err *e)
{
	struct service *svc = ctx;
	struct published *pub, *old, *dropped[SERVICE_PLANS_KEPT + 1];
	struct seed_box *box, *old_box;
	struct err re = { 0 };
	struct event ev;
	int64_t failed = -1;
	size_t i, n_dropped;

	if (p == NULL) {
		atomic_fetch_add(&svc->stats.solves_failed, 1);
		/* A snapshot that failed (no m) was of the newest revision. */
		if (m != NULL)
			failed = m->revision;
		else {
			pthread_mutex_lock(&svc->db_mu);
			if (db_revision(svc->db, &failed, NULL) != 0)
				failed = -1;
			pthread_mutex_unlock(&svc->db_mu);
		}
		pthread_mutex_lock(&svc->pub_mu);
		svc->st.last_solve_failed = true;
		svc->st.failed_model_revision = failed;
		snprintf(svc->st.last_error, sizeof(svc->st.last_error), "%s",
		    e != NULL ? e->msg : "solve failed");
		pthread_mutex_unlock(&svc->pub_mu);
		model_free(m);
		engine_seed_free(sd);
		return;
	}
	pub = xcalloc(1, sizeof(*pub));
	atomic_init(&pub->refs, 1);
	pub->revision = svc->next_plan_revision++;
	pub->model_revision = m->revision;
	p->revision = pub->revision;
	p->model_revision = m->revision;
	pub->model = m;
	pub->plan = p;
	if (codec_plan_render(m, p, pub->revision, &pub->summary_json,
	    &pub->summary_len, NULL, NULL, NULL, NULL) != 0) {
		/* Our own bug: keep serving the last good plan. */
		log_err("plan rendering failed model_revision=%lld",
		    (long long)m->revision);
		svc->next_plan_revision--;
		published_free(pub);
		engine_seed_free(sd);
		err_set(&re, ERR_INTERNAL, NULL, "plan rendering failed");
		publish(ctx, NULL, NULL, NULL, &re);
		return;
	}
	metrics_render_plan(m, p, pub->revision, &pub->metrics_text,
	    &pub->metrics_len);
	pub->bytes = published_bytes(pub);
	box = xcalloc(1, sizeof(*box));
	atomic_init(&box->refs, 1);
	atomic_fetch_add(&pub->refs, 1);
	box->pub = pub;
	box->sd = sd;

	pthread_mutex_lock(&svc->db_mu);
	if (db_record_plan(svc->db, pub->revision, pub->model_revision,
	    pub->summary_json, (int)svc->conf.plan_history_keep, &re) != 0)
		log_warn("plan history not recorded revision=%lld msg=\"%s\"",
		    (long long)pub->revision, re.msg);
	pthread_mutex_unlock(&svc->db_mu);

	pthread_mutex_lock(&svc->pub_mu);
	old = svc->cur;
	svc->cur = pub;
	old_box = svc->seed;
	svc->seed = box;
	n_dropped = keep(svc, pub, dropped);
	svc->st.last_solve_failed = false;
	svc->st.last_error[0] = '\0';
	pthread_mutex_unlock(&svc->pub_mu);
	service_plan_unref(old);
	for (i = 0; i < n_dropped; i++)
		service_plan_unref(dropped[i]);
	service_seed_unref(old_box);
	stats_solve(&svc->stats, p->solve_ms);
	planwait_published(svc->waits, pub->revision);
	memset(&ev, 0, sizeof(ev));
	ev.kind = EVENT_PLAN;
	ev.revision = pub->revision;
	ev.model_revision = pub->model_revision;
	snprintf(ev.status, sizeof(ev.status), "%s",
	    plan_status_str(p->status));
	ev.max_util = p->max_util;
	events_post(svc->events, &ev);
	log_info("plan published revision=%lld model_revision=%lld status=%s "
	    "max_util=%.6f carried_bps=%.6g unserved_bps=%.6g solve_ms=%.1f",
	    (long long)pub->revision, (long long)pub->model_revision,
	    plan_status_str(p->status), p->max_util, p->carried_bps,
	    p->unserved_bps, p->solve_ms);
}

int
service_start(const struct service_conf *c, struct service **svcp,
    struct err *e)
{
	struct solver_conf sc;
	struct service *svc;
	int64_t last = 0;
	int r;

	*svcp = NULL;
	svc = xcalloc(1, sizeof(*svc));
	svc->conf = *c;
	pthread_mutex_init(&svc->db_mu, NULL);
	pthread_mutex_init(&svc->pub_mu, NULL);
	if ((r = db_open(c->db_path, &svc->db, e)) != 0)
		goto fail;
	if ((r = db_last_plan_revision(svc->db, &last, e)) != 0)
		goto fail;
	svc->next_plan_revision = last + 1;
	sc.db_path = c->db_path;
	sc.debounce_ms = c->debounce_ms;
	sc.time_limit_s = c->solve_time_limit_s;
	if ((r = workers_start(c->workers, c->whatif_queue,
	    &svc->workers)) != 0) {
		err_set(e, r, NULL, "cannot start the worker threads");
		goto fail;
	}
	svc->sweeps = sweeps_new(svc);
	if ((r = planwait_start(c->long_poll_max, 0, &svc->waits)) != 0 ||
	    (r = events_start(c->events_max, c->events_keepalive_s,
	    &svc->events)) != 0) {
		err_set(e, r, NULL, "cannot start the long-poll or event "
		    "threads");
		goto fail;
	}
	if ((r = solver_start(&sc, publish, svc, &svc->solver, e)) != 0)
		goto fail;
	*svcp = svc;
	return 0;
fail:
	events_free(svc->events);
	planwait_free(svc->waits);
	sweeps_free(svc->sweeps);
	workers_stop(svc->workers);
	db_close(svc->db);
	pthread_mutex_destroy(&svc->db_mu);
	pthread_mutex_destroy(&svc->pub_mu);
	free(svc);
	return r;
}

void
service_stop(struct service *svc)
{
	size_t i;

	if (svc == NULL)
		return;
	service_quiesce(svc);
	solver_stop(svc->solver);
	/* The solver thread may have published until solver_stop(). */
	planwait_free(svc->waits);
	events_free(svc->events);
	service_seed_unref(svc->seed);
	service_plan_unref(svc->cur);
	for (i = 0; i < svc->kept_n; i++)
		service_plan_unref(svc->kept[i]);
	db_close(svc->db);
	pthread_mutex_destroy(&svc->db_mu);
	pthread_mutex_destroy(&svc->pub_mu);
	free(svc);
}

void
service_quiesce(struct service *svc)
{
	if (svc->quiesced)
		return;
	svc->quiesced = true;
	sweeps_stop(svc->sweeps);
	workers_stop(svc->workers);
	svc->workers = NULL;
	sweeps_free(svc->sweeps);
	svc->sweeps = NULL;
	planwait_stop(svc->waits);
	events_stop(svc->events);
}

/* ---- writes: commit, then wake the solver ---- */

/* The revision of the calling thread's last write (for the audit log). */
static _Thread_local int64_t last_write_rev;

int64_t
service_write_revision_take(void)
{
	int64_t rev = last_write_rev;

	last_write_rev = 0;
	return rev;
}

static int
wrote(struct service *svc, int r, const int64_t *revp)
{
	struct event ev;

	if (r != 0)
		return r;
	last_write_rev = *revp;
	solver_notify(svc->solver);
	memset(&ev, 0, sizeof(ev));
	ev.kind = EVENT_MODEL;
	ev.model_revision = *revp;
	events_post(svc->events, &ev);
	return 0;
}

int
service_put_topology(struct service *svc, const struct model *topo,
    int64_t *revp, struct err *e)
{
	int r;

	pthread_mutex_lock(&svc->db_mu);
	r = db_put_topology(svc->db, topo, revp, e);
	pthread_mutex_unlock(&svc->db_mu);
	return wrote(svc, r, revp);
}

int
service_put_matrix(struct service *svc, const char *name,
    const struct matrix *mx, int64_t *revp, struct err *e)
{
	int r;

	pthread_mutex_lock(&svc->db_mu);
	r = db_put_matrix(svc->db, name, mx, revp, e);
	pthread_mutex_unlock(&svc->db_mu);
	return wrote(svc, r, revp);
}

int
service_delete_matrix(struct service *svc, const char *name, int64_t *revp,
    struct err *e)
{
	int r;

	pthread_mutex_lock(&svc->db_mu);
	r = db_delete_matrix(svc->db, name, revp, e);
	pthread_mutex_unlock(&svc->db_mu);
	return wrote(svc, r, revp);
}

int
service_put_policy(struct service *svc, const struct policy *p,
    int64_t *revp, struct err *e)
{
	int r;

	pthread_mutex_lock(&svc->db_mu);
	r = db_put_policy(svc->db, p, revp, e);
	pthread_mutex_unlock(&svc->db_mu);
	return wrote(svc, r, revp);
}

int
service_patch_link(struct service *svc, const char *id,
    const struct link_patch *lp, int64_t *revp, struct err *e)
{
	int r;

	pthread_mutex_lock(&svc->db_mu);
	r = db_patch_link(svc->db, id, lp, revp, e);
	pthread_mutex_unlock(&svc->db_mu);
	return wrote(svc, r, revp);
}

int
service_put_network(struct service *svc, const struct model *net,
    const char *matrix, int64_t *revp, struct err *e)
{
	int r;

	pthread_mutex_lock(&svc->db_mu);
	r = db_put_network(svc->db, net, matrix, revp, e);
	pthread_mutex_unlock(&svc->db_mu);
	return wrote(svc, r, revp);
}

/* ---- tokens and the audit log ---- */

int
service_tokens(struct service *svc, struct db_token **tp, size_t *np,
    struct err *e)
{
	int r;

	pthread_mutex_lock(&svc->db_mu);
	r = db_token_list(svc->db, true, tp, np, e);
	pthread_mutex_unlock(&svc->db_mu);
	return r;
}

int
service_audit(struct service *svc, const struct db_audit *a, struct err *e)
{
	int r;

	pthread_mutex_lock(&svc->db_mu);
	r = db_audit_add(svc->db, a, e);
	pthread_mutex_unlock(&svc->db_mu);
	return r;
}

/* ---- reads ---- */

int
service_get_topology(struct service *svc, struct model **mp, struct err *e)
{
	int r;

	pthread_mutex_lock(&svc->db_mu);
	r = db_load_topology(svc->db, mp, e);
	pthread_mutex_unlock(&svc->db_mu);
	return r;
}

int
service_get_matrix(struct service *svc, const char *name,
    struct matrix **mxp, struct err *e)
{
	int r;

	pthread_mutex_lock(&svc->db_mu);
	r = db_load_matrix(svc->db, name, mxp, e);
	pthread_mutex_unlock(&svc->db_mu);
	return r;
}

int
service_list_matrices(struct service *svc, struct db_name **namesp,
    size_t *np, struct err *e)
{
	int r;

	pthread_mutex_lock(&svc->db_mu);
	r = db_list_matrices(svc->db, namesp, np, e);
	pthread_mutex_unlock(&svc->db_mu);
	return r;
}

int
service_revision(struct service *svc, int64_t *revp, struct err *e)
{
	int r;

	pthread_mutex_lock(&svc->db_mu);
	r = db_revision(svc->db, revp, e);
	pthread_mutex_unlock(&svc->db_mu);
	return r;
}

int
service_status(struct service *svc, struct service_status *st,
    struct err *e)
{
	struct published *p;
	int r;

	memset(st, 0, sizeof(*st));
	if ((r = service_revision(svc, &st->model_revision, e)) != 0)
		return r;
	pthread_mutex_lock(&svc->pub_mu);
	st->last_solve_failed = svc->st.last_solve_failed;
	st->failed_model_revision = svc->st.failed_model_revision;
	memcpy(st->last_error, svc->st.last_error, sizeof(st->last_error));
	pthread_mutex_unlock(&svc->pub_mu);
	if ((p = service_plan_ref(svc)) != NULL) {
		st->plan_revision = p->revision;
		st->plan_model_revision = p->model_revision;
		service_plan_unref(p);
	}
	return 0;
}

/* ---- export ---- */

static int
read_file(const char *path, char **textp, size_t *lenp, struct err *e)
{
	struct stat sb;
	char *buf = NULL;
	FILE *f;
	int r = ERR_IO;

	if ((f = fopen(path, "rb")) == NULL)
		return err_set(e, ERR_IO, NULL, "cannot open export: %s",
		    strerror(errno));
	if (fstat(fileno(f), &sb) != 0 || sb.st_size < 0)
		goto out;
	buf = xmalloc((size_t)sb.st_size + 1);
	if (fread(buf, 1, (size_t)sb.st_size, f) != (size_t)sb.st_size)
		goto out;
	buf[sb.st_size] = '\0';
	*textp = buf;
	*lenp = (size_t)sb.st_size;
	buf = NULL;
	r = 0;
out:
	if (r != 0)
		err_set(e, r, NULL, "cannot read export");
	free(buf);
	fclose(f);
	return r;
}

int
service_export_model(struct service *svc, enum export_format format,
    int stage, char **textp, size_t *lenp, struct err *e)
{
	struct published *pub;
	struct solve_opts o;
	struct plan *p = NULL;
	const char *tmpdir;
	char path[4096];
	int fd, r = ERR_INTERNAL;

	*textp = NULL;
	*lenp = 0;
	if ((pub = service_plan_ref(svc)) == NULL)
		return err_set(e, ERR_NOTFOUND, NULL, "no plan published yet");
	if ((tmpdir = getenv("TMPDIR")) == NULL || *tmpdir == '\0')
		tmpdir = "/tmp";
	snprintf(path, sizeof(path), "%s/weft-export-XXXXXX", tmpdir);
	if ((fd = mkstemp(path)) < 0) {
		r = err_set(e, ERR_IO, NULL, "cannot create a temporary file: %s",
		    strerror(errno));
		goto out_noun;
	}
	close(fd);
	solve_opts_default(&o);
	o.time_limit_s = svc->conf.solve_time_limit_s;
	o.export_path = path;
	o.export_stage = stage;
	o.export_format = format;
	/* Re-solving the published snapshot reproduces the stages' LPs. */
	r = engine_solve(pub->model, &o, &p, e);
	/* HTTP threads solve only here: give GLPK's thread state back. */
	engine_thread_done();
	if (r != 0)
		goto out;
	r = read_file(path, textp, lenp, e);
out:
	unlink(path);
out_noun:
	plan_free(p);
	service_plan_unref(pub);
	return r;
}
