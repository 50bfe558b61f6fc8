/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Helpers shared by the engine's unit tests: building models, checking
   that a plan is a consistent routing, a seeded random number source. */
#ifndef WEFT_TESTS_UNIT_ENGINE_ENGINETEST_H
#define WEFT_TESTS_UNIT_ENGINE_ENGINETEST_H

#include <math.h>
#include <stdbool.h>
#include <stdlib.h>

#include <stdio.h>

#include "../../../daemon/engine/engine.h"
#include "../../../daemon/engine/sndlib.h"
#include "../../../daemon/base/err.h"
#include "../../../daemon/base/xalloc.h"

/* tolerance on optima, relative */

static inline void
node(struct model *m, const char *id)
{
	if (model_add_node(m, id, NULL, NULL, "nodes", NULL) != 0)
		abort();
}

static inline void
add_link(struct model *m, const char *id, const char *a, const char *b,
    double cap, double metric, bool up)
{
	if (model_add_link(m, id, a, b, cap, metric, up, "links", NULL) != 0)
		abort();
}

static inline void
demand(struct model *m, const char *s, const char *t, double rate, int prio)
{
	if (model_add_demand(m, s, t, rate, prio, "demands", NULL) != 0)
		abort();
}

/* A reproducible pseudo-random number in [0, 1). */
static inline double
rnd(unsigned long *s)
{
	*s = *s * 6364136223846793005UL + 1442695040888963407UL;
	return (double)(*s >> 11) / 9007199254740992.0;
}

/*
 * A plan is a feasible routing whatever the optimum (the same definition
 * the node-arc tests use): paths run src -> dst over consecutive arcs of
 * up links, rates positive and sorted, carried + unserved = rate, loads
 * are the sums of the paths and within capacity x headroom, totals add
 * up.  Returns the number of violations.
 */
static inline int
check_plan(const struct model *m, const struct plan *p)
{
	const struct demand *d;
	const struct plan_route *rt;
	const struct plan_path *pp;
	const struct link *l;
	double *load, sum, carried = 0, unserved = 0, cost = 0, umax = 0;
	size_t k, i, t, a, at, tail;
	int bad = 0;

	if (p->n_routes != m->n_demands || p->n_arcs != 2 * m->n_links)
		return 1;
	load = xcalloc(p->n_arcs + 1, sizeof(*load));
	for (k = 0; k < m->n_demands; k++) {
		d = &m->demands[k];
		rt = &p->routes[k];
		sum = 0;
		for (i = 0; i < rt->n_paths; i++) {
			pp = &rt->paths[i];
			if (!(pp->rate_bps > 0) || pp->n_arcs == 0)
				bad++;
			if (i > 0 && pp->rate_bps > rt->paths[i - 1].rate_bps)
				bad++;
			at = d->src;
			for (t = 0; t < pp->n_arcs; t++) {
				a = pp->arcs[t];
				if (a >= p->n_arcs || !m->links[a / 2].up) {
					bad++;
					break;
				}
				l = &m->links[a / 2];
				tail = a % 2 == 0 ? l->a : l->b;
				if (tail != at)
					bad++;
				at = a % 2 == 0 ? l->b : l->a;
				load[a] += pp->rate_bps;
			}
			if (at != d->dst)
				bad++;
			sum += pp->rate_bps;
		}
		if (fabs(sum - rt->carried_bps) > 1e-9 * fmax(1, sum))
			bad++;
		if (fabs(rt->carried_bps + rt->unserved_bps - d->rate_bps) >
		    1e-9 * fmax(1, d->rate_bps) || rt->unserved_bps < 0)
			bad++;
		carried += rt->carried_bps;
		unserved += rt->unserved_bps;
	}
	for (a = 0; a < p->n_arcs; a++) {
		l = &m->links[a / 2];
		if (fabs(load[a] - p->arcs[a].load_bps) >
		    1e-9 * fmax(1, load[a]))
			bad++;
		if (load[a] > l->capacity_bps * m->policy.headroom *
		    (1 + 1e-6))
			bad++;
		cost += l->te_metric * load[a];
		if (l->up)
			umax = fmax(umax, load[a] / l->capacity_bps);
	}
	if (fabs(carried - p->carried_bps) > 1e-9 * fmax(1, carried) ||
	    fabs(unserved - p->unserved_bps) > 1e-9 * fmax(1, carried))
		bad++;
	if (fabs(cost - p->total_cost) > 1e-9 * fmax(1, cost) ||
	    fabs(umax - p->max_util) > 1e-9)
		bad++;
	free(load);
	return bad;
}

/* A model from tests/data/sndlib/NAME (run from the project root); NULL
   with a message on failure. */
static inline struct model *
load_sndlib(const char *name)
{
	char path[256], *buf;
	struct model *m = NULL;
	struct err e;
	FILE *f;
	long n;

	snprintf(path, sizeof(path), "tests/data/sndlib/%s", name);
	if ((f = fopen(path, "rb")) == NULL) {
		printf("# cannot open %s\n", path);
		return NULL;
	}
	fseek(f, 0, SEEK_END);
	n = ftell(f);
	fseek(f, 0, SEEK_SET);
	buf = xmalloc((size_t)n + 1);
	if (fread(buf, 1, (size_t)n, f) != (size_t)n)
		n = 0;
	fclose(f);
	err_clear(&e);
	if (sndlib_parse(buf, (size_t)n, &m, &e) != 0)
		printf("# %s: %s: %s\n", path, e.where, e.msg);
	free(buf);
	return m;
}

#endif /* WEFT_TESTS_UNIT_ENGINE_ENGINETEST_H */
