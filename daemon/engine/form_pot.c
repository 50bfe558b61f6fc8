/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Balance plans for very large matrices: the exponential potential method. */

/*
 * DESIGN
 * For a full matrix on hundreds of nodes (754 nodes: 567,762 demands) the
 * path master has a row per demand and the node-arc LP over a million
 * columns; neither solves in a minute.  This file solves the `balance`
 * stage without an LP, by the exponential potential method for
 * concurrent flow (Shahrokhi & Matula 1990; Grigoriadis & Khachiyan
 * 1996; the block, per-commodity form is Bienstock's "Potential function
 * methods for approximately solving linear programming problems", 2002),
 * and certifies its result with the LP's own duality.
 *
 * Commodities are sources: source s owns a flow f_s on every arc that
 * serves all of its demands (as in the node-arc formulation).  With
 * utilisation u_a = L_a / c_a of the total load L = sum_s f_s, the method
 * minimises the smooth maximum
 *
 *     F(L) = (1 / beta) ln sum_a exp(beta u_a) + eta sum_a m_a L_a / C0,
 *
 * which lies within ln(|A|) / beta of max_a u_a (the eta term, TE metric
 * m over the shortest-path plan's cost C0, makes ties go to short paths
 * and keeps lengths positive).  One block step for source s: a shortest
 * path tree under the gradient lengths dF/dL_a, the tree flow t_s that
 * routes all of s's demands on it, and an exact line search for
 * f_s <- f_s + sigma (t_s - f_s), sigma in [0, 1] (F restricted to the
 * step is convex: a few safeguarded Newton steps).  A pass steps every
 * source once; beta grows as the gap closes, so the smoothing error stays
 * below a third of the gap.
 *
 * The certificate: for any arc lengths y >= 0, weak duality of the
 * balance LP gives
 *
 *     U* >= sum_k d_k dist_y(s_k, t_k) / sum_a c_a y_a,
 *
 * and y_a = exp(beta u_a) / c_a (the softmax weights) is a near-optimal
 * dual.  Every BOUND_EVERY passes all sources' shortest paths under these
 * lengths, and under the average of the weights since the last bound
 * (dual averaging), give the bound; the best one is kept.  The plan's gap is
 * (max utilisation of its routes - bound) / max utilisation, computed
 * from the published routes, so what is certified is what is served.
 * Those bound Dijkstras are independent: they run on POT_THREADS threads
 * (plain arithmetic, no solver objects).
 *
 * The plan: each source's flow is split into paths per demand (decomp.h);
 * paths carrying less than PRUNE_REL of their demand are folded into the
 * demand's largest path (the method leaves many near-empty paths), and
 * the loads, the maximum utilisation and the gap are computed after that.
 *
 * Scope: objective balance only, and only when everything fits: once the
 * bound shows the matrix cannot fit within the headroom, or the time runs
 * out before either is known, the caller falls back to the exact
 * stages (form_pot_solve returns POT_NO_FIT).  Demands whose ends no path
 * of up links joins are cut off and unserved, as in the other
 * formulations.
 */

#include <math.h>
#include <pthread.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "decomp.h"
#include "engine.h"
#include "form_pot.h"
#include "heap.h"
#include "scenario.h"
#include "../base/clock.h"
#include "../base/err.h"
#include "../base/log.h"
#include "../base/xalloc.h"

/* Passes between two bound computations. */
#define BOUND_EVERY	3
/* The loop stops at this share of the gap target. */
#define STOP_SHARE	0.9
/* Passes allowed in all. */
#define PASSES_MAX	20000
/* A path below this share of its demand folds into the largest path. */
#define PRUNE_REL	1e-3
/* Flow at or below this many LP units is dust in the decomposition. */
#define POT_DUST	1e-12
/*
 * Weight of cost in F: at most ETA_MAX, and a tenth of the gap target, so
 * the pull towards cheap paths costs the balance little.  Measured on the
 * Kdl cases: 1e-3 makes plans 3 % cheaper than 1e-4 but needs up to
 * twice the passes at 754 sites; 1e-2 keeps the gap from closing.
 */
#define ETA_MAX		1e-4
/* The lowest gap the method is asked for (below: the pass limit ends). */
#define GAP_FLOOR	1e-4
/* Threads for the bound passes. */
#define POT_THREADS	2

/* Shortest-path scratch for one thread. */
struct sp {
	double *dist;
	size_t *via;		/* node -> arc into it */
	size_t *order;		/* settled nodes, in order */
	size_t n_order;
	size_t *hnode, *hat;
	struct heap h;
	double *sub;		/* node -> flow of its subtree */
};

