/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The solver thread: coalesces changes, snapshots the model, solves it. */

/*
 * DESIGN
 * One thread.  Writers call solver_notify() after their transaction
 * commits; that sets a pending flag and signals.  The thread waits for the
 * flag, then for debounce_ms without a further notify (capped at ten
 * debounce periods, so a steady stream of writes cannot starve the plan),
 * then reads one consistent snapshot of the model from its own SQLite
 * connection, solves it and hands model and plan to the publish callback.
 * A notify that arrives during a solve leaves the flag set, so the next
 * round picks up the newer model: bursts become one re-solve, and no
 * change is ever left unplanned.  A snapshot whose revision was already
 * solved is skipped.
 *
 * The thread keeps one engine state across revisions: with the path
 * formulation, a revision that changes only link states, capacities,
 * rates or the policy is re-solved from the previous master and basis
 * (engine_solve_warm()).  The state lives and dies on this thread, since
 * it holds GLPK objects.
 */

#include <errno.h>
#include <pthread.h>
#include <stdbool.h>
#include <stdlib.h>
#include <time.h>

#include "solver_thread.h"
#include "base/err.h"
#include "base/log.h"
#include "base/xalloc.h"
#include "engine/engine.h"
#include "../storage/db.h"

struct solver {
	pthread_t thread;
	pthread_mutex_t mu;
	pthread_cond_t cv;
	bool pending;		/* a change not yet picked up; under mu */
	bool stopping;		/* under mu */
	uint64_t notifies;	/* count of notifies, under mu */
	struct db *db;		/* owned, used only by the thread */
	struct solver_conf conf;
	solver_publish_fn *fn;
	void *ctx;
	int64_t solved_revision;	/* last model revision solved, -1 none */
	struct engine_state *state;	/* owned, used only by the thread */
};

static void
deadline_in(struct timespec *ts, long ms)
{
	clock_gettime(CLOCK_REALTIME, ts);
	ts->tv_sec += ms / 1000;
	ts->tv_nsec += (ms % 1000) * 1000000L;
	if (ts->tv_nsec >= 1000000000L) {
		ts->tv_sec++;
		ts->tv_nsec -= 1000000000L;
	}
}

/* Waits for a change and for the debounce quiet time; false on stop. */
static bool
wait_change(struct solver *s)
{
	struct timespec ts;
	uint64_t seen;
	int rounds;

	pthread_mutex_lock(&s->mu);
	while (!s->pending && !s->stopping)
		pthread_cond_wait(&s->cv, &s->mu);
	for (rounds = 0; rounds < 10 && !s->stopping && s->conf.debounce_ms > 0;
	    rounds++) {
		seen = s->notifies;
		deadline_in(&ts, s->conf.debounce_ms);
		while (!s->stopping && s->notifies == seen &&
		    pthread_cond_timedwait(&s->cv, &s->mu, &ts) != ETIMEDOUT)
			;
		if (s->notifies == seen)
			break;	/* quiet for a whole period */
	}
	s->pending = false;
	pthread_mutex_unlock(&s->mu);
	return !s->stopping;
}

static void
solve_once(struct solver *s)
{
	struct solve_opts o;
	struct model *m = NULL;
	struct plan *p = NULL;
	struct err e = { 0 };
	int r;

	if ((r = db_load_model(s->db, &m, &e)) != 0) {
		log_err("snapshot failed code=%s where=%s msg=\"%s\"",
		    err_word(r), e.where, e.msg);
		s->fn(s->ctx, NULL, NULL, NULL, &e);
		return;
	}
	if (m->revision == s->solved_revision) {
		model_free(m);
		return;
	}
	solve_opts_default(&o);
	o.time_limit_s = s->conf.time_limit_s;
	log_info("solve started model_revision=%lld nodes=%zu links=%zu "
	    "demands=%zu unplaced=%zu", (long long)m->revision, m->n_nodes,
	    m->n_links, m->n_demands, m->n_unplaced);
	if (m->policy.formulation == FORM_PATH)
		r = engine_solve_warm(&s->state, m, &o, &p, &e);
	else {
		engine_state_free(s->state);
		s->state = NULL;
		r = engine_solve(m, &o, &p, &e);
	}
	if (r != 0) {
		log_err("solve failed model_revision=%lld code=%s where=%s "
		    "msg=\"%s\"", (long long)m->revision, err_word(r), e.where,
		    e.msg);
		if (e.code == 0)
			err_set(&e, r, NULL, "%s", err_str(r));
		s->solved_revision = m->revision;
		s->fn(s->ctx, m, NULL, NULL, &e);
		return;
	}
	log_info("plan solved model_revision=%lld formulation=%s status=%s "
	    "ms=%.1f iterations=%d cg_rounds=%d columns=%zu gap=%.3g warm=%s "
	    "moved_bps=%.6g", (long long)m->revision,
	    p->formulation == FORM_PATH ? "path" : "arc",
	    plan_status_str(p->status), p->solve_ms, p->iterations,
	    p->cg_rounds, p->columns, p->gap, p->warm ? "yes" : "no",
	    p->moved_bps);
	s->solved_revision = m->revision;
	/* What-ifs and sweeps start from a copy of the kept master. */
	s->fn(s->ctx, m, p, p->formulation == FORM_PATH ?
	    engine_seed_take(s->state) : NULL, NULL);
}

static void *
run(void *arg)
{
	struct solver *s = arg;

	while (wait_change(s))
		solve_once(s);
	engine_state_free(s->state);
	s->state = NULL;
	engine_thread_done();
	return NULL;
}

int
solver_start(const struct solver_conf *c, solver_publish_fn *fn, void *ctx,
    struct solver **sp, struct err *e)
{
	struct solver *s;
	int r;

	*sp = NULL;
	s = xcalloc(1, sizeof(*s));
	s->conf = *c;
	s->fn = fn;
	s->ctx = ctx;
	s->solved_revision = -1;
	s->pending = true;	/* plan what is stored at start-up */
	pthread_mutex_init(&s->mu, NULL);
	pthread_cond_init(&s->cv, NULL);
	if ((r = db_open(c->db_path, &s->db, e)) != 0)
		goto fail;
	if (pthread_create(&s->thread, NULL, run, s) != 0) {
		r = err_set(e, ERR_INTERNAL, NULL, "cannot start solver thread");
		goto fail;
	}
	*sp = s;
	return 0;
fail:
	db_close(s->db);
	pthread_cond_destroy(&s->cv);
	pthread_mutex_destroy(&s->mu);
	free(s);
	return r;
}

void
solver_notify(struct solver *s)
{
	pthread_mutex_lock(&s->mu);
	s->pending = true;
	s->notifies++;
	pthread_cond_signal(&s->cv);
	pthread_mutex_unlock(&s->mu);
}

void
solver_stop(struct solver *s)
{
	if (s == NULL)
		return;
	pthread_mutex_lock(&s->mu);
	s->stopping = true;
	pthread_cond_signal(&s->cv);
	pthread_mutex_unlock(&s->mu);
	pthread_join(s->thread, NULL);
	db_close(s->db);
	pthread_cond_destroy(&s->cv);
	pthread_mutex_destroy(&s->mu);
	free(s);
}
