/* SPDX-License-Identifier: GPL-3.0-or-later */
/* What changed between two plans: demands whose paths moved, and how much. */

/*
 * DESIGN
 * Demands are matched by sorting each model's demand indices by (source
 * id, sink id, priority, index): equal keys then sit together in index
 * order, which gives each its occurrence number, and a merge of the two
 * sorted lists pairs them.  Per matched pair the paths are compared
 * directly, link id by link id; a demand has few paths, so the quadratic
 * pairing of old with new paths costs little.  Sorting is O(K log K)
 * string comparisons per model.
 */

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "plandiff.h"
#include "model.h"
#include "plan.h"
#include "../base/err.h"
#include "../base/xalloc.h"

struct key {
	const struct model *m;
	size_t k;		/* demand index */
	size_t occ;		/* occurrence, filled after sorting */
};

static int
cmp_ends(const struct key *a, const struct key *b)
{
	const struct demand *da = &a->m->demands[a->k];
	const struct demand *db = &b->m->demands[b->k];
	int c;

	if ((c = strcmp(a->m->nodes[da->src].id, b->m->nodes[db->src].id)) != 0)
		return c;
	if ((c = strcmp(a->m->nodes[da->dst].id, b->m->nodes[db->dst].id)) != 0)
		return c;
	return (da->priority > db->priority) - (da->priority < db->priority);
}

static int
cmp_key(const void *x, const void *y)
{
	const struct key *a = x, *b = y;
	int c;

	if ((c = cmp_ends(a, b)) != 0)
		return c;
	return (a->k > b->k) - (a->k < b->k);
}

/* Keys of m's demands, sorted, with occurrences. */
static struct key *
keys(const struct model *m)
{
	struct key *ks;
	size_t i;

	ks = xcalloc(m->n_demands + 1, sizeof(*ks));
	for (i = 0; i < m->n_demands; i++) {
		ks[i].m = m;
		ks[i].k = i;
	}
	qsort(ks, m->n_demands, sizeof(*ks), cmp_key);
	for (i = 1; i < m->n_demands; i++)
		if (cmp_ends(&ks[i - 1], &ks[i]) == 0)
			ks[i].occ = ks[i - 1].occ + 1;
	return ks;
}

static int
fits(const struct model *m, const struct plan *p, const char *which,
    struct err *e)
{
	size_t k, i, a;

	if (p->n_routes != m->n_demands || p->n_arcs != 2 * m->n_links)
		return err_set(e, ERR_INVALID, which, "plan does not fit its "
		    "model");
	for (k = 0; k < p->n_routes; k++)
		for (i = 0; i < p->routes[k].n_paths; i++)
			for (a = 0; a < p->routes[k].paths[i].n_arcs; a++)
				if (p->routes[k].paths[i].arcs[a] >= p->n_arcs)
					return err_set(e, ERR_INVALID, which,
					    "route %zu has an arc out of "
					    "range", k);
	return 0;
}

/* Same link-id sequence? */
static bool
same_path(const struct model *ma, const struct plan_path *a,
    const struct model *mb, const struct plan_path *b)
{
	size_t i;

	if (a->n_arcs != b->n_arcs)
		return false;
	for (i = 0; i < a->n_arcs; i++)
		if (strcmp(ma->links[a->arcs[i] / 2].id,
		    mb->links[b->arcs[i] / 2].id) != 0)
			return false;
	return true;
}

/* Half the L1 distance between the two routes' per-path rate vectors. */
static double
moved(const struct model *om, const struct plan_route *o,
    const struct model *nm, const struct plan_route *n)
{
	double sum = 0;
	size_t i, j;
	bool found;

	for (i = 0; i < o->n_paths; i++) {
		found = false;
		for (j = 0; j < n->n_paths && !found; j++) {
			if (same_path(om, &o->paths[i], nm, &n->paths[j])) {
				sum += fabs(o->paths[i].rate_bps -
				    n->paths[j].rate_bps);
				found = true;
			}
		}
		if (!found)
			sum += fabs(o->paths[i].rate_bps);
	}
	for (j = 0; j < n->n_paths; j++) {
		found = false;
		for (i = 0; i < o->n_paths && !found; i++)
			found = same_path(om, &o->paths[i], nm, &n->paths[j]);
		if (!found)
			sum += fabs(n->paths[j].rate_bps);
	}
	return sum / 2;
}

