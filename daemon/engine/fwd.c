/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Per-node forwarding tables derived from a plan's path flows. */

/*
 * DESIGN
 * fwd_build() works one destination at a time so its scratch space stays
 * O(nodes + arcs) whatever the number of destinations: demands are
 * grouped by sink, their paths summed into flow[] over the arcs they
 * touch, the touched arcs sorted by (tail, arc) so each tail's hops are
 * contiguous, then one entry per tail is appended.  Kahn's algorithm over
 * the touched arcs decides whether the destination is loop-free; if not,
 * a cycle is found by walking predecessors among the nodes Kahn could not
 * remove (each of them has one, so the walk must repeat a node).  At the
 * end the entries are sorted by (node, destination); each keeps the offset
 * of its hops, which were appended in build order.  fwd_check_loads() is
 * deliberately independent of the build's bookkeeping: it reads only the
 * finished tables and the plan's carried rates.  Pure functions of their
 * arguments; any thread.
 */

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "fwd.h"
#include "model.h"
#include "plan.h"
#include "../base/err.h"
#include "../base/xalloc.h"

struct fwd {
	struct fwd_entry *entries;	/* owned, sorted by (node, dst) */
	size_t n_entries;
	struct fwd_hop *hops;		/* owned, indexed by entry hop0 */
	size_t n_hops;
	size_t *node_first;		/* owned, n_nodes + 1 offsets */
	size_t n_nodes;
	struct fwd_loop *loops;		/* owned, ascending dst */
	size_t n_loops;
};

static size_t
tail_of(const struct model *m, size_t arc)
{
	const struct link *l = &m->links[arc / 2];

	return arc % 2 == 0 ? l->a : l->b;
}

static size_t
head_of(const struct model *m, size_t arc)
{
	const struct link *l = &m->links[arc / 2];

	return arc % 2 == 0 ? l->b : l->a;
}

/* Checks that every path of p is a walk from its demand's src to dst. */
static int
check_fit(const struct model *m, const struct plan *p, struct err *e)
{
	const struct plan_path *pp;
	size_t k, i, a, at;

	if (p->n_routes != m->n_demands || p->n_arcs != 2 * m->n_links)
		return err_set(e, ERR_INVALID, "plan", "the plan has %zu "
		    "routes and %zu arcs; the model %zu demands and %zu links",
		    p->n_routes, p->n_arcs, m->n_demands, m->n_links);
	for (k = 0; k < p->n_routes; k++) {
		for (i = 0; i < p->routes[k].n_paths; i++) {
			pp = &p->routes[k].paths[i];
			if (!isfinite(pp->rate_bps) || pp->rate_bps < 0)
				return err_set(e, ERR_INVALID, "plan",
				    "route %zu path %zu has rate %g", k, i,
				    pp->rate_bps);
			at = m->demands[k].src;
			for (a = 0; a < pp->n_arcs; a++) {
				if (pp->arcs[a] >= p->n_arcs ||
				    tail_of(m, pp->arcs[a]) != at)
					return err_set(e, ERR_INVALID, "plan",
					    "route %zu path %zu is not a walk "
					    "at arc %zu", k, i, a);
				at = head_of(m, pp->arcs[a]);
			}
			if (at != m->demands[k].dst)
				return err_set(e, ERR_INVALID, "plan", "route "
				    "%zu path %zu does not end at its sink", k,
				    i);
		}
	}
	return 0;
}

/* The model, for the qsort comparator of touched arcs (by tail, arc). */
static _Thread_local const struct model *cmp_model;

static int
cmp_tail_arc(const void *x, const void *y)
{
	size_t a = *(const size_t *)x, b = *(const size_t *)y;
	size_t ta = tail_of(cmp_model, a), tb = tail_of(cmp_model, b);

	if (ta != tb)
		return ta < tb ? -1 : 1;
	return a < b ? -1 : a > b;
}

static int
cmp_entry(const void *x, const void *y)
{
	const struct fwd_entry *a = x, *b = y;

	if (a->node != b->node)
		return a->node < b->node ? -1 : 1;
	return a->dst < b->dst ? -1 : a->dst > b->dst;
}

