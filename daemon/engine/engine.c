/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The engine's entry points: check a model, solve it, release a thread. */

/*
 * DESIGN
 * engine_solve() checks the model before anything reaches GLPK (GLPK ends
 * the process on invalid calls), then hands it to the formulation the
 * policy names: node-arc (form_arc.c) or path (form_path.c, with a
 * throw-away state unless engine_solve_warm() keeps one).  GLPK keeps one environment per thread;
 * engine_thread_done() frees the calling thread's.
 */

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "engine.h"
#include "form_arc.h"
#include "form_path.h"
#include "form_pot.h"
#include "lp.h"
#include "../base/err.h"
#include "../base/xalloc.h"

static int
cmp_str(const void *x, const void *y)
{
	return strcmp(*(const char *const *)x, *(const char *const *)y);
}

/* Finds a repeated id among n ids (sorted copy); returns it or NULL. */
static const char *
find_dup(const char **ids, size_t n)
{
	size_t i;

	qsort(ids, n, sizeof(*ids), cmp_str);
	for (i = 1; i < n; i++)
		if (strcmp(ids[i - 1], ids[i]) == 0)
			return ids[i];
	return NULL;
}

static int
check_id(const char *id, const char *kind, size_t i, struct err *e)
{
	char where[64];

	snprintf(where, sizeof(where), "%s[%zu].id", kind, i);
	if (id == NULL || id[0] == '\0' || strlen(id) > MODEL_ID_MAX)
		return err_set(e, ERR_INVALID, where,
		    "id must be 1 to %d bytes", MODEL_ID_MAX);
	return 0;
}

static int
check_nodes_links(const struct model *m, struct err *e)
{
	const struct link *l;
	const char **ids, *dup;
	char where[64];
	size_t i;
	int r;

	for (i = 0; i < m->n_nodes; i++)
		if ((r = check_id(m->nodes[i].id, "nodes", i, e)) != 0)
			return r;
	for (i = 0; i < m->n_links; i++) {
		l = &m->links[i];
		if ((r = check_id(l->id, "links", i, e)) != 0)
			return r;
		snprintf(where, sizeof(where), "links[%zu].a", i);
		if (l->a >= m->n_nodes)
			return err_set(e, ERR_INVALID, where,
			    "node index %zu out of range", l->a);
		snprintf(where, sizeof(where), "links[%zu].b", i);
		if (l->b >= m->n_nodes)
			return err_set(e, ERR_INVALID, where,
			    "node index %zu out of range", l->b);
		if (l->a == l->b)
			return err_set(e, ERR_INVALID, where,
			    "a link needs two different ends");
		snprintf(where, sizeof(where), "links[%zu].capacity_bps", i);
		if (!isfinite(l->capacity_bps) || l->capacity_bps <= 0 ||
		    l->capacity_bps > MODEL_RATE_MAX)
			return err_set(e, ERR_INVALID, where,
			    "capacity must be finite, in (0, %g] bit/s",
			    MODEL_RATE_MAX);
		snprintf(where, sizeof(where), "links[%zu].te_metric", i);
		if (!isfinite(l->te_metric) || l->te_metric <= 0 ||
		    l->te_metric > MODEL_METRIC_MAX)
			return err_set(e, ERR_INVALID, where,
			    "TE metric must be finite, in (0, %g]",
			    MODEL_METRIC_MAX);
	}

	ids = xcalloc(m->n_nodes + m->n_links, sizeof(*ids));
	for (i = 0; i < m->n_nodes; i++)
		ids[i] = m->nodes[i].id;
	dup = find_dup(ids, m->n_nodes);
	if (dup != NULL) {
		r = err_set(e, ERR_INVALID, "nodes",
		    "duplicate node id \"%s\"", dup);
		free(ids);
		return r;
	}
	for (i = 0; i < m->n_links; i++)
		ids[i] = m->links[i].id;
	dup = find_dup(ids, m->n_links);
	if (dup != NULL) {
		r = err_set(e, ERR_INVALID, "links",
		    "duplicate link id \"%s\"", dup);
		free(ids);
		return r;
	}
	free(ids);
	return 0;
}

