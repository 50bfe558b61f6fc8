/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Seeds: a kept master copied out of one thread, rebuilt on another. */

/*
 * DESIGN
 * A what-if or a sweep scenario should start where the live plan ended:
 * the solver thread's master, its column pool and its optimal basis.  That
 * state holds a GLPK problem, which belongs to the solver thread (GLPK's
 * environment is thread-local), so it cannot be lent out.  A seed is the
 * same state in plain memory: every array of struct engine_state copied,
 * and the master as an lp_snap (rows, columns, matrix, bounds, basis).
 * It is immutable once taken, so any number of threads may read it at
 * once, and any thread may free it.  engine_state_from_seed() rebuilds a
 * state on the calling thread; a warm solve from it is a warm solve from
 * the live plan: the same basis, the same pool, the same previous flows
 * (so moved_bps counts traffic moved away from the live plan) and the
 * same record of the last balance plan (so a scenario that only takes
 * away may take the shortcut of form_path.c).
 */

#include <stdlib.h>
#include <string.h>

#include "engine.h"
#include "form_path.h"
#include "form_path_int.h"
#include "lp.h"
#include "../base/xalloc.h"

struct engine_seed {
	struct engine_state *st;	/* owned, lp NULL */
	struct lp_snap *snap;		/* owned */
};

/* A copy of the first n elements of size sz at p, room for cap. */
static void *
dup_n(const void *p, size_t n, size_t cap, size_t sz)
{
	void *q;

	if (cap < n)
		cap = n;
	q = xcalloc(cap + 1, sz);
	if (n > 0 && p != NULL)
		memcpy(q, p, n * sz);
	return q;
}

#define DUP(field, n, cap)	(c->field = dup_n(st->field, (n), (cap), \
				    sizeof(*st->field)))

/* A deep copy of st without its LP and per-solve pointers. */
static struct engine_state *
state_copy(const struct engine_state *st)
{
	struct engine_state *c = xcalloc(1, sizeof(*c));
	size_t i;

	*c = *st;
	c->lp = NULL;
	c->pot = NULL;		/* the potential method's flows stay behind */
	c->m = NULL;
	c->o = NULL;
	c->p = NULL;
	c->price = NULL;
	c->sat = NULL;
	c->node_id = xcalloc(st->n + 1, sizeof(*c->node_id));
	for (i = 0; i < st->n; i++)
		c->node_id[i] = xstrdup(st->node_id[i]);
	c->link_id = xcalloc(st->n_links + 1, sizeof(*c->link_id));
	for (i = 0; i < st->n_links; i++)
		c->link_id[i] = xstrdup(st->link_id[i]);
	DUP(link_metric, st->n_links, 0);
	DUP(tail, st->n_arcs, 0);
	DUP(head, st->n_arcs, 0);
	DUP(metric, st->n_arcs, 0);
	DUP(out_start, st->n + 1, 0);
	DUP(out_arc, st->n_arcs, 0);
	DUP(dsrc, st->n_dem, 0);
	DUP(ddst, st->n_dem, 0);
	DUP(dprio, st->n_dem, 0);
	DUP(src_node, st->n, 0);
	DUP(src_start, st->n + 1, 0);
	DUP(src_dem, st->n_dem, 0);
	DUP(up, st->n_links, 0);
	DUP(cap_lp, st->n_arcs, 0);
	DUP(d_lp, st->n_dem, 0);
	DUP(u_hi, st->n_dem, 0);
	DUP(cols, st->n_cols, st->cap_cols);
	DUP(parcs, st->n_parcs, st->cap_parcs);
	DUP(first, st->n_dem, 0);
	DUP(prev_x, st->has_prev ? st->n_prev : 0, 0);
	/* Scratch: contents do not matter between solves. */
	c->pi = xcalloc(st->n_dem + 1, sizeof(*c->pi));
	c->lam = xcalloc(st->n_arcs + 1, sizeof(*c->lam));
	c->w = xcalloc(st->n_arcs + 1, sizeof(*c->w));
	c->dist = xcalloc(st->n + 1, sizeof(*c->dist));
	c->via = xcalloc(st->n + 1, sizeof(*c->via));
	c->sink_mark = xcalloc(st->n + 1, sizeof(*c->sink_mark));
	c->mark = 0;
	c->h.node = xcalloc(st->n + 1, sizeof(*c->h.node));
	c->h.at = xcalloc(st->n + 1, sizeof(*c->h.at));
	c->h.n = 0;
	c->h.dist = NULL;
	return c;
}

struct engine_seed *
engine_seed_take(const struct engine_state *st)
{
	struct engine_seed *sd;

	if (st == NULL || st->lp == NULL)
		return NULL;
	sd = xcalloc(1, sizeof(*sd));
	sd->st = state_copy(st);
	sd->snap = lp_snap_take(st->lp);
	return sd;
}

void
engine_seed_free(struct engine_seed *sd)
{
	if (sd == NULL)
		return;
	/* No LP inside: any thread may free it. */
	form_path_state_free(sd->st);
	lp_snap_free(sd->snap);
	free(sd);
}

struct engine_state *
engine_state_from_seed(const struct engine_seed *sd)
{
	struct engine_state *st;

	if (sd == NULL)
		return NULL;
	st = state_copy(sd->st);
	st->lp = lp_snap_build(sd->snap);
	return st;
}
