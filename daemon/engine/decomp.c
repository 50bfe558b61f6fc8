/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Flow decomposition: one source's arc flows into paths per demand. */

/*
 * DESIGN
 * See decomp.h for the method.  The graph is kept as two compressed
 * adjacency lists (out-arcs for the cycle search, in-arcs for the backward
 * walks).  Flows only ever decrease, so each node keeps a cursor into its
 * list that moves past arcs whose flow reached zero and never moves back;
 * that keeps both phases linear in |A| plus the length of the walks.
 *
 * Cycle cancelling is a depth-first search over arcs with positive flow.
 * Meeting a node on the stack closes a cycle: subtract its smallest flow
 * (at least one arc drops to zero), unwind the stack to the node that
 * closed it, and mark the unwound nodes unvisited so they are searched
 * again.  A finished node reaches no stacked node, and removing flow
 * cannot change that, so finished nodes stay finished.
 */

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "decomp.h"
#include "../base/xalloc.h"

struct piece {
	size_t off, len;	/* arcs in decomp.pbuf, source to sink */
	double rate;		/* LP units, still unassigned */
};

struct give {
	size_t k;		/* demand, as its position in decomp.order */
	size_t piece;		/* path it gets */
	double rate;		/* LP units */
};

struct decomp {
	size_t n, m;
	size_t *tail, *head;			/* owned copies */
	size_t *out_start, *out_arcs;		/* out-arcs of node v */
	size_t *in_start, *in_arcs;		/* in-arcs of node v */
	/* Scratch, per node. */
	unsigned char *state;	/* 0 unvisited, 1 on the stack, 2 done */
	size_t *cur;		/* cursor into the node's arc list */
	size_t *stack, *pos;	/* DFS stack; pos[v]: v's place on it */
	size_t *via;		/* arc the DFS entered v through */
	size_t *walk;		/* arcs of a backward walk, sink first */
	double *owed;		/* LP units still owed to the node */
	size_t *bucket;		/* n + 1 starts of demands by sink */
	/* Scratch, grown as needed. */
	size_t *order;		/* demands sorted by sink, stable */
	size_t cap_order;
	size_t *pbuf;		/* arcs of the current sink's pieces */
	size_t len_pbuf, cap_pbuf;
	struct piece *pieces;
	size_t n_pieces, cap_pieces;
	struct give *gives;
	size_t n_gives, cap_gives;
};

/* Builds a compressed adjacency list of the arcs keyed by key[a]. */
static void
adjacency(size_t n, size_t m, const size_t *key, size_t **startp,
    size_t **arcsp)
{
	size_t *start = xcalloc(n + 1, sizeof(*start));
	size_t *arcs = xcalloc(m, sizeof(*arcs));
	size_t *fill = xcalloc(n, sizeof(*fill));
	size_t a, v;

	for (a = 0; a < m; a++)
		start[key[a] + 1]++;
	for (v = 0; v < n; v++)
		start[v + 1] += start[v];
	for (a = 0; a < m; a++)
		arcs[start[key[a]] + fill[key[a]]++] = a;
	free(fill);
	*startp = start;
	*arcsp = arcs;
}

struct decomp *
decomp_new(size_t n_nodes, size_t n_arcs, const size_t *tail,
    const size_t *head)
{
	struct decomp *d = xcalloc(1, sizeof(*d));
	size_t n = n_nodes;

	d->n = n;
	d->m = n_arcs;
	d->tail = xcalloc(n_arcs, sizeof(*d->tail));
	d->head = xcalloc(n_arcs, sizeof(*d->head));
	if (n_arcs > 0) {
		memcpy(d->tail, tail, n_arcs * sizeof(*tail));
		memcpy(d->head, head, n_arcs * sizeof(*head));
	}
	adjacency(n, n_arcs, d->tail, &d->out_start, &d->out_arcs);
	adjacency(n, n_arcs, d->head, &d->in_start, &d->in_arcs);
	d->state = xcalloc(n, sizeof(*d->state));
	d->cur = xcalloc(n, sizeof(*d->cur));
	d->stack = xcalloc(n, sizeof(*d->stack));
	d->pos = xcalloc(n, sizeof(*d->pos));
	d->via = xcalloc(n, sizeof(*d->via));
	d->walk = xcalloc(n + 1, sizeof(*d->walk));
	d->owed = xcalloc(n, sizeof(*d->owed));
	d->bucket = xcalloc(n + 1, sizeof(*d->bucket));
	return d;
}

