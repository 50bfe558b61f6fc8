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
 * solved is skipped; one that cannot be read is tried again after a wait
 * that grows while the failures go on (retry_later()).  A failed solve is
 * not tried again: the same model fails the same way, and the next change
 * plans anew.
 *
 * The thread keeps one engine state across revisions: with the path
 * formulation, a revision that changes only link states, capacities,
 * rates or the policy is re-solved from the previous master and basis
 * (engine_solve_warm()).  The state lives and dies on this thread, since
 * it holds GLPK objects.
 *
 * Stopping cancels the solve in progress (the engine checks the flag
 * between LP calls) and publishes nothing more; solver_stop() waits a
 * bounded time for it, then leaves a thread stuck in one simplex call
 * behind, so a stop never waits for a long solve.
 */

#include <errno.h>
#include <pthread.h>
#include <stdatomic.h>
#include <stdbool.h>
#include <stdlib.h>
#include <time.h>

#include "solver_thread.h"
#include "base/clock.h"
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
	long retry_ms;		/* the last wait after a failed snapshot, 0
				   after a good one; the thread's only */
	atomic_bool cancel;	/* set by solver_stop(): the solve running
				   ends at its next LP call */
	double engine_ms;	/* clock_ms() when the running solve entered
				   the engine, 0 outside it; under mu */
};

#define SOLVER_RETRY_MIN_MS	250	/* first wait after a failed snapshot */
#define SOLVER_RETRY_MAX_MS	30000	/* the longest, while failures go on */
#define SOLVER_STOP_WAIT_MS	5000	/* how long solver_stop() waits for a
					   cancelled solve to return */

/* Waits for a change and for the debounce quiet time; false on stop. */
static bool
wait_change(struct solver *s)
{
	struct timespec ts;
	uint64_t seen;
	int rounds;
	bool go;

	pthread_mutex_lock(&s->mu);
	while (!s->pending && !s->stopping)
		pthread_cond_wait(&s->cv, &s->mu);
	for (rounds = 0; rounds < 10 && !s->stopping && s->conf.debounce_ms > 0;
	    rounds++) {
		seen = s->notifies;
		clock_deadline(&ts, s->conf.debounce_ms);
		while (!s->stopping && s->notifies == seen &&
		    pthread_cond_timedwait(&s->cv, &s->mu, &ts) != ETIMEDOUT)
			;
		if (s->notifies == seen)
			break;	/* quiet for a whole period */
	}
	s->pending = false;
	go = !s->stopping;	/* read under mu: solver_stop() writes it */
	pthread_mutex_unlock(&s->mu);
	return go;
}

/*
 * After a failed snapshot (a database that cannot be read for now):
 * waits retry_ms, doubling from SOLVER_RETRY_MIN_MS up to
 * SOLVER_RETRY_MAX_MS while the failures go on, or until a change or the
 * stop comes, then marks a change pending.  Without it the revision that
 * could not be read would stay unplanned until the next write.
 */
static void
retry_later(struct solver *s)
{
	struct timespec ts;
	uint64_t seen;

	s->retry_ms = s->retry_ms == 0 ? SOLVER_RETRY_MIN_MS :
	    s->retry_ms >= SOLVER_RETRY_MAX_MS / 2 ? SOLVER_RETRY_MAX_MS :
	    s->retry_ms * 2;
	pthread_mutex_lock(&s->mu);
	seen = s->notifies;
	clock_deadline(&ts, s->retry_ms);
	while (!s->stopping && s->notifies == seen &&
	    pthread_cond_timedwait(&s->cv, &s->mu, &ts) != ETIMEDOUT)
		;
	s->pending = true;
	pthread_mutex_unlock(&s->mu);
}

/* Marks the thread inside the engine or out of it (see solver_stop()). */
static void
in_engine(struct solver *s, bool in)
{
	pthread_mutex_lock(&s->mu);
	s->engine_ms = in ? clock_ms() : 0;
	pthread_mutex_unlock(&s->mu);
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
		retry_later(s);
		return;
	}
	s->retry_ms = 0;
	if (m->revision == s->solved_revision) {
		model_free(m);
		return;
	}
	solve_opts_default(&o);
	o.time_limit_s = s->conf.time_limit_s;
	o.cancel = &s->cancel;
	in_engine(s, true);
	log_info("solve started model_revision=%lld nodes=%zu links=%zu "
	    "demands=%zu unplaced=%zu", (long long)m->revision, m->n_nodes,
	    m->n_links, m->n_demands, m->n_unplaced);
	if (m->policy.formulation != FORM_ARC)
		r = engine_solve_warm(&s->state, m, &o, &p, &e);
	else {
		engine_state_free(s->state);
		s->state = NULL;
		r = engine_solve(m, &o, &p, &e);
	}
	in_engine(s, false);
	if (solve_cancelled(&o)) {
		/* Stopping: nothing more is published (see solver_stop()). */
		log_info("solve cancelled model_revision=%lld",
		    (long long)m->revision);
		model_free(m);
		plan_free(p);
		return;
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
	    formulation_word(p->formulation),
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

double
solver_busy_s(struct solver *s)
{
	double t;

	pthread_mutex_lock(&s->mu);
	t = s->engine_ms > 0 ? (clock_ms() - s->engine_ms) / 1e3 : 0;
	pthread_mutex_unlock(&s->mu);
	return t;
}

/*
 * The engine looks at the cancel flag between LP calls, so a cancelled
 * solve returns within one simplex call; GLPK cannot be interrupted inside
 * one.  A thread still inside the engine after SOLVER_STOP_WAIT_MS is left
 * behind: it touches neither the database nor the publish callback any
 * more (solve_once() checks the flag first), so its connection is closed
 * here, and s stays allocated for the thread until the process exits.
 */
void
solver_stop(struct solver *s)
{
	struct timespec ts;
	bool left = false;
	double busy = 0;

	if (s == NULL)
		return;
	pthread_mutex_lock(&s->mu);
	s->stopping = true;
	atomic_store(&s->cancel, true);
	pthread_cond_signal(&s->cv);
	pthread_mutex_unlock(&s->mu);
	clock_deadline(&ts, SOLVER_STOP_WAIT_MS);
	if (pthread_timedjoin_np(s->thread, NULL, &ts) != 0) {
		pthread_mutex_lock(&s->mu);
		if (s->engine_ms > 0) {
			left = true;
			busy = (clock_ms() - s->engine_ms) / 1e3;
		}
		pthread_mutex_unlock(&s->mu);
		if (left) {
			log_warn("solver left inside a simplex call busy_s=%.1f",
			    busy);
			pthread_detach(s->thread);
			db_close(s->db);
			return;
		}
		/* Outside the engine: it is about to see the stop. */
		pthread_join(s->thread, NULL);
	}
	db_close(s->db);
	pthread_cond_destroy(&s->cv);
	pthread_mutex_destroy(&s->mu);
	free(s);
}