struct pot {
	const struct model *m;
	const struct solve_opts *o;
	double t0;
	size_t n, n_arcs;
	size_t *tail, *head;
	size_t *out_start, *out_arc;	/* up arcs by tail */
	double *cap;		/* LP units; 0: down */
	double *metric;		/* TE metric / C0 */
	double scale;		/* bit/s per LP unit */
	size_t n_src;
	size_t *src_node;
	size_t *src_start, *src_dem;	/* source -> its demands */
	double *want;		/* demand -> rate, LP units (0: cut off) */
	double *f;		/* n_src x n_arcs flows */
	double *L;		/* arc -> load */
	double *len;		/* arc -> current length */
	double *ex;		/* arc -> exp(beta (u_a - uref)) */
	double Z;		/* sum of ex over up arcs */
	double beta, uref;
	double eta;		/* weight of cost in F */
	double *t;		/* a tree flow, n_arcs */
	size_t *touched;	/* arcs of a step */
	double *delta;		/* arc -> step direction / c_a */
	struct sp sp;
	size_t n_up;
	size_t m_demands;	/* the model's demands */
	int cold_passes;	/* passes of the last solve from nothing */
};

static void
sp_init(struct sp *s, size_t n)
{
	s->dist = xcalloc(n, sizeof(double));
	s->via = xcalloc(n, sizeof(size_t));
	s->order = xcalloc(n, sizeof(size_t));
	s->hnode = xcalloc(n, sizeof(size_t));
	s->hat = xcalloc(n, sizeof(size_t));
	s->sub = xcalloc(n, sizeof(double));
	s->h.node = s->hnode;
	s->h.at = s->hat;
}

static void
sp_free(struct sp *s)
{
	free(s->dist);
	free(s->via);
	free(s->order);
	free(s->hnode);
	free(s->hat);
	free(s->sub);
}

/* Shortest paths from src under w (arcs with cap 0 skipped), all nodes. */
static void
dijkstra(const struct pot *p, struct sp *s, size_t src, const double *w)
{
	struct heap *h = &s->h;
	size_t v, x, i, a;
	double nd;

	for (v = 0; v < p->n; v++) {
		s->dist[v] = INFINITY;
		h->at[v] = SIZE_MAX;
	}
	h->n = 0;
	h->dist = s->dist;
	s->dist[src] = 0;
	s->n_order = 0;
	h->node[h->n] = src;
	h->at[src] = h->n++;
	while (h->n > 0) {
		v = heap_pop(h);
		if (s->n_order == p->n)
			break;	/* not reached with lengths >= 0 */
		s->order[s->n_order++] = v;
		for (i = p->out_start[v]; i < p->out_start[v + 1]; i++) {
			a = p->out_arc[i];
			x = p->head[a];
			nd = s->dist[v] + w[a];
			if (nd >= s->dist[x])
				continue;
			s->dist[x] = nd;
			s->via[x] = a;
			if (h->at[x] == SIZE_MAX) {
				h->node[h->n] = x;
				h->at[x] = h->n++;
			}
			heap_up(h, h->at[x]);
		}
	}
}

/*
 * Routes all of source si's demands on the tree s holds: t[a] (zeroed by
 * the caller) gets the tree flow; returns sum_k want_k dist(t_k).
 */
static double
tree_flow(const struct pot *p, struct sp *s, size_t si, double *t)
{
	size_t i, k, v, a;
	double dsum = 0;

	for (i = 0; i < s->n_order; i++)
		s->sub[s->order[i]] = 0;
	for (i = p->src_start[si]; i < p->src_start[si + 1]; i++) {
		k = p->src_dem[i];
		if (p->want[k] <= 0)
			continue;
		v = p->m->demands[k].dst;
		s->sub[v] += p->want[k];
		dsum += p->want[k] * s->dist[v];
	}
	if (t == NULL)
		return dsum;
	for (i = s->n_order; i-- > 1;) {
		v = s->order[i];
		if (s->sub[v] <= 0)
			continue;
		a = s->via[v];
		t[a] += s->sub[v];
		s->sub[p->tail[a]] += s->sub[v];
	}
	return dsum;
}

/* ---- the potential ---- */

