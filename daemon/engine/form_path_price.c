/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The path formulation's pricing: shortest paths, the column pool, bounds. */

/*
 * DESIGN
 * One Dijkstra per source (binary heap, stopped once every sink of the
 * source is settled) prices all of that source's demands; see form_path.c
 * for the master these columns enter and the bound this file computes.
 */

#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "form_path_int.h"
#include "lp.h"
#include "../base/xalloc.h"

/* ---- shortest paths ---- */

/*
 * Shortest paths from s with arc weights w (INFINITY: unusable) into
 * st->dist and st->via, stopping once n_sinks nodes marked with st->mark
 * in sink_mark are settled.
 */
void
form_path_dijkstra(struct engine_state *st, size_t s, const double *w,
    size_t n_sinks)
{
	struct heap *h = &st->h;
	double *dist = st->dist, nd;
	size_t v, x, t, a, left = n_sinks;

	for (v = 0; v < st->n; v++) {
		dist[v] = INFINITY;
		h->at[v] = SIZE_MAX;
	}
	h->n = 0;
	h->dist = dist;
	dist[s] = 0;
	h->node[h->n] = s;
	h->at[s] = h->n++;
	while (h->n > 0) {
		v = heap_pop(h);
		if (st->sink_mark[v] == st->mark && --left == 0)
			break;
		for (t = st->out_start[v]; t < st->out_start[v + 1]; t++) {
			a = st->out_arc[t];
			if (w[a] == INFINITY)
				continue;
			x = st->head[a];
			nd = dist[v] + w[a];
			if (nd >= dist[x])
				continue;
			dist[x] = nd;
			st->via[x] = a;
			if (h->at[x] == SIZE_MAX) {
				h->node[h->n] = x;
				h->at[x] = h->n++;
			}
			heap_up(h, h->at[x]);
		}
	}
}

/* Marks the sinks of source si's demands with positive rate; counts them. */
size_t
form_path_mark_sinks(struct engine_state *st, size_t si)
{
	size_t i, k, n = 0;

	if (++st->mark == 0) {
		memset(st->sink_mark, 0, st->n * sizeof(*st->sink_mark));
		st->mark = 1;
	}
	for (i = st->src_start[si]; i < st->src_start[si + 1]; i++) {
		k = st->src_dem[i];
		if (st->d_lp[k] <= 0 || st->sink_mark[st->ddst[k]] == st->mark)
			continue;
		st->sink_mark[st->ddst[k]] = st->mark;
		n++;
	}
	return n;
}

/* ---- the column pool ---- */

/*
 * Appends to the pool (not yet to the LP) the path to t that st->via
 * holds, for demand k, unless k has that path already.  Returns whether
 * it was added.
 */
bool
form_path_pool_add(struct engine_state *st, size_t k)
{
	struct pcol *c;
	size_t s = st->dsrc[k], v = st->ddst[k], n = 0, i, off;
	long j;
	double cost = 0;

	while (v != s) {
		n++;
		v = st->tail[st->via[v]];
	}
	if (st->n_parcs + n > st->cap_parcs) {
		st->cap_parcs = 2 * (st->n_parcs + n) + 1024;
		st->parcs = xreallocarray(st->parcs, st->cap_parcs,
		    sizeof(*st->parcs));
	}
	off = st->n_parcs;
	v = st->ddst[k];
	for (i = n; i > 0; i--) {
		st->parcs[off + i - 1] = st->via[v];
		cost += st->metric[st->via[v]];
		v = st->tail[st->via[v]];
	}
	for (j = st->first[k]; j >= 0; j = st->cols[j].next) {
		c = &st->cols[j];
		if (c->n_arcs == n && memcmp(st->parcs + c->off,
		    st->parcs + off, n * sizeof(*st->parcs)) == 0)
			return false;
	}
	if (st->n_cols == st->cap_cols) {
		st->cap_cols = 2 * st->cap_cols + 1024;
		st->cols = xreallocarray(st->cols, st->cap_cols,
		    sizeof(*st->cols));
	}
	c = &st->cols[st->n_cols++];
	c->k = k;
	c->off = off;
	c->n_arcs = n;
	c->cost = cost;
	c->next = -1;
	c->dead = false;
	st->n_parcs += n;
	return true;
}

/* Forgets the pool's columns that are not in the LP. */
void
form_path_pool_drop(struct engine_state *st)
{
	if (st->n_cols > st->n_committed) {
		st->n_parcs = st->cols[st->n_committed].off;
		st->n_cols = st->n_committed;
	}
}

/* The objective coefficient of path column j in a stage. */
double
form_path_obj(const struct engine_state *st, enum mode md, size_t j)
{
	switch (md) {
	case M_ADMIT:
		return st->admit_U ? 0 : st->cols[j].cost;
	case M_COST:
		return st->cols[j].cost;
	case M_KEEP:
		return j < st->n_prev && st->prev_x[j] > DUST ? 0 : 1;
	default:
		return 0;
	}
}

/* The objective coefficient of u[k] in a stage (class prio for M_CLASS). */
double
form_path_u_obj(const struct engine_state *st, enum mode md, int prio,
    size_t k)
{
	if (md == M_ADMIT)
		return st->admit_U ? st->W_balance : st->W;
	if (md == M_CLASS && st->dprio[k] == prio)
		return 1;
	return 0;
}

