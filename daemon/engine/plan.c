/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Finishing plans from their routes, freeing them, naming their status. */
#include <math.h>
#include <stdlib.h>

#include "plan.h"
#include "congestion.h"
#include "../base/xalloc.h"

const char *
plan_status_str(enum plan_status s)
{
	switch (s) {
	case PLAN_OPTIMAL:
		return "optimal";
	case PLAN_PARTIAL:
		return "partial";
	case PLAN_EMPTY:
		return "empty";
	}
	return "unknown";
}

void
plan_free(struct plan *p)
{
	size_t i, j;

	if (p == NULL)
		return;
	for (i = 0; i < p->n_routes; i++) {
		for (j = 0; j < p->routes[i].n_paths; j++)
			free(p->routes[i].paths[j].arcs);
		free(p->routes[i].paths);
	}
	free(p->routes);
	free(p->arcs);
	free(p->saturated_links);
	free(p);
}

void
plan_finish(const struct model *m, struct plan *p, bool empty,
    const double *price, const bool *sat)
{
	const struct link *l;
	struct plan_route *rt;
	struct plan_arc *pa;
	size_t k, i, t, a;
	double h = m->policy.headroom, d;

	for (k = 0; k < m->n_demands; k++) {
		rt = &p->routes[k];
		/*
		 * A carried rate short of the demand by rounding dust only
		 * (the LP's tolerances, the decomposition's sums) is the whole
		 * demand: scale its paths up, so a fully carried demand
		 * reports exactly zero unserved.  Dust is relative to the
		 * demand, or below what the LP resolves at all (its bound
		 * tolerance is 1e-10 LP units).
		 */
		d = m->demands[k].rate_bps - rt->carried_bps;
		if (rt->carried_bps > 0 && d > 0 &&
		    (d <= PLAN_SERVED_REL * m->demands[k].rate_bps ||
		    d <= PLAN_LP_RESOLUTION * p->scale_bps)) {
			for (i = 0; i < rt->n_paths; i++)
				rt->paths[i].rate_bps *=
				    m->demands[k].rate_bps / rt->carried_bps;
			rt->carried_bps = m->demands[k].rate_bps;
		}
		for (i = 0; i < rt->n_paths; i++)
			for (t = 0; t < rt->paths[i].n_arcs; t++)
				p->arcs[rt->paths[i].arcs[t]].load_bps +=
				    rt->paths[i].rate_bps;
		rt->unserved_bps = fmax(0,
		    m->demands[k].rate_bps - rt->carried_bps);
		p->demand_bps += m->demands[k].rate_bps;
		p->carried_bps += rt->carried_bps;
		p->unserved_bps += rt->unserved_bps;
		p->unserved_by_prio_bps[m->demands[k].priority] +=
		    rt->unserved_bps;
	}
	if (empty)
		p->status = PLAN_EMPTY;
	else if (p->unserved_bps <= PLAN_SERVED_REL * p->demand_bps)
		p->status = PLAN_OPTIMAL;
	else
		p->status = PLAN_PARTIAL;
	for (a = 0; a < p->n_arcs; a++) {
		l = &m->links[a / 2];
		pa = &p->arcs[a];
		pa->capacity_bps = l->up ? l->capacity_bps : 0;
		pa->util = l->up ? pa->load_bps / l->capacity_bps : 0;
		pa->headroom_bps = pa->capacity_bps * h - pa->load_bps;
		if (l->up) {
			p->max_util = fmax(p->max_util, pa->util);
			p->congestion += congestion_phi(pa->load_bps,
			    l->capacity_bps);
		}
		p->total_cost += l->te_metric * pa->load_bps;
		/* Prices only explain traffic that was left unserved. */
		if (p->status == PLAN_PARTIAL && price != NULL) {
			pa->shadow_price = price[a];
			pa->saturated = sat[a];
		}
	}
	for (i = 0; i < m->n_links; i++)
		if (p->arcs[2 * i].saturated || p->arcs[2 * i + 1].saturated)
			p->n_saturated++;
	p->saturated_links = xcalloc(p->n_saturated,
	    sizeof(*p->saturated_links));
	p->n_saturated = 0;
	for (i = 0; i < m->n_links; i++)
		if (p->arcs[2 * i].saturated || p->arcs[2 * i + 1].saturated)
			p->saturated_links[p->n_saturated++] = i;
}