/* Recomputes ex, Z and the lengths from L for the current beta. */
static void
reprice(struct pot *p)
{
	size_t a;
	double umax = 0, u;

	for (a = 0; a < p->n_arcs; a++)
		if (p->cap[a] > 0 && (u = p->L[a] / p->cap[a]) > umax)
			umax = u;
	p->uref = umax;
	p->Z = 0;
	for (a = 0; a < p->n_arcs; a++) {
		if (p->cap[a] <= 0) {
			p->ex[a] = 0;
			continue;
		}
		p->ex[a] = exp(p->beta * (p->L[a] / p->cap[a] - p->uref));
		p->Z += p->ex[a];
	}
	for (a = 0; a < p->n_arcs; a++)
		if (p->cap[a] > 0)
			p->len[a] = p->ex[a] / (p->Z * p->cap[a]) +
			    p->eta * p->metric[a];
}

static double
max_util(const struct pot *p)
{
	size_t a;
	double umax = 0, u;

	for (a = 0; a < p->n_arcs; a++)
		if (p->cap[a] > 0 && (u = p->L[a] / p->cap[a]) > umax)
			umax = u;
	return umax;
}

/*
 * The step length in [0, 1] minimising F along delta (per touched arc: the
 * change of utilisation at sigma = 1) plus the linear cost slope kc.
 * Safeguarded Newton on F'(sigma), evaluated with every exponent shifted
 * by the largest one so that no term overflows.
 */
static double
line_search(const struct pot *p, size_t nt, double kc)
{
	double lo = 0, hi = 1, sg = 1, g, gg, zs, s1, s2, x, d, r, mx, zr;
	double lzr;
	size_t i, a, it;

	zr = p->Z;
	for (i = 0; i < nt; i++)
		zr -= p->ex[p->touched[i]];
	lzr = zr > 1e-300 ? log(zr) : -INFINITY;
	for (it = 0; it < 60; it++) {
		mx = lzr;
		for (i = 0; i < nt; i++) {
			a = p->touched[i];
			r = p->beta * (p->L[a] / p->cap[a] - p->uref +
			    sg * p->delta[a]);
			if (r > mx)
				mx = r;
		}
		zs = lzr > -INFINITY ? exp(lzr - mx) : 0;
		s1 = 0;
		s2 = 0;
		for (i = 0; i < nt; i++) {
			a = p->touched[i];
			d = p->delta[a];
			x = exp(p->beta * (p->L[a] / p->cap[a] - p->uref +
			    sg * d) - mx);
			zs += x;
			s1 += x * d;
			s2 += x * d * d;
		}
		g = s1 / zs + kc;
		if (!isfinite(g))
			return 0;
		if (it == 0 && g <= 0)
			return 1;
		gg = p->beta * (s2 / zs - (s1 / zs) * (s1 / zs));
		if (g > 0)
			hi = sg;
		else
			lo = sg;
		if (hi - lo < 1e-9)
			break;
		x = gg > 0 ? sg - g / gg : -1;
		sg = (x > lo && x < hi) ? x : 0.5 * (lo + hi);
	}
	return lo;
}

/* One block step for source si; returns the step length taken. */
static double
step(struct pot *p, size_t si)
{
	double *f = p->f + si * p->n_arcs, kc = 0, sg, nx;
	size_t a, i, nt = 0;
	bool high = false;

	/* Z exactly: incremental updates lose digits when the top arc falls. */
	p->Z = 0;
	for (a = 0; a < p->n_arcs; a++)
		p->Z += p->ex[a];
	if (p->Z < 1e-100)
		reprice(p);	/* the top arc fell far: shift the exponents */
	for (a = 0; a < p->n_arcs; a++)
		if (p->cap[a] > 0)
			p->len[a] = p->ex[a] / (p->Z * p->cap[a]) +
			    p->eta * p->metric[a];
	dijkstra(p, &p->sp, p->src_node[si], p->len);
	memset(p->t, 0, p->n_arcs * sizeof(double));
	tree_flow(p, &p->sp, si, p->t);
	for (a = 0; a < p->n_arcs; a++) {
		if (p->cap[a] <= 0 || p->t[a] == f[a])
			continue;
		p->touched[nt++] = a;
		p->delta[a] = (p->t[a] - f[a]) / p->cap[a];
		kc += p->eta * p->metric[a] * (p->t[a] - f[a]);
	}
	if (nt == 0 || (sg = line_search(p, nt, kc)) <= 0)
		return 0;
	for (i = 0; i < nt; i++) {
		a = p->touched[i];
		f[a] += sg * (p->t[a] - f[a]);
		if (f[a] < 0)
			f[a] = 0;
		p->L[a] += sg * p->delta[a] * p->cap[a];
		if (p->L[a] < 0)
			p->L[a] = 0;
		nx = p->beta * (p->L[a] / p->cap[a] - p->uref);
		if (nx > 30)
			high = true;
		p->ex[a] = exp(fmin(nx, 600));
	}
	if (high)
		reprice(p);	/* a new top arc: shift the exponents */
	return sg;
}