/* Scratch space of fwd_build, sized once. */
struct work {
	double *flow;		/* per arc: flow towards the current dst */
	size_t *touched;	/* arcs with flow, build order */
	size_t n_touched;
	size_t *indeg;		/* per node, Kahn */
	size_t *first;		/* per node: first touched arc with that tail
				   (valid for nodes in the dst's subgraph) */
	size_t *n_out;		/* per node: touched arcs with that tail */
	size_t *stamp;		/* per node: dst + 1 when in the subgraph */
	size_t *queue;		/* per node */
	size_t *pred;		/* per node: a predecessor, SIZE_MAX if none */
	size_t *seen;		/* per node: walk stamp */
	size_t *inv;		/* nodes of the subgraph */
	size_t n_inv;
};

/*
 * Runs Kahn's algorithm on the current destination's subgraph; when it
 * leaves nodes behind, appends one of their cycles to f->loops.
 */
static void
find_loop(const struct model *m, struct work *w, size_t dst, struct fwd *f)
{
	size_t i, j, a, u, v, qh = 0, qt = 0, done = 0, n, *cyc;
	struct fwd_loop *lp;

	for (i = 0; i < w->n_inv; i++)
		w->indeg[w->inv[i]] = 0;
	for (i = 0; i < w->n_touched; i++)
		w->indeg[head_of(m, w->touched[i])]++;
	for (i = 0; i < w->n_inv; i++)
		if (w->indeg[w->inv[i]] == 0)
			w->queue[qt++] = w->inv[i];
	while (qh < qt) {
		u = w->queue[qh++];
		done++;
		for (j = 0; j < w->n_out[u]; j++) {
			v = head_of(m, w->touched[w->first[u] + j]);
			if (--w->indeg[v] == 0)
				w->queue[qt++] = v;
		}
	}
	if (done == w->n_inv)
		return;
	/* Nodes left have indeg > 0 from other nodes left: walk back. */
	for (i = 0; i < w->n_inv; i++) {
		w->pred[w->inv[i]] = SIZE_MAX;
		w->seen[w->inv[i]] = 0;
	}
	u = SIZE_MAX;
	for (i = 0; i < w->n_touched; i++) {
		a = w->touched[i];
		if (w->indeg[tail_of(m, a)] > 0 && w->indeg[head_of(m, a)] > 0) {
			w->pred[head_of(m, a)] = tail_of(m, a);
			u = head_of(m, a);
		}
	}
	if (u == SIZE_MAX)
		return;		/* cannot happen: Kahn left a node */
	for (n = 1; w->seen[u] == 0; n++) {
		w->seen[u] = n;
		u = w->pred[u];
	}
	/* u is on the cycle; it was seen at step seen[u] of n - 1 steps. */
	n = n - w->seen[u];
	cyc = xcalloc(n + 1, sizeof(*cyc));
	/* The walk went backwards: fill from the end. */
	v = u;
	for (i = n; i > 0; i--) {
		cyc[i] = v;
		v = w->pred[v];
	}
	cyc[0] = cyc[n];
	f->loops = xreallocarray(f->loops, f->n_loops + 1, sizeof(*f->loops));
	lp = &f->loops[f->n_loops++];
	lp->dst = dst;
	lp->nodes = cyc;
	lp->n_nodes = n + 1;
}

int
fwd_build(const struct model *m, const struct plan *p, struct fwd **fp,
    struct err *e)
{
	struct work w = { 0 };
	struct fwd *f = NULL;
	struct fwd_entry *en;
	const struct plan_path *pp;
	size_t *order = NULL, *start = NULL, cap_e = 0, cap_h = 0;
	size_t t, q, k, i, a, arc, u, j;
	double out;
	int r;