int
engine_check(const struct model *m, struct err *e)
{
	const struct demand *d;
	const struct policy *pol = &m->policy;
	char where[64];
	size_t i;
	int r;

	if ((r = check_nodes_links(m, e)) != 0)
		return r;
	for (i = 0; i < m->n_demands; i++) {
		d = &m->demands[i];
		snprintf(where, sizeof(where), "demands[%zu].src", i);
		if (d->src >= m->n_nodes)
			return err_set(e, ERR_INVALID, where,
			    "node index %zu out of range", d->src);
		snprintf(where, sizeof(where), "demands[%zu].dst", i);
		if (d->dst >= m->n_nodes)
			return err_set(e, ERR_INVALID, where,
			    "node index %zu out of range", d->dst);
		if (d->src == d->dst)
			return err_set(e, ERR_INVALID, where,
			    "a demand needs two different ends");
		snprintf(where, sizeof(where), "demands[%zu].rate_bps", i);
		if (!isfinite(d->rate_bps) || d->rate_bps < 0 ||
		    d->rate_bps > MODEL_RATE_MAX)
			return err_set(e, ERR_INVALID, where,
			    "rate must be finite, in [0, %g] bit/s",
			    MODEL_RATE_MAX);
		snprintf(where, sizeof(where), "demands[%zu].priority", i);
		if (d->priority < 0 || d->priority > MODEL_PRIO_MAX)
			return err_set(e, ERR_INVALID, where,
			    "priority must be in 0..%d", MODEL_PRIO_MAX);
	}
	if (pol->objective != OBJ_COST && pol->objective != OBJ_BALANCE &&
	    pol->objective != OBJ_CONGESTION)
		return err_set(e, ERR_INVALID, "policy.objective",
		    "unknown objective %d", (int)pol->objective);
	if (!(pol->headroom > 0 && pol->headroom <= 1))
		return err_set(e, ERR_INVALID, "policy.headroom",
		    "headroom must be in (0, 1]");
	if (!(pol->balance_tol >= 0 && pol->balance_tol <= 0.1))
		return err_set(e, ERR_INVALID, "policy.balance_tol",
		    "balance tolerance must be in [0, 0.1]");
	if (pol->formulation != FORM_ARC && pol->formulation != FORM_PATH &&
	    pol->formulation != FORM_POT)
		return err_set(e, ERR_INVALID, "policy.formulation",
		    "unknown formulation %d", (int)pol->formulation);
	if (!(pol->gap_target >= 0 && pol->gap_target <= 0.5))
		return err_set(e, ERR_INVALID, "policy.gap_target",
		    "gap target must be in [0, 0.5]");
	if (!(pol->keep_paths_tol >= 0 && pol->keep_paths_tol <= 0.5))
		return err_set(e, ERR_INVALID, "policy.keep_paths_tol",
		    "keep-paths tolerance must be in [0, 0.5]");
	return 0;
}

void
solve_opts_default(struct solve_opts *o)
{
	memset(o, 0, sizeof(*o));
	o->time_limit_s = 0;
	o->verbose = false;
	o->export_path = NULL;
	o->export_stage = -1;
	o->export_format = EXPORT_LP;
	o->cancel = NULL;
}

bool
solve_cancelled(const struct solve_opts *o)
{
	return o->cancel != NULL && atomic_load(o->cancel);
}

/* Fills the summary fields the node-arc formulation leaves unset. */
static void
arc_summary(struct plan *p)
{
	size_t i;

	p->formulation = FORM_ARC;
	p->iterations = 0;
	for (i = 0; i < p->n_stages; i++)
		p->iterations += p->stages[i].iterations;
	p->gap = 0;
	p->bound = p->n_stages > 0 ? p->stages[p->n_stages - 1].objective :
	    0;
	p->cg_rounds = 0;
	p->warm = false;
	p->moved_bps = -1;
}

int
engine_solve_warm(struct engine_state **stp, const struct model *m,
    const struct solve_opts *o, struct plan **planp, struct err *e)
{
	struct solve_opts def;
	int r;

	*planp = NULL;
	if (o == NULL) {
		solve_opts_default(&def);
		o = &def;
	}
	if ((r = engine_check(m, e)) != 0)
		return r;
	/*
	 * XXX The path formulation has no congestion stage yet: that
	 * objective is solved by the node-arc formulation, and the plan's
	 * formulation field says so.
	 */
	/*
	 * The potential method plans balance when the matrix fits; anything
	 * else it leaves to the path formulation's exact stages.
	 */
	if (m->policy.formulation == FORM_POT && o->export_path == NULL &&
	    m->policy.objective == OBJ_BALANCE) {
		if ((r = form_pot_solve(form_path_pot_slot(stp), m, o, planp,
		    e)) != POT_NO_FIT)
			return r;
	}
	if (m->policy.formulation != FORM_ARC && o->export_path == NULL &&
	    m->policy.objective != OBJ_CONGESTION)
		return form_path_solve(stp, m, o, planp, e);
	/*
	 * An export writes the node-arc LP whatever the formulation: the
	 * path master is not a model another solver could take alone.  Such
	 * a one-off solve leaves a kept state alone.
	 */
	if (m->policy.formulation == FORM_ARC) {
		engine_state_free(*stp);
		*stp = NULL;
	}
	if ((r = form_arc_solve(m, o, planp, e)) != 0)
		return r;
	arc_summary(*planp);
	return 0;
}

int
engine_solve(const struct model *m, const struct solve_opts *o,
    struct plan **planp, struct err *e)
{
	struct engine_state *st = NULL;
	int r;

	r = engine_solve_warm(&st, m, o, planp, e);
	engine_state_free(st);
	return r;
}

void
engine_state_free(struct engine_state *st)
{
	form_path_state_free(st);
}

void
engine_thread_done(void)
{
	lp_thread_done();
}