/* ---- the bound ---- */

struct bound_job {
	const struct pot *p;
	const double *y;
	size_t first, stride;
	struct sp sp;
	double sum;
};

static void *
bound_run(void *arg)
{
	struct bound_job *j = arg;
	size_t si;

	j->sum = 0;
	for (si = j->first; si < j->p->n_src; si += j->stride) {
		dijkstra(j->p, &j->sp, j->p->src_node[si], j->y);
		j->sum += tree_flow(j->p, &j->sp, si, NULL);
	}
	return NULL;
}

/*
 * sum_k d_k dist_y(s_k, t_k) over all demands: the shortest paths of all
 * sources under lengths y, on up to POT_THREADS threads.
 */
static double
dist_sum(const struct pot *p, const double *y)
{
	struct bound_job job[POT_THREADS];
	pthread_t th[POT_THREADS];
	bool started[POT_THREADS];
	size_t i, nth = POT_THREADS;
	double sum = 0;

	for (i = 0; i < nth; i++) {
		job[i].p = p;
		job[i].y = y;
		job[i].first = i;
		job[i].stride = nth;
		sp_init(&job[i].sp, p->n);
		started[i] = i > 0 &&
		    pthread_create(&th[i], NULL, bound_run, &job[i]) == 0;
	}
	bound_run(&job[0]);
	for (i = 1; i < nth; i++) {
		if (started[i])
			pthread_join(th[i], NULL);
		else
			bound_run(&job[i]);
	}
	for (i = 0; i < nth; i++) {
		sum += job[i].sum;
		sp_free(&job[i].sp);
	}
	return sum;
}

/*
 * The dual bound on the least max utilisation for arc weights w >= 0
 * (any scale) as lengths y_a = w_a / c_a (into y):
 * sum_k d_k dist_y(k) / sum_a c_a y_a.  The weights are the softmax
 * weights ex of now, or their sum over the passes since the last bound
 * (dual averaging: the average often certifies more than the last
 * weights alone).
 */
static double
bound(const struct pot *p, const double *w, double *y)
{
	size_t a;
	double norm = 0;

	for (a = 0; a < p->n_arcs; a++) {
		y[a] = p->cap[a] > 0 ? w[a] / p->cap[a] : 0;
		norm += p->cap[a] > 0 ? w[a] : 0;
	}
	if (!(norm > 0))
		return 0;
	return dist_sum(p, y) / norm;
}

/* Adds this pass's softmax weights ex / Z to yavg. */
static void
average_in(const struct pot *p, double *yavg)
{
	size_t a;

	for (a = 0; a < p->n_arcs; a++)
		if (p->Z > 0)
			yavg[a] += p->ex[a] / p->Z;
}

static bool
out_of_time(const struct pot *p)
{
	return solve_cancelled(p->o) || (p->o->time_limit_s > 0 &&
	    clock_ms() - p->t0 >= p->o->time_limit_s * 1e3);
}

/* ---- set-up, the loop, the plan ---- */

void
form_pot_free(struct pot *p)
{
	if (p == NULL)
		return;
	free(p->tail);
	free(p->head);
	free(p->out_start);
	free(p->out_arc);
	free(p->cap);
	free(p->metric);
	free(p->src_node);
	free(p->src_start);
	free(p->src_dem);
	free(p->want);
	free(p->f);
	free(p->L);
	free(p->len);
	free(p->ex);
	free(p->t);
	free(p->touched);
	free(p->delta);
	sp_free(&p->sp);
	free(p);
}