	r = ERR_INTERNAL;
	*fp = NULL;
	if ((r = check_fit(m, p, e)) != 0)
		goto out;
	f = xcalloc(1, sizeof(*f));
	f->n_nodes = m->n_nodes;
	w.flow = xcalloc(p->n_arcs + 1, sizeof(*w.flow));
	w.touched = xcalloc(p->n_arcs + 1, sizeof(*w.touched));
	w.indeg = xcalloc(m->n_nodes + 1, sizeof(size_t));
	w.first = xcalloc(m->n_nodes + 1, sizeof(size_t));
	w.n_out = xcalloc(m->n_nodes + 1, sizeof(size_t));
	w.stamp = xcalloc(m->n_nodes + 1, sizeof(size_t));
	w.queue = xcalloc(m->n_nodes + 1, sizeof(size_t));
	w.pred = xcalloc(m->n_nodes + 1, sizeof(size_t));
	w.seen = xcalloc(m->n_nodes + 1, sizeof(size_t));
	w.inv = xcalloc(m->n_nodes + 1, sizeof(size_t));

	/* Demands grouped by sink: a counting sort. */
	start = xcalloc(m->n_nodes + 2, sizeof(*start));
	order = xcalloc(m->n_demands + 1, sizeof(*order));
	for (k = 0; k < m->n_demands; k++)
		start[m->demands[k].dst + 2]++;
	for (t = 0; t < m->n_nodes; t++)
		start[t + 2] += start[t + 1];
	for (k = 0; k < m->n_demands; k++)
		order[start[m->demands[k].dst + 1]++] = k;

	cmp_model = m;
	for (t = 0; t < m->n_nodes; t++) {
		w.n_touched = 0;
		for (q = start[t]; q < start[t + 1]; q++) {
			k = order[q];
			for (i = 0; i < p->routes[k].n_paths; i++) {
				pp = &p->routes[k].paths[i];
				if (pp->rate_bps <= 0)
					continue;
				for (a = 0; a < pp->n_arcs; a++) {
					arc = pp->arcs[a];
					if (w.flow[arc] == 0)
						w.touched[w.n_touched++] = arc;
					w.flow[arc] += pp->rate_bps;
				}
			}
		}
		if (w.n_touched == 0)
			continue;
		qsort(w.touched, w.n_touched, sizeof(*w.touched),
		    cmp_tail_arc);
		w.n_inv = 0;
		for (i = 0; i < w.n_touched; i++) {
			u = tail_of(m, w.touched[i]);
			j = head_of(m, w.touched[i]);
			if (w.stamp[u] != t + 1) {
				w.stamp[u] = t + 1;
				w.inv[w.n_inv++] = u;
				w.n_out[u] = 0;
			}
			if (w.stamp[j] != t + 1) {
				w.stamp[j] = t + 1;
				w.inv[w.n_inv++] = j;
				w.n_out[j] = 0;
			}
			if (w.n_out[u]++ == 0)
				w.first[u] = i;
		}
		/* One entry per tail, hops in ascending arc order. */
		for (i = 0; i < w.n_inv; i++) {
			u = w.inv[i];
			if (w.n_out[u] == 0)
				continue;
			out = 0;
			for (j = 0; j < w.n_out[u]; j++)
				out += w.flow[w.touched[w.first[u] + j]];
			if (f->n_entries == cap_e) {
				cap_e = cap_e == 0 ? 64 : 2 * cap_e;
				f->entries = xreallocarray(f->entries, cap_e,
				    sizeof(*f->entries));
			}
			en = &f->entries[f->n_entries++];
			en->node = u;
			en->dst = t;
			en->through_bps = out;
			en->hop0 = f->n_hops;
			en->n_hops = w.n_out[u];
			while (f->n_hops + w.n_out[u] > cap_h) {
				cap_h = cap_h == 0 ? 128 : 2 * cap_h;
				f->hops = xreallocarray(f->hops, cap_h,
				    sizeof(*f->hops));
			}
			for (j = 0; j < w.n_out[u]; j++) {
				arc = w.touched[w.first[u] + j];
				f->hops[f->n_hops].arc = arc;
				f->hops[f->n_hops].next = head_of(m, arc);
				f->hops[f->n_hops].rate_bps = w.flow[arc];
				f->hops[f->n_hops].frac = w.flow[arc] / out;
				f->n_hops++;
			}
		}
		find_loop(m, &w, t, f);
		for (i = 0; i < w.n_touched; i++)
			w.flow[w.touched[i]] = 0;
	}
	cmp_model = NULL;