void
decomp_free(struct decomp *d)
{
	if (d == NULL)
		return;
	free(d->tail);
	free(d->head);
	free(d->out_start);
	free(d->out_arcs);
	free(d->in_start);
	free(d->in_arcs);
	free(d->state);
	free(d->cur);
	free(d->stack);
	free(d->pos);
	free(d->via);
	free(d->walk);
	free(d->owed);
	free(d->bucket);
	free(d->order);
	free(d->pbuf);
	free(d->pieces);
	free(d->gives);
	free(d);
}

/* ---- cycle cancelling ---- */

/* Subtracts x from flow[a], snapping what is left at or below eps to 0. */
static void
take(double *flow, size_t a, double x, double eps)
{
	flow[a] -= x;
	if (flow[a] <= eps)
		flow[a] = 0;
}

static void
cancel_cycles(struct decomp *d, double *flow, double eps)
{
	size_t r, v, w, a, i, sp;
	double x;

	memset(d->state, 0, d->n);
	for (v = 0; v < d->n; v++)
		d->cur[v] = d->out_start[v];
	for (r = 0; r < d->n; r++) {
		if (d->state[r] != 0)
			continue;
		sp = 0;
		d->pos[r] = sp;
		d->stack[sp++] = r;
		d->state[r] = 1;
		while (sp > 0) {
			v = d->stack[sp - 1];
			if (d->cur[v] == d->out_start[v + 1]) {
				d->state[v] = 2;
				sp--;
				continue;
			}
			a = d->out_arcs[d->cur[v]];
			w = d->head[a];
			if (flow[a] == 0 || d->state[w] == 2) {
				d->cur[v]++;
				continue;
			}
			if (d->state[w] == 0) {
				d->via[w] = a;
				d->pos[w] = sp;
				d->stack[sp++] = w;
				d->state[w] = 1;
				continue;
			}
			/* w is stacked: w -> ... -> v -> w is a cycle. */
			x = flow[a];
			for (i = d->pos[w] + 1; i < sp; i++)
				x = fmin(x, flow[d->via[d->stack[i]]]);
			take(flow, a, x, eps);
			for (i = d->pos[w] + 1; i < sp; i++) {
				take(flow, d->via[d->stack[i]], x, eps);
				d->state[d->stack[i]] = 0;
			}
			sp = d->pos[w] + 1;
		}
	}
}

/* ---- paths to each sink ---- */

static void
push_piece(struct decomp *d, size_t len, double rate)
{
	struct piece *p;
	size_t i;

	if (d->n_pieces == d->cap_pieces) {
		d->cap_pieces = d->cap_pieces == 0 ? 64 : 2 * d->cap_pieces;
		d->pieces = xreallocarray(d->pieces, d->cap_pieces,
		    sizeof(*d->pieces));
	}
	while (d->len_pbuf + len > d->cap_pbuf) {
		d->cap_pbuf = d->cap_pbuf == 0 ? 1024 : 2 * d->cap_pbuf;
		d->pbuf = xreallocarray(d->pbuf, d->cap_pbuf,
		    sizeof(*d->pbuf));
	}
	p = &d->pieces[d->n_pieces++];
	p->off = d->len_pbuf;
	p->len = len;
	p->rate = rate;
	/* The walk ran sink to source; store source to sink. */
	for (i = 0; i < len; i++)
		d->pbuf[d->len_pbuf++] = d->walk[len - 1 - i];
}

/*
 * Extracts paths from src to t until t is owed nothing or no flow reaches
 * it, leaving them in d->pieces.
 */
static void
drain_sink(struct decomp *d, size_t src, size_t t, double *flow,
    double eps)
{
	size_t v, a, len, i;
	double x;

	d->n_pieces = 0;
	d->len_pbuf = 0;
	while (d->owed[t] > eps) {
		v = t;
		len = 0;
		while (v != src && len <= d->n) {
			while (d->cur[v] < d->in_start[v + 1] &&
			    flow[d->in_arcs[d->cur[v]]] == 0)
				d->cur[v]++;
			if (d->cur[v] == d->in_start[v + 1])
				break;
			a = d->in_arcs[d->cur[v]];
			d->walk[len++] = a;
			v = d->tail[a];
		}
		if (v != src) {
			/*
			 * Flow leaves v but none enters it (dust left by the
			 * LP's tolerances), or, impossibly, the walk looped:
			 * drop the arc out of v and walk again.  Stuck at t
			 * itself: nothing more reaches t.
			 */
			if (len == 0)
				break;
			flow[d->walk[len - 1]] = 0;
			continue;
		}
		x = d->owed[t];
		for (i = 0; i < len; i++)
			x = fmin(x, flow[d->walk[i]]);
		for (i = 0; i < len; i++)
			take(flow, d->walk[i], x, eps);
		d->owed[t] -= x;
		push_piece(d, len, x);
	}
}