/* Arcs, capacities, sources and their demands; cut-off demands get 0. */
static void
setup(struct pot *p)
{
	const struct model *m = p->m;
	size_t a, i, k, v, *src_of, *fill;
	double cmax = 0;
	bool *cut;

	p->n = m->n_nodes;
	p->n_arcs = 2 * m->n_links;
	p->m_demands = m->n_demands;
	p->tail = xcalloc(p->n_arcs + 1, sizeof(size_t));
	p->head = xcalloc(p->n_arcs + 1, sizeof(size_t));
	p->cap = xcalloc(p->n_arcs + 1, sizeof(double));
	p->metric = xcalloc(p->n_arcs + 1, sizeof(double));
	for (i = 0; i < m->n_links; i++)
		if (m->links[i].up && m->links[i].capacity_bps > cmax)
			cmax = m->links[i].capacity_bps;
	p->scale = cmax > 0 ? cmax : 1;
	for (a = 0; a < p->n_arcs; a++) {
		const struct link *l = &m->links[a / 2];

		p->tail[a] = a % 2 == 0 ? l->a : l->b;
		p->head[a] = a % 2 == 0 ? l->b : l->a;
		p->cap[a] = l->up ? l->capacity_bps / p->scale : 0;
		p->metric[a] = l->te_metric;
		if (p->cap[a] > 0)
			p->n_up++;
	}
	p->out_start = xcalloc(p->n + 1, sizeof(size_t));
	p->out_arc = xcalloc(p->n_arcs + 1, sizeof(size_t));
	for (a = 0; a < p->n_arcs; a++)
		if (p->cap[a] > 0)
			p->out_start[p->tail[a] + 1]++;
	for (v = 0; v < p->n; v++)
		p->out_start[v + 1] += p->out_start[v];
	fill = xcalloc(p->n + 1, sizeof(size_t));
	for (a = 0; a < p->n_arcs; a++)
		if (p->cap[a] > 0)
			p->out_arc[p->out_start[p->tail[a]] + fill[p->tail[a]]++] =
			    a;
	free(fill);

	cut = xcalloc(m->n_demands + 1, sizeof(bool));
	model_cut_off(m, cut, NULL);
	p->want = xcalloc(m->n_demands + 1, sizeof(double));
	src_of = xcalloc(p->n + 1, sizeof(size_t));
	for (v = 0; v < p->n; v++)
		src_of[v] = SIZE_MAX;
	p->src_node = xcalloc(p->n + 1, sizeof(size_t));
	p->src_start = xcalloc(p->n + 2, sizeof(size_t));
	for (k = 0; k < m->n_demands; k++) {
		if (cut[k] || !(m->demands[k].rate_bps > 0))
			continue;
		p->want[k] = m->demands[k].rate_bps / p->scale;
		v = m->demands[k].src;
		if (src_of[v] == SIZE_MAX) {
			src_of[v] = p->n_src;
			p->src_node[p->n_src++] = v;
		}
		p->src_start[src_of[v] + 1]++;
	}
	for (i = 0; i < p->n_src; i++)
		p->src_start[i + 1] += p->src_start[i];
	p->src_dem = xcalloc(p->src_start[p->n_src] + 1, sizeof(size_t));
	fill = xcalloc(p->n_src + 1, sizeof(size_t));
	for (k = 0; k < m->n_demands; k++) {
		if (p->want[k] <= 0)
			continue;
		i = src_of[m->demands[k].src];
		p->src_dem[p->src_start[i] + fill[i]++] = k;
	}
	free(fill);
	free(src_of);
	free(cut);

	p->f = xcalloc(p->n_src * p->n_arcs + 1, sizeof(double));
	p->L = xcalloc(p->n_arcs + 1, sizeof(double));
	p->len = xcalloc(p->n_arcs + 1, sizeof(double));
	p->ex = xcalloc(p->n_arcs + 1, sizeof(double));
	p->t = xcalloc(p->n_arcs + 1, sizeof(double));
	p->touched = xcalloc(p->n_arcs + 1, sizeof(size_t));
	p->delta = xcalloc(p->n_arcs + 1, sizeof(double));
	sp_init(&p->sp, p->n);
}

/*
 * Starts from shortest TE-metric paths (the cheapest plan); with
 * set_scale, divides the metric by that plan's cost C0 (a restart keeps
 * the scale it has).
 */
static void
start_cheapest(struct pot *p, bool set_scale)
{
	size_t si, a;
	double c0 = 0;

	for (si = 0; si < p->n_src; si++) {
		dijkstra(p, &p->sp, p->src_node[si], p->metric);
		tree_flow(p, &p->sp, si, p->f + si * p->n_arcs);
		for (a = 0; a < p->n_arcs; a++)
			p->L[a] += p->f[si * p->n_arcs + a];
	}
	for (a = 0; a < p->n_arcs; a++)
		c0 += p->metric[a] * p->L[a];
	if (set_scale && c0 > 0)
		for (a = 0; a < p->n_arcs; a++)
			p->metric[a] /= c0;
}