	if (f->n_entries > 0)
		qsort(f->entries, f->n_entries, sizeof(*f->entries),
		    cmp_entry);
	f->node_first = xcalloc(m->n_nodes + 1, sizeof(*f->node_first));
	for (i = 0; i < f->n_entries; i++)
		f->node_first[f->entries[i].node + 1]++;
	for (u = 0; u < m->n_nodes; u++)
		f->node_first[u + 1] += f->node_first[u];
	*fp = f;
	f = NULL;
	r = 0;
out:
	free(w.flow);
	free(w.touched);
	free(w.indeg);
	free(w.first);
	free(w.n_out);
	free(w.stamp);
	free(w.queue);
	free(w.pred);
	free(w.seen);
	free(w.inv);
	free(start);
	free(order);
	fwd_free(f);
	return r;
}

void
fwd_free(struct fwd *f)
{
	size_t i;

	if (f == NULL)
		return;
	for (i = 0; i < f->n_loops; i++)
		free(f->loops[i].nodes);
	free(f->loops);
	free(f->entries);
	free(f->hops);
	free(f->node_first);
	free(f);
}

size_t
fwd_n_entries(const struct fwd *f)
{
	return f->n_entries;
}

const struct fwd_entry *
fwd_entry(const struct fwd *f, size_t i)
{
	return i < f->n_entries ? &f->entries[i] : NULL;
}

const struct fwd_hop *
fwd_hops(const struct fwd *f, const struct fwd_entry *en)
{
	return &f->hops[en->hop0];
}

size_t
fwd_node_entries(const struct fwd *f, size_t v, size_t *np)
{
	*np = 0;
	if (v >= f->n_nodes || f->node_first == NULL)
		return 0;
	*np = f->node_first[v + 1] - f->node_first[v];
	return f->node_first[v];
}

const struct fwd_entry *
fwd_find(const struct fwd *f, size_t v, size_t dst)
{
	size_t lo, hi, mid, n;

	lo = fwd_node_entries(f, v, &n);
	hi = lo + n;
	while (lo < hi) {
		mid = lo + (hi - lo) / 2;
		if (f->entries[mid].dst == dst)
			return &f->entries[mid];
		if (f->entries[mid].dst < dst)
			lo = mid + 1;
		else
			hi = mid;
	}
	return NULL;
}

size_t
fwd_n_loops(const struct fwd *f)
{
	return f->n_loops;
}

const struct fwd_loop *
fwd_loop(const struct fwd *f, size_t i)
{
	return i < f->n_loops ? &f->loops[i] : NULL;
}

/* ---- the replay check ---- */