/* Puts the pool's new columns into the LP, at zero. */
void
form_path_pool_commit(struct engine_state *st, enum mode md)
{
	struct pcol *c;
	size_t n = st->n_cols - st->n_committed, t, i, nz = 0, *beg;
	int *rows;
	double *vals, *lo, *hi, *obj;

	if (n == 0)
		return;
	beg = xcalloc(n + 1, sizeof(*beg));
	for (t = 0; t < n; t++)
		nz += st->cols[st->n_committed + t].n_arcs + 2;
	rows = xcalloc(nz, sizeof(*rows));
	vals = xcalloc(nz, sizeof(*vals));
	lo = xcalloc(n, sizeof(*lo));
	hi = xcalloc(n, sizeof(*hi));
	obj = xcalloc(n, sizeof(*obj));
	nz = 0;
	for (t = 0; t < n; t++) {
		c = &st->cols[st->n_committed + t];
		beg[t] = nz;
		rows[nz] = (int)c->k;
		vals[nz++] = 1;
		for (i = 0; i < c->n_arcs; i++) {
			rows[nz] = (int)(st->n_dem + st->parcs[c->off + i]);
			vals[nz++] = 1;
		}
		rows[nz] = st->row_cc;
		vals[nz++] = c->cost;
		lo[t] = 0;
		hi[t] = INFINITY;
		obj[t] = form_path_obj(st, md, st->n_committed + t);
		c->next = st->first[c->k];
		st->first[c->k] = (long)(st->n_committed + t);
	}
	beg[n] = nz;
	lp_add_cols_with(st->lp, (int)n, beg, rows, vals, lo, hi, obj);
	st->n_committed = st->n_cols;
	free(beg);
	free(rows);
	free(vals);
	free(lo);
	free(hi);
	free(obj);
}

/* ---- pricing ---- */

/*
 * Reads the master's duals and prices every demand with positive rate.
 * Paths with negative reduced cost go to the pool (uncommitted).  Returns
 * their count, with the Lagrangian bound of the stage in *boundp:
 *
 *   L(lam) = sum_r lam_r hi_r + min_{U in [lo, hi]} (cU + sum lam_a c_a) U
 *          + sum_k min_{x >= 0, u in [0, ub_k], sum x + u = d_k}
 *                  (sum_P c'_P x_P + c'_u u),
 *
 * the master with its non-demand rows (all "<=") moved into the objective
 * with multipliers lam <= 0 (the duals, clipped to their sign), over all
 * paths.  c'_P is the shortest-path length m_k under w (plus the stage's
 * constant per path), so demand k's term is d m_k + min(0, ub (c'_u - m_k)).
 * L(lam) <= the stage's optimum for any lam <= 0 (weak duality).
 */
size_t
form_path_price(struct engine_state *st, enum mode md, int prio,
    double *boundp)
{
	struct pcol *c;
	double alpha, beta, lam_cc = 0, L = 0, cU, mk, ck, cu, y, rc;
	double lam_cls[NPRIO];
	size_t a, si, i, k, n_sinks, added = 0, t;
	long j;
	int p;

	alpha = md == M_COST || (md == M_ADMIT && !st->admit_U) ? 1 : 0;
	beta = md == M_KEEP ? 1 : 0;
	if (st->cc_on) {
		lam_cc = fmin(0, lp_row_dual(st->lp, st->row_cc));
		L += lam_cc * st->cc_hi;
	}
	for (p = 0; p < NPRIO; p++) {
		lam_cls[p] = 0;
		if (st->class_on[p]) {
			lam_cls[p] = fmin(0,
			    lp_row_dual(st->lp, st->class_row[p]));
			L += lam_cls[p] * st->class_hi[p];
		}
	}
	cU = md == M_BALANCE || (md == M_ADMIT && st->admit_U) ? 1 : 0;
	for (a = 0; a < st->n_arcs; a++) {
		if (!st->up[a / 2]) {
			st->lam[a] = 0;
			st->w[a] = INFINITY;
			continue;
		}
		st->lam[a] = fmin(0, lp_row_dual(st->lp, (int)(st->n_dem + a)));
		st->w[a] = fmax(0, (alpha - lam_cc) * st->metric[a] -
		    st->lam[a]);
		cU += st->lam[a] * st->cap_lp[a];
	}
	L += fmin(cU * st->U_lo, cU * st->U_hi);
	for (k = 0; k < st->n_dem; k++)
		st->pi[k] = st->d_lp[k] > 0 ? lp_row_dual(st->lp, (int)k) : 0;

	for (si = 0; si < st->n_src; si++) {
		if ((n_sinks = form_path_mark_sinks(st, si)) == 0)
			continue;
		form_path_dijkstra(st, st->src_node[si], st->w, n_sinks);
		for (i = st->src_start[si]; i < st->src_start[si + 1]; i++) {
			k = st->src_dem[i];
			if (st->d_lp[k] <= 0)
				continue;
			mk = st->dist[st->ddst[k]] + beta;
			if (md == M_KEEP)
				for (j = st->first[k]; j >= 0;
				    j = st->cols[j].next) {
					c = &st->cols[j];
					if (c->dead)
						continue;
					ck = form_path_obj(st, md, (size_t)j) -
					    lam_cc * c->cost;
					for (t = 0; t < c->n_arcs; t++)
						ck -= st->lam[st->parcs[c->off
						    + t]];
					mk = fmin(mk, ck);
				}
			cu = form_path_u_obj(st, md, prio, k) - lam_cls[st->dprio[k]];
			if (mk < INFINITY)
				L += st->d_lp[k] * mk +
				    fmin(0, st->u_hi[k] * (cu - mk));
			else
				L += cu * st->d_lp[k];
			y = st->pi[k];
			rc = st->dist[st->ddst[k]] + beta - y;
			if (st->dist[st->ddst[k]] < INFINITY &&
			    rc < -RC_TOL * fmax(1, fabs(y)) && form_path_pool_add(st, k))
				added++;
		}
	}
	*boundp = L;
	return added;
}