/* Folds paths below PRUNE_REL of a route's traffic into its largest. */
static size_t
prune(struct plan_route *r)
{
	size_t i, kept = 1;
	double moved = 0;

	if (r->n_paths < 2)
		return r->n_paths;
	for (i = 1; i < r->n_paths; i++) {
		if (r->paths[i].rate_bps >= PRUNE_REL * r->carried_bps) {
			r->paths[kept++] = r->paths[i];
			continue;
		}
		moved += r->paths[i].rate_bps;
		free(r->paths[i].arcs);
	}
	r->paths[0].rate_bps += moved;
	r->n_paths = kept;
	return kept;
}

/* The routes from the flows; returns the number of paths. */
static size_t
routes(struct pot *p, struct plan *pl)
{
	const struct model *m = p->m;
	struct decomp *dc;
	size_t si, i, j, k, n_paths = 0, *dem, *dst;
	double *flow, *want;

	dc = decomp_new(p->n, p->n_arcs, p->tail, p->head);
	dem = xcalloc(p->src_start[p->n_src] + 1, sizeof(size_t));
	dst = xcalloc(p->src_start[p->n_src] + 1, sizeof(size_t));
	want = xcalloc(p->src_start[p->n_src] + 1, sizeof(double));
	flow = xcalloc(p->n_arcs + 1, sizeof(double));
	for (si = 0; si < p->n_src; si++) {
		memcpy(flow, p->f + si * p->n_arcs,
		    p->n_arcs * sizeof(double));
		j = 0;
		for (i = p->src_start[si]; i < p->src_start[si + 1]; i++) {
			k = p->src_dem[i];
			dem[j] = k;
			dst[j] = m->demands[k].dst;
			want[j++] = p->want[k];
		}
		decomp_source(dc, p->src_node[si], flow, POT_DUST, j, dem,
		    dst, want, p->scale, pl->routes);
	}
	for (k = 0; k < m->n_demands; k++)
		n_paths += prune(&pl->routes[k]);
	decomp_free(dc);
	free(dem);
	free(dst);
	free(want);
	free(flow);
	return n_paths;
}

static void
add_stage(struct plan *pl, const char *name, double obj, int iters,
    double ms)
{
	struct plan_stage *s;

	if (pl->n_stages >= PLAN_STAGES_MAX)
		return;
	s = &pl->stages[pl->n_stages++];
	snprintf(s->name, sizeof(s->name), "%s", name);
	s->objective = obj;
	s->iterations = iters;
	s->ms = ms;
	s->lp_objective = obj;
}

/*
 * Whether old was set up for a model of nw's shape: the same arcs (ends),
 * sources and demands per source.  Capacities, link states and rates may
 * differ.
 */
static bool
same_shape(const struct pot *old, const struct pot *nw)
{
	return old->n == nw->n && old->n_arcs == nw->n_arcs &&
	    old->n_src == nw->n_src && old->m_demands == nw->m_demands &&
	    memcmp(old->tail, nw->tail, nw->n_arcs * sizeof(size_t)) == 0 &&
	    memcmp(old->head, nw->head, nw->n_arcs * sizeof(size_t)) == 0 &&
	    memcmp(old->src_node, nw->src_node,
	    nw->n_src * sizeof(size_t)) == 0 &&
	    memcmp(old->src_start, nw->src_start,
	    (nw->n_src + 1) * sizeof(size_t)) == 0 &&
	    memcmp(old->src_dem, nw->src_dem,
	    nw->src_start[nw->n_src] * sizeof(size_t)) == 0;
}

/*
 * Moves the flow of every source on arc a (now down) to a shortest path,
 * under nw's current lengths, from a's tail to its head: conservation
 * holds again and the rest of each flow stays as it was.  Returns false
 * when no such path exists.
 */
static bool
detour(struct pot *nw, size_t a)
{
	size_t si, v, b, *path, n_path = 0;
	double x, *f;

	dijkstra(nw, &nw->sp, nw->tail[a], nw->len);
	if (!(nw->sp.dist[nw->head[a]] < INFINITY))
		return false;
	path = xcalloc(nw->n + 1, sizeof(size_t));
	for (v = nw->head[a]; v != nw->tail[a]; v = nw->tail[b])
		path[n_path++] = b = nw->sp.via[v];
	for (si = 0; si < nw->n_src; si++) {
		f = nw->f + si * nw->n_arcs;
		if ((x = f[a]) <= 0)
			continue;
		f[a] = 0;
		for (v = 0; v < n_path; v++) {
			f[path[v]] += x;
			nw->L[path[v]] += x;
		}
	}
	free(path);
	return true;
}