int
fwd_check_loads(const struct model *m, const struct plan *p,
    const struct fwd *f, double *devp, struct err *e)
{
	const struct fwd_entry *en;
	const struct fwd_hop *h;
	double *load = NULL, *x = NULL, dev = 0, d, push;
	size_t *by_dst = NULL, *dstart = NULL, *ent_of = NULL, *indeg = NULL;
	size_t *queue = NULL, *dem = NULL, *dem_start = NULL, *fill = NULL;
	size_t t, i, j, k, u, qh, qt, done, n_ent;
	int r;

	r = ERR_INTERNAL;
	*devp = 0;
	if (p->n_routes != m->n_demands || p->n_arcs != 2 * m->n_links ||
	    f->n_nodes != m->n_nodes) {
		r = err_set(e, ERR_INVALID, "plan", "tables, plan and model "
		    "do not belong together");
		goto out;
	}
	load = xcalloc(p->n_arcs + 1, sizeof(*load));
	x = xcalloc(m->n_nodes + 1, sizeof(*x));
	ent_of = xcalloc(m->n_nodes + 1, sizeof(*ent_of));
	indeg = xcalloc(m->n_nodes + 1, sizeof(*indeg));
	queue = xcalloc(m->n_nodes + 1, sizeof(*queue));
	/* Entries and demands, each grouped by destination. */
	dstart = xcalloc(m->n_nodes + 1, sizeof(*dstart));
	by_dst = xcalloc(f->n_entries + 1, sizeof(*by_dst));
	for (i = 0; i < f->n_entries; i++)
		dstart[f->entries[i].dst + 1]++;
	for (t = 0; t < m->n_nodes; t++)
		dstart[t + 1] += dstart[t];
	dem_start = xcalloc(m->n_nodes + 1, sizeof(*dem_start));
	dem = xcalloc(m->n_demands + 1, sizeof(*dem));
	for (k = 0; k < m->n_demands; k++)
		dem_start[m->demands[k].dst + 1]++;
	for (t = 0; t < m->n_nodes; t++)
		dem_start[t + 1] += dem_start[t];
	fill = xcalloc(m->n_nodes + 1, sizeof(*fill));
	for (i = 0; i < f->n_entries; i++) {
		t = f->entries[i].dst;
		by_dst[dstart[t] + fill[t]++] = i;
	}
	memset(fill, 0, (m->n_nodes + 1) * sizeof(*fill));
	for (k = 0; k < m->n_demands; k++) {
		t = m->demands[k].dst;
		dem[dem_start[t] + fill[t]++] = k;
	}

	for (t = 0; t < m->n_nodes; t++) {
		n_ent = dstart[t + 1] - dstart[t];
		for (i = dstart[t]; i < dstart[t + 1]; i++) {
			en = &f->entries[by_dst[i]];
			ent_of[en->node] = by_dst[i] + 1;
		}
		for (i = dem_start[t]; i < dem_start[t + 1]; i++) {
			k = dem[i];
			x[m->demands[k].src] += p->routes[k].carried_bps;
		}
		for (i = dstart[t]; i < dstart[t + 1]; i++) {
			en = &f->entries[by_dst[i]];
			h = fwd_hops(f, en);
			for (j = 0; j < en->n_hops; j++)
				indeg[h[j].next]++;
		}
		qh = qt = done = 0;
		for (i = dstart[t]; i < dstart[t + 1]; i++) {
			u = f->entries[by_dst[i]].node;
			if (indeg[u] == 0)
				queue[qt++] = u;
		}
		while (qh < qt) {
			u = queue[qh++];
			done++;
			en = &f->entries[ent_of[u] - 1];
			h = fwd_hops(f, en);
			for (j = 0; j < en->n_hops; j++) {
				push = x[u] * h[j].frac;
				load[h[j].arc] += push;
				x[h[j].next] += push;
				if (--indeg[h[j].next] == 0 &&
				    ent_of[h[j].next] != 0)
					queue[qt++] = h[j].next;
			}
			x[u] = 0;
		}
		if (done != n_ent) {
			r = err_set(e, ERR_INVALID, "dst", "the next hops "
			    "towards %s form a loop: no topological order",
			    m->nodes[t].id);
			goto out;
		}
		/* What is left is at the sink, or stranded. */
		for (u = 0; u < m->n_nodes; u++) {
			if (u != t && x[u] > 0) {
				r = err_set(e, ERR_INVALID, "node", "traffic "
				    "towards %s reaches %s, which has no "
				    "entry for it", m->nodes[t].id,
				    m->nodes[u].id);
				goto out;
			}
			x[u] = 0;
			indeg[u] = 0;
		}
		for (i = dstart[t]; i < dstart[t + 1]; i++)
			ent_of[f->entries[by_dst[i]].node] = 0;
	}
	for (i = 0; i < p->n_arcs; i++) {
		d = fabs(load[i] - p->arcs[i].load_bps) /
		    fmax(fabs(p->arcs[i].load_bps), 1.0);
		if (!(d <= dev))
			dev = d;
	}
	*devp = dev;
	r = 0;
out:
	free(load);
	free(x);
	free(ent_of);
	free(indeg);
	free(queue);
	free(dstart);
	free(by_dst);
	free(dem_start);
	free(dem);
	free(fill);
	return r;
}