static void
push_give(struct decomp *d, size_t k, size_t piece, double rate)
{
	if (d->n_gives == d->cap_gives) {
		d->cap_gives = d->cap_gives == 0 ? 64 : 2 * d->cap_gives;
		d->gives = xreallocarray(d->gives, d->cap_gives,
		    sizeof(*d->gives));
	}
	d->gives[d->n_gives].k = k;
	d->gives[d->n_gives].piece = piece;
	d->gives[d->n_gives].rate = rate;
	d->n_gives++;
}

static int
by_rate_desc(const void *x, const void *y)
{
	const struct plan_path *p = x, *q = y;

	return (p->rate_bps < q->rate_bps) - (p->rate_bps > q->rate_bps);
}

/*
 * Shares the pieces drained for one sink among its demands
 * order[lo..hi), in that order, and appends them to their routes.
 */
static void
share(struct decomp *d, size_t lo, size_t hi, const size_t *dem,
    const double *want, double eps, double scale, struct plan_route *routes)
{
	struct plan_route *rt;
	struct plan_path *pp;
	struct piece *pc;
	size_t i, k, j, g, *count;
	double need, x;

	d->n_gives = 0;
	i = 0;
	for (k = lo; k < hi && i < d->n_pieces; k++) {
		j = d->order[k];
		need = want[j];
		while (need > eps && i < d->n_pieces) {
			pc = &d->pieces[i];
			x = fmin(need, pc->rate);
			need -= x;
			pc->rate -= x;
			if (x > eps)
				push_give(d, k, i, x);
			if (pc->rate <= eps)
				i++;
		}
	}
	/* Give each route its paths in one allocation. */
	count = xcalloc(hi - lo, sizeof(*count));
	for (g = 0; g < d->n_gives; g++)
		count[d->gives[g].k - lo]++;
	for (k = lo; k < hi; k++) {
		rt = &routes[dem[d->order[k]]];
		rt->paths = xcalloc(count[k - lo], sizeof(*rt->paths));
		rt->n_paths = 0;
		rt->carried_bps = 0;
	}
	free(count);
	for (g = 0; g < d->n_gives; g++) {
		rt = &routes[dem[d->order[d->gives[g].k]]];
		pc = &d->pieces[d->gives[g].piece];
		pp = &rt->paths[rt->n_paths++];
		pp->n_arcs = pc->len;
		pp->arcs = xcalloc(pc->len, sizeof(*pp->arcs));
		memcpy(pp->arcs, d->pbuf + pc->off,
		    pc->len * sizeof(*pp->arcs));
		pp->rate_bps = d->gives[g].rate * scale;
		rt->carried_bps += pp->rate_bps;
	}
	for (k = lo; k < hi; k++) {
		rt = &routes[dem[d->order[k]]];
		if (rt->n_paths > 1)
			qsort(rt->paths, rt->n_paths, sizeof(*rt->paths),
			    by_rate_desc);
	}
}

void
decomp_source(struct decomp *d, size_t src, double *flow, double eps,
    size_t n_dem, const size_t *dem, const size_t *dst, const double *want,
    double scale, struct plan_route *routes)
{
	size_t a, v, j;

	for (a = 0; a < d->m; a++)
		if (!(flow[a] > eps))
			flow[a] = 0;
	cancel_cycles(d, flow, eps);

	/* Demands grouped by sink, keeping the caller's order in a group. */
	if (n_dem > d->cap_order) {
		d->cap_order = n_dem;
		d->order = xreallocarray(d->order, n_dem, sizeof(*d->order));
	}
	memset(d->bucket, 0, (d->n + 1) * sizeof(*d->bucket));
	for (j = 0; j < n_dem; j++)
		d->bucket[dst[j] + 1]++;
	for (v = 0; v < d->n; v++)
		d->bucket[v + 1] += d->bucket[v];
	for (j = 0; j < n_dem; j++)
		d->order[d->bucket[dst[j]]++] = j;
	/* The fill moved each start to the next; shift them back. */
	for (v = d->n; v > 0; v--)
		d->bucket[v] = d->bucket[v - 1];
	d->bucket[0] = 0;

	for (v = 0; v < d->n; v++) {
		d->owed[v] = 0;
		d->cur[v] = d->in_start[v];
	}
	for (j = 0; j < n_dem; j++)
		if (want[j] > 0)
			d->owed[dst[j]] += want[j];
	for (v = 0; v < d->n; v++) {
		if (d->bucket[v] == d->bucket[v + 1])
			continue;
		d->n_pieces = 0;
		if (v != src)
			drain_sink(d, src, v, flow, eps);
		share(d, d->bucket[v], d->bucket[v + 1], dem, want, eps,
		    scale, routes);
	}
}