/*
 * Starts nw from old's flows: a source whose rates are unchanged keeps its
 * flow (rescaled to the new LP unit), with the flow on each arc now down
 * moved to a detour around it; the others start again on shortest paths
 * under the lengths of the kept flows.  Returns how many sources started
 * again.
 */
static size_t
rewarm(struct pot *nw, const struct pot *old)
{
	size_t si, i, a, k, again = 0, *redo;
	double ratio = old->scale / nw->scale, *f;
	bool keep, *dead;

	redo = xcalloc(nw->n_src + 1, sizeof(size_t));
	dead = xcalloc(nw->n_arcs + 1, sizeof(bool));
	for (a = 0; a < nw->n_arcs; a++)
		nw->metric[a] = old->metric[a];
	for (si = 0; si < nw->n_src; si++) {
		keep = true;
		for (i = nw->src_start[si]; keep && i < nw->src_start[si + 1];
		    i++) {
			k = nw->src_dem[i];
			keep = fabs(old->want[k] * old->scale -
			    nw->want[k] * nw->scale) <=
			    1e-12 * nw->want[k] * nw->scale;
		}
		if (!keep) {
			redo[again++] = si;
			continue;
		}
		f = old->f + si * old->n_arcs;
		for (a = 0; a < nw->n_arcs; a++) {
			nw->f[si * nw->n_arcs + a] = f[a] * ratio;
			if (nw->cap[a] > 0)
				nw->L[a] += f[a] * ratio;
			else if (f[a] > 0)
				dead[a] = true;
		}
	}
	nw->beta = old->beta;
	reprice(nw);
	for (a = 0; a < nw->n_arcs; a++) {
		if (!dead[a] || detour(nw, a))
			continue;
		/* No way around: the sources using a start again. */
		for (si = 0; si < nw->n_src; si++) {
			f = nw->f + si * nw->n_arcs;
			if (f[a] <= 0)
				continue;
			for (k = 0; k < nw->n_arcs; k++) {
				if (nw->cap[k] > 0)
					nw->L[k] -= f[k];
				f[k] = 0;
			}
			redo[again++] = si;
		}
	}
	reprice(nw);
	for (i = 0; i < again; i++) {
		si = redo[i];
		dijkstra(nw, &nw->sp, nw->src_node[si], nw->len);
		f = nw->f + si * nw->n_arcs;
		memset(f, 0, nw->n_arcs * sizeof(double));
		tree_flow(nw, &nw->sp, si, f);
		for (a = 0; a < nw->n_arcs; a++)
			nw->L[a] += f[a];
	}
	free(redo);
	free(dead);
	return again;
}