static void
push(struct plandiff *d, size_t *capp, enum plandiff_kind kind, long ok,
    long nk, size_t occ, double mv)
{
	struct plandiff_demand *pd;

	if (d->n_demands == *capp) {
		*capp = *capp == 0 ? 16 : 2 * *capp;
		d->demands = xreallocarray(d->demands, *capp,
		    sizeof(*d->demands));
	}
	pd = &d->demands[d->n_demands++];
	pd->kind = kind;
	pd->old_k = ok;
	pd->new_k = nk;
	pd->occurrence = occ;
	pd->moved_bps = mv;
}

static int
cmp_diff(const void *x, const void *y)
{
	const struct plandiff_demand *a = x, *b = y;

	/* New model's order first, then removed ones by old index. */
	if ((a->new_k < 0) != (b->new_k < 0))
		return a->new_k < 0 ? 1 : -1;
	if (a->new_k >= 0)
		return (a->new_k > b->new_k) - (a->new_k < b->new_k);
	return (a->old_k > b->old_k) - (a->old_k < b->old_k);
}

int
plandiff_compute(const struct model *old_m, const struct plan *old_p,
    const struct model *new_m, const struct plan *new_p,
    struct plandiff **dp, struct err *e)
{
	struct plandiff *d = NULL;
	struct key *ok = NULL, *nk = NULL;
	const struct plan_route *ro, *rn;
	size_t i = 0, j = 0, cap = 0, k;
	double mv, big;
	int c, r;

	r = ERR_INTERNAL;
	*dp = NULL;
	if ((r = fits(old_m, old_p, "from", e)) != 0 ||
	    (r = fits(new_m, new_p, "to", e)) != 0)
		goto out;
	d = xcalloc(1, sizeof(*d));
	for (k = 0; k < old_p->n_routes; k++)
		d->old_carried_bps += old_p->routes[k].carried_bps;
	for (k = 0; k < new_p->n_routes; k++)
		d->new_carried_bps += new_p->routes[k].carried_bps;
	ok = keys(old_m);
	nk = keys(new_m);
	while (i < old_m->n_demands || j < new_m->n_demands) {
		if (i == old_m->n_demands)
			c = 1;
		else if (j == new_m->n_demands)
			c = -1;
		else if ((c = cmp_ends(&ok[i], &nk[j])) == 0)
			c = (ok[i].occ > nk[j].occ) - (ok[i].occ < nk[j].occ);
		if (c < 0) {
			push(d, &cap, PLANDIFF_REMOVED, (long)ok[i].k, -1,
			    ok[i].occ, 0);
			d->n_removed++;
			i++;
		} else if (c > 0) {
			push(d, &cap, PLANDIFF_ADDED, -1, (long)nk[j].k,
			    nk[j].occ, 0);
			d->n_added++;
			j++;
		} else {
			ro = &old_p->routes[ok[i].k];
			rn = &new_p->routes[nk[j].k];
			mv = moved(old_m, ro, new_m, rn);
			big = fmax(fmax(ro->carried_bps, rn->carried_bps), 1.0);
			d->n_compared++;
			if (mv > PLANDIFF_TOL * big) {
				push(d, &cap, PLANDIFF_CHANGED, (long)ok[i].k,
				    (long)nk[j].k, ok[i].occ, mv);
				d->n_changed++;
				d->moved_bps += mv;
			}
			i++;
			j++;
		}
	}
	/* qsort() must not see the NULL of an empty list (C11 7.1.4). */
	if (d->n_demands > 1)
		qsort(d->demands, d->n_demands, sizeof(*d->demands),
		    cmp_diff);
	big = fmax(d->old_carried_bps, d->new_carried_bps);
	d->moved_share = big > 0 ? d->moved_bps / big : 0;
	*dp = d;
	d = NULL;
	r = 0;
out:
	free(ok);
	free(nk);
	plandiff_free(d);
	return r;
}

void
plandiff_free(struct plandiff *d)
{
	if (d == NULL)
		return;
	free(d->demands);
	free(d);
}