int
form_pot_solve(struct pot **kp, const struct model *m,
    const struct solve_opts *o, struct plan **planp, struct err *e)
{
	struct pot *pp, *old = *kp;
	struct plan *pl;
	double *y, lb = 0, ub, gap = INFINITY, target, delta, nb, ts;
	double ts_bal, *yavg;
	double headroom = m->policy.headroom;
	int passes = 0, bounds = 0;
	size_t si, again = 0;
	bool warm, restarted = false;
	int cold_passes = old != NULL ? old->cold_passes : 0;

	*planp = NULL;
	*kp = NULL;
	pp = xcalloc(1, sizeof(*pp));
	pp->m = m;
	pp->o = o;
	pp->t0 = clock_ms();
	setup(pp);
	if (pp->n_src == 0) {
		form_pot_free(pp);
		form_pot_free(old);
		return POT_NO_FIT;
	}
	target = fmax(m->policy.gap_target, GAP_FLOOR);
	pp->eta = fmin(ETA_MAX, 0.1 * target);
	warm = old != NULL && same_shape(old, pp);
	if (warm)
		again = rewarm(pp, old);
	else
		start_cheapest(pp, true);
	form_pot_free(old);
	pp->cold_passes = cold_passes;

	ub = max_util(pp);
	if (!warm)
		pp->beta = log((double)pp->n_up + 1) / (0.1 * fmax(ub, 1e-12));
	else
		pp->beta = fmin(pp->beta, log((double)pp->n_up + 1) /
		    (0.05 * fmax(ub, 1e-12)));
	log_debug("potential start warm=%d restarted_sources=%zu U=%.9g",
	    (int)warm, again, ub);
	y = xcalloc(pp->n_arcs + 1, sizeof(double));
	yavg = xcalloc(pp->n_arcs + 1, sizeof(double));
	ts = clock_ms();
	for (;;) {
		reprice(pp);
		if (passes % BOUND_EVERY == 0 || (warm && passes < 2)) {
			nb = fmax(bound(pp, pp->ex, y), bound(pp, yavg, y));
			memset(yavg, 0, pp->n_arcs * sizeof(double));
			bounds++;
			if (nb > lb)
				lb = nb;
			ub = max_util(pp);
			gap = ub > 0 ? (ub - lb) / ub : 0;
			log_debug("potential pass=%d beta=%.4g U=%.9g bound=%.9g "
			    "gap=%.3g ms=%.0f", passes, pp->beta, ub, lb, gap,
			    clock_ms() - pp->t0);
			if (lb > headroom * (1 + 1e-9))
				break;	/* cannot fit */
			/*
			 * Room for the folding of small paths, which moves U
			 * by about 1e-5 relative on the Kdl cases.
			 */
			if (gap <= STOP_SHARE * target && ub <= headroom)
				break;
			delta = fmax(gap, target) / 3;
			if (log((double)pp->n_up + 1) / (delta * ub) > pp->beta) {
				pp->beta = log((double)pp->n_up + 1) /
				    (delta * ub);
				reprice(pp);
			}
		}
		if (passes >= PASSES_MAX || out_of_time(pp))
			break;
		/*
		 * A warm start that takes longer than the last cold solve
		 * (a changed optimum under a sharp potential): start cold,
		 * bound and all (a bound kept from the warm passes would
		 * sharpen beta before the flows are near the optimum).
		 */
		if (warm && !restarted && passes > pp->cold_passes + 4) {
			log_debug("potential: warm start slower than cold "
			    "(%d passes), starting cold", passes);
			memset(pp->f, 0, pp->n_src * pp->n_arcs * sizeof(double));
			memset(pp->L, 0, pp->n_arcs * sizeof(double));
			start_cheapest(pp, false);
			ub = max_util(pp);
			pp->beta = log((double)pp->n_up + 1) / (0.1 * fmax(ub,
			    1e-12));
			restarted = true;
			passes = 0;
			lb = 0;
			memset(yavg, 0, pp->n_arcs * sizeof(double));
			continue;
		}
		average_in(pp, yavg);
		for (si = 0; si < pp->n_src; si++)
			step(pp, si);
		passes++;
	}
	free(y);
	free(yavg);
	ub = max_util(pp);
	if (lb > headroom * (1 + 1e-9) || ub > headroom) {
		log_info("potential method: the matrix does not fit or was not "
		    "shown to fit (U %.6g, bound %.6g, headroom %.3g); exact "
		    "stages follow", ub, lb, headroom);
		form_pot_free(pp);
		return POT_NO_FIT;
	}
	if (solve_cancelled(o)) {
		form_pot_free(pp);
		return err_set(e, ERR_TIMEOUT, NULL, "solve cancelled");
	}

	ts_bal = clock_ms() - ts;

	pl = xcalloc(1, sizeof(*pl));
	pl->objective = m->policy.objective;
	pl->model_revision = m->revision;
	pl->n_routes = m->n_demands;
	pl->routes = xcalloc(m->n_demands + 1, sizeof(*pl->routes));
	pl->n_arcs = pp->n_arcs;
	pl->arcs = xcalloc(pp->n_arcs + 1, sizeof(*pl->arcs));
	pl->scale_bps = pp->scale;
	add_stage(pl, "balance", ub, passes, ts_bal);
	ts = clock_ms();
	pl->columns = routes(pp, pl);
	plan_finish(m, pl, false, NULL, NULL);
	add_stage(pl, "paths", pl->total_cost, 0, clock_ms() - ts);
	pl->formulation = FORM_POT;
	pl->bound = lb;
	pl->gap = pl->max_util > 0 ? fmax(0, (pl->max_util - lb) /
	    pl->max_util) : 0;
	if (!warm || restarted)
		pp->cold_passes = passes;
	pl->iterations = passes;
	pl->cg_rounds = bounds;
	pl->warm = warm;
	pl->moved_bps = -1;
	pl->solve_ms = clock_ms() - pp->t0;
	log_debug("potential: %d passes, %d bounds, U %.9g, bound %.9g, gap "
	    "%.3g, %zu paths, %.0f ms", passes, bounds, pl->max_util, lb,
	    pl->gap, pl->columns, pl->solve_ms);
	pp->m = NULL;
	pp->o = NULL;
	*kp = pp;
	*planp = pl;
	return 0;
}
