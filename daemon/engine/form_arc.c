/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The node-arc formulation, commodities aggregated per source, and its stages. */

/*
 * DESIGN
 * One LP, built once per solve and re-optimised stage by stage from the
 * previous basis (see engine.h for the stages).  In LP units (bit/s divided
 * by scale, the largest capacity of an up link):
 *
 *   f[s][a] >= 0   flow of source s on arc a, for each source s with
 *                  positive demand and each arc a of an up link, except
 *                  arcs into s (flow into its own source is never useful)
 *   u[k] in [0, d_k]  unserved part of demand k, for each d_k > 0
 *   U              the utilisation bound (balance objective only)
 *
 *   cons_s_v:  out_s(v) - in_s(v) - sum{u_k : s_k = s, t_k = v}
 *                  = -sum{d_k : s_k = s, t_k = v}     for v != s
 *   cap_a:     sum_s f[s][a] <= h c_a      (cost)
 *              sum_s f[s][a] - c_a U <= 0  (balance)
 *
 * Conservation at s itself follows from the rows of the other nodes and
 * is left out.  U stays fixed at h until balance() moves it.
 *
 * The congestion objective adds, after admission, per up arc a:
 *
 *   l[a] >= 0, phi[a] >= 0   load and congestion cost, LP units
 *   load_a:    sum_s f[s][a] - l[a] = 0
 *   phi_a_i:   phi[a] - slope_i l[a] >= -b_i c_a   for the 6 pieces
 *              (congestion.h), so phi[a] >= Phi(l[a], c_a) and equals
 *              it wherever phi[a] has a positive price
 *
 * Phi is positively homogeneous (Phi(x l, x c) = x Phi(l, c)), so in LP
 * units it is the bit/s value divided by the scale.  Capacity rows stay
 * hard (load <= h c): the pieces above utilisation 1 bind only with h = 1
 * at full load, where they equal the piece below.
 *
 * Stages (one plan_stage each; the LP and its basis carry over):
 *   admit     min n x sum u + cost, from a crash basis of shortest-path
 *             trees (crash_basis()) with the dual simplex.  Uncongested
 *             networks are optimal at once.  If nothing is left unserved,
 *             u is pinned and the cost stage has no work left.
 *   admit-pN  otherwise, per class present: min sum u of the class
 *             (primal simplex), then a row keeps the class within its
 *             optimum; saturated links and shadow prices come from here.
 *   balance   Newton's method on U (see balance()).
 *   congestion  min sum phi (see congestion()), then a row keeps sum phi
 *             within balance_tol of that optimum.
 *   cost      min sum (metric_a / max metric) f[s][a].
 *
 * GLPK runs with a bound tolerance of 1e-10 (lp.c): demands of a few
 * bit/s on 1e10 bit/s links are 1e-10 LP units.
 *
 * After the last stage each source's flow is decomposed into paths
 * (decomp.c), and every reported load, utilisation and total is computed
 * from those paths, never from the LP's arc values, so routes and loads
 * always agree.
 */

#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "form_arc.h"
#include "congestion.h"
#include "decomp.h"
#include "heap.h"
#include "lp.h"
#include "../base/clock.h"
#include "../base/err.h"
#include "../base/log.h"
#include "../base/xalloc.h"

/* Flow at or below this many LP units is numerical dust. */
#define DUST		1e-13
/* A stage optimum at or below this share of the demand counts as zero. */
#define ZERO_REL	1e-12
/* Slack when a priority class's unserved optimum is fixed, relative. */
#define FIX_REL		1e-9
/* Slack on U when it is capped, absolute, on top of balance_tol. */
#define U_ABS		1e-12
/* Unserved traffic at or below this share of the demand: all carried. */
#define SERVED_REL	1e-9
/* Smallest shadow price (bit/s per bit/s) that marks a link saturated. */
#define PRICE_MIN	1e-9
/* Slack on sum phi when it is capped, absolute, on top of balance_tol. */
#define PHI_ABS		1e-12
/* Newton steps allowed to find the smallest U (balance()). */
#define BALANCE_STEPS_MAX	100

struct arcform {
	const struct model *m;
	const struct solve_opts *o;
	struct lp *lp;
	struct plan *p;		/* the plan being built, owned by the caller */
	double t0;		/* ms, when the solve began */
	double scale;		/* bit/s per LP unit */
	double metric_max;	/* largest TE metric of an up link */
	double headroom;
	bool balance;
	bool congestion;	/* the congestion objective */
	size_t n;		/* nodes */
	size_t n_arcs;		/* model arcs: 2 per link */
	size_t n_src;
	size_t *src_node;	/* source -> node */
	long *src_of;		/* node -> source, or -1 */
	int *cap_row;		/* model arc -> capacity row, or -1 (down) */
	int *fcol;		/* source x model arc -> column, or -1 */
	int *ucol;		/* demand -> column, or -1 (rate 0) */
	int ucol_U;		/* U's column, or -1 */
	int *phicol;		/* model arc -> phi column, or -1 (congestion
				   only, added by congestion()) */
	int vcol[MODEL_PRIO_MAX + 1];	/* class -> excess column, or -1 */
	bool all_fit;		/* admission left nothing unserved */
	enum lp_method cost_method;	/* for the last stage */
	struct lp_basis *admit_basis;	/* owned: basis after admission */
	double *d_lp;		/* demand -> rate in LP units */
	double demand_lp;	/* sum of d_lp */
	double *price;		/* model arc -> shadow price */
	bool *sat;		/* model arc -> saturated */
	bool named;		/* rows and columns have names */
	bool exported;
};

/* ---- building the LP ---- */

/* Conservation row of source si at node v (v != the source's node). */
static int
cons_row(const struct arcform *f, size_t si, size_t v)
{
	size_t s = f->src_node[si];

	return (int)(si * (f->n - 1) + (v < s ? v : v - 1));
}

/* Finds the sources, the LP unit and the metric scale. */
static int
setup(struct arcform *f, struct err *e)
{
	const struct model *m = f->m;
	size_t i, n_up = 0;
	double cap_max = 0, rate_max = 0;

	f->n = m->n_nodes;
	f->n_arcs = 2 * m->n_links;
	f->headroom = m->policy.headroom;
	f->balance = m->policy.objective == OBJ_BALANCE;
	f->congestion = m->policy.objective == OBJ_CONGESTION;
	f->src_of = xcalloc(f->n, sizeof(*f->src_of));
	f->src_node = xcalloc(f->n, sizeof(*f->src_node));
	for (i = 0; i < f->n; i++)
		f->src_of[i] = -1;
	for (i = 0; i < m->n_demands; i++) {
		if (m->demands[i].rate_bps <= 0)
			continue;
		rate_max = fmax(rate_max, m->demands[i].rate_bps);
		if (f->src_of[m->demands[i].src] < 0) {
			f->src_of[m->demands[i].src] = (long)f->n_src;
			f->src_node[f->n_src++] = m->demands[i].src;
		}
	}
	f->metric_max = 0;
	for (i = 0; i < m->n_links; i++) {
		if (!m->links[i].up)
			continue;
		n_up++;
		cap_max = fmax(cap_max, m->links[i].capacity_bps);
		f->metric_max = fmax(f->metric_max, m->links[i].te_metric);
	}
	/* With no link up, LP units follow the demands instead. */
	f->scale = cap_max > 0 ? cap_max : rate_max;
	if (f->metric_max == 0)
		f->metric_max = 1;
	if ((double)f->n_src * 2.0 * (double)n_up > FORM_ARC_COLS_MAX)
		return err_set(e, ERR_TOOBIG, NULL,
		    "the node-arc LP would have %zu x %zu flow columns, more "
		    "than %d", f->n_src, 2 * n_up, FORM_ARC_COLS_MAX);
	return 0;
}

static void
build(struct arcform *f)
{
	const struct model *m = f->m;
	const struct link *l;
	const struct demand *d;
	size_t si, a, k, s, tail, head, nnz = 0, cap_nnz;
	int *rows, *cols, n_rows, n_cons, col = 0, j;
	double *vals, *owed, c;

	n_cons = (int)(f->n_src * (f->n - 1));
	n_rows = n_cons;
	f->cap_row = xcalloc(f->n_arcs, sizeof(*f->cap_row));
	for (a = 0; a < f->n_arcs; a++)
		f->cap_row[a] = m->links[a / 2].up ? n_rows++ : -1;
	f->fcol = xcalloc(f->n_src * f->n_arcs, sizeof(*f->fcol));
	f->ucol = xcalloc(m->n_demands, sizeof(*f->ucol));
	f->d_lp = xcalloc(m->n_demands, sizeof(*f->d_lp));

	/* Number the columns: flows by source, then u, then U. */
	for (si = 0; si < f->n_src; si++) {
		s = f->src_node[si];
		for (a = 0; a < f->n_arcs; a++) {
			l = &m->links[a / 2];
			head = a % 2 == 0 ? l->b : l->a;
			f->fcol[si * f->n_arcs + a] =
			    f->cap_row[a] >= 0 && head != s ? col++ : -1;
		}
	}
	for (k = 0; k < m->n_demands; k++) {
		d = &m->demands[k];
		f->ucol[k] = d->rate_bps > 0 ? col++ : -1;
		f->d_lp[k] = d->rate_bps > 0 ? d->rate_bps / f->scale : 0;
		f->demand_lp += f->d_lp[k];
	}
	f->ucol_U = f->balance ? col++ : -1;

	lp_add_rows(f->lp, n_rows);
	lp_add_cols(f->lp, col);

	cap_nnz = f->balance ? f->n_arcs : 0;
	rows = xcalloc(3 * (size_t)col + cap_nnz, sizeof(*rows));
	cols = xcalloc(3 * (size_t)col + cap_nnz, sizeof(*cols));
	vals = xcalloc(3 * (size_t)col + cap_nnz, sizeof(*vals));
	for (si = 0; si < f->n_src; si++) {
		s = f->src_node[si];
		for (a = 0; a < f->n_arcs; a++) {
			if ((j = f->fcol[si * f->n_arcs + a]) < 0)
				continue;
			l = &m->links[a / 2];
			tail = a % 2 == 0 ? l->a : l->b;
			head = a % 2 == 0 ? l->b : l->a;
			if (tail != s) {
				rows[nnz] = cons_row(f, si, tail);
				cols[nnz] = j;
				vals[nnz++] = 1;
			}
			rows[nnz] = cons_row(f, si, head);
			cols[nnz] = j;
			vals[nnz++] = -1;
			rows[nnz] = f->cap_row[a];
			cols[nnz] = j;
			vals[nnz++] = 1;
			lp_set_col_bounds(f->lp, j, 0, INFINITY);
		}
	}
	owed = xcalloc((size_t)n_cons, sizeof(*owed));
	for (k = 0; k < m->n_demands; k++) {
		if ((j = f->ucol[k]) < 0)
			continue;
		d = &m->demands[k];
		si = (size_t)f->src_of[d->src];
		rows[nnz] = cons_row(f, si, d->dst);
		cols[nnz] = j;
		vals[nnz++] = -1;
		owed[cons_row(f, si, d->dst)] += f->d_lp[k];
		lp_set_col_bounds(f->lp, j, 0, f->d_lp[k]);
	}
	for (j = 0; j < n_cons; j++)
		lp_set_row_bounds(f->lp, j, -owed[j], -owed[j]);
	free(owed);
	for (a = 0; a < f->n_arcs; a++) {
		if (f->cap_row[a] < 0)
			continue;
		c = m->links[a / 2].capacity_bps / f->scale;
		if (f->balance) {
			rows[nnz] = f->cap_row[a];
			cols[nnz] = f->ucol_U;
			vals[nnz++] = -c;
			lp_set_row_bounds(f->lp, f->cap_row[a], -INFINITY, 0);
		} else {
			lp_set_row_bounds(f->lp, f->cap_row[a], -INFINITY,
			    f->headroom * c);
		}
	}
	/* Admission runs at full usable capacity: U = h. */
	if (f->balance)
		lp_set_col_bounds(f->lp, f->ucol_U, f->headroom, f->headroom);
	lp_load_matrix(f->lp, nnz, rows, cols, vals);
	free(rows);
	free(cols);
	free(vals);
	lp_scale(f->lp);
	log_debug("node-arc LP built rows=%d cols=%d nnz=%zu sources=%zu",
	    lp_n_rows(f->lp), lp_n_cols(f->lp), nnz, f->n_src);
}

/* Names every row and column, for export (indices keep names short). */
static void
name_all(struct arcform *f)
{
	const struct model *m = f->m;
	char buf[96];
	size_t si, v, a, k;
	int j;

	if (f->named)
		return;
	for (si = 0; si < f->n_src; si++)
		for (v = 0; v < f->n; v++) {
			if (v == f->src_node[si])
				continue;
			snprintf(buf, sizeof(buf), "cons_%zu_%zu",
			    f->src_node[si], v);
			lp_set_row_name(f->lp, cons_row(f, si, v), buf);
		}
	for (a = 0; a < f->n_arcs; a++) {
		if (f->cap_row[a] < 0)
			continue;
		snprintf(buf, sizeof(buf), "cap_%zu_%s", a / 2,
		    a % 2 == 0 ? "ab" : "ba");
		lp_set_row_name(f->lp, f->cap_row[a], buf);
		for (si = 0; si < f->n_src; si++) {
			if ((j = f->fcol[si * f->n_arcs + a]) < 0)
				continue;
			snprintf(buf, sizeof(buf), "f_%zu_%zu",
			    f->src_node[si], a);
			lp_set_col_name(f->lp, j, buf);
		}
	}
	for (k = 0; k < m->n_demands; k++) {
		if (f->ucol[k] < 0)
			continue;
		snprintf(buf, sizeof(buf), "u_%zu", k);
		lp_set_col_name(f->lp, f->ucol[k], buf);
	}
	if (f->ucol_U >= 0)
		lp_set_col_name(f->lp, f->ucol_U, "U");
	f->named = true;
}

/* ---- stages ---- */

/* Whether the next stage's LP is the one o->export_stage asks for. */
static bool
wants_export(const struct arcform *f, bool last)
{
	int idx = (int)f->p->n_stages;

	return f->o->export_path != NULL && !f->exported &&
	    (f->o->export_stage == idx || (f->o->export_stage < 0 && last));
}

/* Writes the LP as it stands to o->export_path. */
static int
export_lp(struct arcform *f, const char *name, struct err *e)
{
	name_all(f);
	if (lp_write(f->lp, f->o->export_path,
	    f->o->export_format == EXPORT_MPS ? LP_FMT_MPS : LP_FMT_LP,
	    f->o->verbose) != 0)
		return err_set(e, ERR_IO, NULL,
		    "cannot write the LP of stage %s to %s", name,
		    f->o->export_path);
	f->exported = true;
	return 0;
}

/*
 * Solves the LP as it stands, for stage name (the plan's next stage).
 * may_export: the LP may be the one o->export_stage asks for; last marks
 * the final stage (the one export_stage -1 means).  Returns 0 with the
 * result in *res, or an error with detail in e.
 */
static int
run_lp(struct arcform *f, const char *name, enum lp_method method,
    bool may_export, bool last, struct lp_result *res, struct err *e)
{
	struct lp_params prm;
	int r;

	if (solve_cancelled(f->o))
		return err_set(e, ERR_TIMEOUT, NULL,
		    "the solve was cancelled before stage %s", name);
	if (may_export && wants_export(f, last) &&
	    (r = export_lp(f, name, e)) != 0)
		return r;
	memset(&prm, 0, sizeof(prm));
	prm.method = method;
	prm.verbose = f->o->verbose;
	if (f->o->time_limit_s > 0) {
		prm.time_limit_s = f->o->time_limit_s -
		    (clock_ms() - f->t0) / 1e3;
		if (prm.time_limit_s <= 0)
			return err_set(e, ERR_TIMEOUT, NULL,
			    "time limit of %g s passed before stage %s",
			    f->o->time_limit_s, name);
	}
	r = lp_solve(f->lp, &prm, res);
	log_debug("lp solved stage=%s ret=%d status=%d iterations=%d "
	    "ms=%.1f objective=%.12g", name, r, (int)res->status,
	    res->iterations, res->ms, res->objective);
	if (r == ERR_TIMEOUT)
		return err_set(e, ERR_TIMEOUT, NULL,
		    "time limit of %g s passed in stage %s",
		    f->o->time_limit_s, name);
	if (r != 0)
		return err_set(e, ERR_SOLVER, NULL,
		    "the simplex method failed in stage %s", name);
	if (res->status != LP_OPTIMAL)
		return err_set(e, ERR_SOLVER, NULL,
		    "stage %s ended without an optimum (status %d)", name,
		    (int)res->status);
	return 0;
}

/* Appends a stage to the plan. */
static int
record(struct arcform *f, const char *name, double objective,
    double lp_objective, int iterations, double ms, struct err *e)
{
	struct plan_stage *st;

	if (f->p->n_stages == PLAN_STAGES_MAX)
		return err_set(e, ERR_INTERNAL, NULL, "too many stages");
	st = &f->p->stages[f->p->n_stages++];
	snprintf(st->name, sizeof(st->name), "%s", name);
	st->objective = objective;
	st->lp_objective = lp_objective;
	st->iterations = iterations;
	st->ms = ms;
	return 0;
}

/*
 * Solves one LP as the next stage of the plan and records it.  unit turns
 * the LP objective into the stage's reported units.  Returns 0 with the
 * LP objective in *objp, or an error with detail in e.
 */
static int
stage(struct arcform *f, const char *name, enum lp_method method,
    double unit, bool last, double *objp, struct err *e)
{
	struct lp_result res;
	int r;

	if ((r = run_lp(f, name, method, true, last, &res, e)) != 0)
		return r;
	*objp = res.objective;
	return record(f, name, res.objective * unit, res.objective,
	    res.iterations, res.ms, e);
}

/* Pins each u column of class prio (all classes: -1) where it is now. */
static void
pin_unserved(struct arcform *f, int prio)
{
	const struct model *m = f->m;
	size_t k;
	double x;

	for (k = 0; k < m->n_demands; k++) {
		if (f->ucol[k] < 0 ||
		    (prio >= 0 && m->demands[k].priority != prio))
			continue;
		x = fmin(fmax(lp_col_value(f->lp, f->ucol[k]), 0), f->d_lp[k]);
		lp_set_col_bounds(f->lp, f->ucol[k], 0, x);
	}
}

/*
 * Records shadow prices after an admission stage that left traffic of a
 * class unserved.  A more important class's price, set earlier, stays.
 */
static void
take_prices(struct arcform *f)
{
	size_t a;
	double y, act, lim, u = f->headroom, price;

	if (f->ucol_U >= 0)
		u = lp_col_value(f->lp, f->ucol_U);
	for (a = 0; a < f->n_arcs; a++) {
		if (f->cap_row[a] < 0 || f->price[a] != 0)
			continue;
		/*
		 * Minimising unserved traffic, a binding "<=" row has a
		 * non-positive dual: one more LP unit of usable capacity
		 * lowers unserved traffic by -y units.  Capacity counts
		 * times h (or U when balancing), and both sides are in the
		 * same LP units, so the ratio holds in bit/s too.
		 */
		y = lp_row_dual(f->lp, f->cap_row[a]);
		price = -y * u;
		/* The row's activity includes -c_a U when balancing. */
		act = lp_row_value(f->lp, f->cap_row[a]);
		lim = f->balance ? 0 : f->headroom *
		    f->m->links[a / 2].capacity_bps / f->scale;
		if (price > PRICE_MIN && act >= lim - 1e-9) {
			f->price[a] = price;
			f->sat[a] = true;
		}
	}
}

/* ---- a starting basis from shortest paths ---- */

/*
 * Shortest paths from s by TE metric over up arcs: dist[v] (INFINITY when
 * unreachable) and via[v], the last arc.  start/arcs list each node's
 * out-arcs.
 */
static void
dijkstra(const struct arcform *f, size_t s, const size_t *start,
    const size_t *arcs, double *dist, size_t *via, struct heap *h)
{
	const struct link *l;
	size_t v, w, t, a;
	double nd;

	for (v = 0; v < f->n; v++) {
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
		for (t = start[v]; t < start[v + 1]; t++) {
			a = arcs[t];
			l = &f->m->links[a / 2];
			w = a % 2 == 0 ? l->b : l->a;
			nd = dist[v] + l->te_metric / f->metric_max;
			if (nd >= dist[w])
				continue;
			dist[w] = nd;
			via[w] = a;
			if (h->at[w] == SIZE_MAX) {
				h->node[h->n] = w;
				h->at[w] = h->n++;
			}
			heap_up(h, h->at[w]);
		}
	}
}

/*
 * Sets the starting basis: per source, the arcs of its shortest-path tree
 * are basic in the conservation rows of the nodes they enter; a node the
 * tree misses makes one of its demands' u basic instead (or keeps its
 * row's slack).  Capacity rows keep their slacks.  Each source's block is
 * a tree incidence matrix, so the basis is triangular and non-singular.
 * It routes every demand on a shortest path: with all u at zero it is dual
 * feasible for the first stage's objective, and primal feasible unless a
 * shortest path overloads an arc, which the dual simplex then repairs.
 */
static void
crash_basis(struct arcform *f)
{
	const struct model *m = f->m;
	const struct demand *d;
	struct heap h;
	size_t *start, *arcs, *via, *fill, si, s, v, a, k;
	double *dist;
	bool *done;

	start = xcalloc(f->n + 1, sizeof(*start));
	arcs = xcalloc(f->n_arcs + 1, sizeof(*arcs));
	fill = xcalloc(f->n + 1, sizeof(*fill));
	for (a = 0; a < f->n_arcs; a++)
		if (f->cap_row[a] >= 0)
			start[(a % 2 == 0 ? m->links[a / 2].a :
			    m->links[a / 2].b) + 1]++;
	for (v = 0; v < f->n; v++)
		start[v + 1] += start[v];
	for (a = 0; a < f->n_arcs; a++)
		if (f->cap_row[a] >= 0) {
			v = a % 2 == 0 ? m->links[a / 2].a : m->links[a / 2].b;
			arcs[start[v] + fill[v]++] = a;
		}
	dist = xcalloc(f->n, sizeof(*dist));
	via = xcalloc(f->n, sizeof(*via));
	done = xcalloc(f->n_src * f->n, sizeof(*done));
	h.node = xcalloc(f->n, sizeof(*h.node));
	h.at = xcalloc(f->n, sizeof(*h.at));
	for (si = 0; si < f->n_src; si++) {
		s = f->src_node[si];
		dijkstra(f, s, start, arcs, dist, via, &h);
		for (v = 0; v < f->n; v++) {
			if (v == s || dist[v] == INFINITY)
				continue;
			lp_set_col_stat(f->lp, f->fcol[si * f->n_arcs + via[v]],
			    LP_BASIC);
			lp_set_row_stat(f->lp, cons_row(f, si, v),
			    LP_NONBASIC);
			done[si * f->n + v] = true;
		}
	}
	for (k = 0; k < m->n_demands; k++) {
		if (f->ucol[k] < 0)
			continue;
		d = &m->demands[k];
		si = (size_t)f->src_of[d->src];
		if (done[si * f->n + d->dst])
			continue;
		lp_set_col_stat(f->lp, f->ucol[k], LP_BASIC);
		lp_set_row_stat(f->lp, cons_row(f, si, d->dst), LP_NONBASIC);
		done[si * f->n + d->dst] = true;
	}
	free(start);
	free(arcs);
	free(fill);
	free(dist);
	free(via);
	free(done);
	free(h.node);
	free(h.at);
}

/* Sets the objective to sum (TE metric / largest metric) x flow. */
static void
set_cost_obj(struct arcform *f)
{
	size_t si, a;
	int j;

	for (si = 0; si < f->n_src; si++)
		for (a = 0; a < f->n_arcs; a++)
			if ((j = f->fcol[si * f->n_arcs + a]) >= 0)
				lp_set_obj(f->lp, j,
				    f->m->links[a / 2].te_metric /
				    f->metric_max);
}

/*
 * The weight of unserved traffic in the first LP: a path has at most
 * n - 1 arcs of scaled metric <= 1, so carrying one LP unit on a shortest
 * path costs less than n.
 */
static double
admit_weight(const struct arcform *f)
{
	return (double)f->n;
}

/* Sum of the u columns, LP units. */
static double
sum_unserved(const struct arcform *f)
{
	size_t k;
	double z = 0;

	for (k = 0; k < f->m->n_demands; k++)
		if (f->ucol[k] >= 0)
			z += fmax(lp_col_value(f->lp, f->ucol[k]), 0);
	return z;
}

/*
 * Stage 1: serve as much as fits, by priority class.
 *
 * The first LP, "admit", asks whether everything fits.  It minimises
 * W x sum u plus the cost (with U = h when balancing).  If its optimum
 * leaves nothing unserved, that point is also optimal for cost under "all
 * served", so the cost stage finds its basis optimal and does no work.
 * W (admit_weight()) makes serving worth more than any saving in cost in
 * the usual case; where it is not enough, the optimum leaves traffic
 * unserved and the exact per-class stages below run, so W never changes
 * the result.  The stage reports the unserved traffic at its optimum.
 */
static int
admit(struct arcform *f, struct err *e)
{
	const struct model *m = f->m;
	int prio, *rc = NULL, n_rc, row, col, r;
	double minus1 = -1;
	double z, w, *rv = NULL, class_lp[MODEL_PRIO_MAX + 1];
	char name[32];
	size_t k;

	memset(class_lp, 0, sizeof(class_lp));
	lp_clear_obj(f->lp);
	w = admit_weight(f);
	for (k = 0; k < m->n_demands; k++)
		if (f->ucol[k] >= 0) {
			lp_set_obj(f->lp, f->ucol[k], w);
			class_lp[m->demands[k].priority] += f->d_lp[k];
		}
	set_cost_obj(f);
	crash_basis(f);
	if ((r = stage(f, "admit", LP_DUAL, f->scale, false, &z, e)) != 0)
		return r;
	z = sum_unserved(f);
	f->p->stages[f->p->n_stages - 1].objective = z * f->scale;
	if (z <= ZERO_REL * fmax(1, f->demand_lp)) {
		f->all_fit = true;
		/* Balancing pins u after it has used them (balance()). */
		if (!f->balance)
			pin_unserved(f, -1);
		goto saved;
	}

	rc = xcalloc(m->n_demands, sizeof(*rc));
	rv = xcalloc(m->n_demands, sizeof(*rv));
	for (prio = 0; prio <= MODEL_PRIO_MAX; prio++) {
		if (class_lp[prio] == 0)
			continue;
		lp_clear_obj(f->lp);
		n_rc = 0;
		for (k = 0; k < m->n_demands; k++)
			if (f->ucol[k] >= 0 && m->demands[k].priority == prio) {
				lp_set_obj(f->lp, f->ucol[k], 1);
				rc[n_rc] = f->ucol[k];
				rv[n_rc++] = 1;
			}
		snprintf(name, sizeof(name), "admit-p%d", prio);
		if ((r = stage(f, name, LP_PRIMAL, f->scale, false, &z,
		    e)) != 0)
			goto out;
		if (z > ZERO_REL * fmax(1, class_lp[prio]))
			take_prices(f);
		/*
		 * Later stages may not serve this class any worse.  A class
		 * served in full gets its row too (not pinned demand by
		 * demand), so that balance() can probe any U, down to 0,
		 * and read from v_p how far the class would miss.
		 */
		row = lp_add_row(f->lp, n_rc, rc, rv, -INFINITY,
		    z * (1 + FIX_REL) + DUST);
		snprintf(name, sizeof(name), "admit_p%d", prio);
		lp_set_row_name(f->lp, row, name);
		/*
		 * v_p, fixed at 0 but for balance(), lets the row be
		 * violated at a price, which tells how far U is too low.
		 */
		col = lp_add_cols(f->lp, 1);
		lp_set_col_entries(f->lp, col, 1, &row, &minus1);
		lp_set_col_bounds(f->lp, col, 0, 0);
		snprintf(name, sizeof(name), "v_p%d", prio);
		lp_set_col_name(f->lp, col, name);
		f->vcol[prio] = col;
	}
saved:
	if (f->balance && f->all_fit)
		f->admit_basis = lp_basis_save(f->lp);
	r = 0;
out:
	free(rc);
	free(rv);
	return r;
}

/*
 * A lower bound on U when everything fits: each node must send its
 * demand out over its own arcs, and receive its demand over them.
 */
static double
u_lower_bound(const struct arcform *f)
{
	const struct model *m = f->m;
	const struct link *l;
	double *out_d, *in_d, *out_c, *in_c, lb = 0;
	size_t k, i, v;

	out_d = xcalloc(f->n, sizeof(*out_d));
	in_d = xcalloc(f->n, sizeof(*in_d));
	out_c = xcalloc(f->n, sizeof(*out_c));
	in_c = xcalloc(f->n, sizeof(*in_c));
	for (k = 0; k < m->n_demands; k++) {
		out_d[m->demands[k].src] += f->d_lp[k];
		in_d[m->demands[k].dst] += f->d_lp[k];
	}
	for (i = 0; i < m->n_links; i++) {
		l = &m->links[i];
		if (!l->up)
			continue;
		out_c[l->a] += l->capacity_bps / f->scale;
		out_c[l->b] += l->capacity_bps / f->scale;
		in_c[l->a] += l->capacity_bps / f->scale;
		in_c[l->b] += l->capacity_bps / f->scale;
	}
	for (v = 0; v < f->n; v++) {
		if (out_c[v] > 0)
			lb = fmax(lb, out_d[v] / out_c[v]);
		if (in_c[v] > 0)
			lb = fmax(lb, in_d[v] / in_c[v]);
	}
	free(out_d);
	free(in_d);
	free(out_c);
	free(in_c);
	return fmin(lb, f->headroom);
}

/*
 * Writes the balance stage as the LP it stands for: minimise U with the
 * admission decided (all demand carried, or each class held at its
 * admitted optimum) and U in [0, h].  Its optimum is the U that Newton's
 * method finds, so a model exported for inspection can be solved by any
 * LP solver and compared with the stage's lp_objective.  The LP is put
 * back as it was afterwards.
 */
static int
export_balance(struct arcform *f, struct err *e)
{
	const struct model *m = f->m;
	size_t k;
	int r;

	lp_clear_obj(f->lp);
	lp_set_obj(f->lp, f->ucol_U, 1);
	lp_set_col_bounds(f->lp, f->ucol_U, 0, f->headroom);
	if (f->all_fit)
		for (k = 0; k < m->n_demands; k++)
			if (f->ucol[k] >= 0)
				lp_set_col_bounds(f->lp, f->ucol[k], 0, 0);
	r = export_lp(f, "balance", e);
	if (f->all_fit)
		for (k = 0; k < m->n_demands; k++)
			if (f->ucol[k] >= 0)
				lp_set_col_bounds(f->lp, f->ucol[k], 0,
				    f->d_lp[k]);
	return r;
}

/*
 * Stage 2 (balance only): find the smallest U under which the admitted
 * traffic still fits, then cap U there (plus balance_tol).
 *
 * Minimising U directly makes every capacity row carry the same variable
 * and leaves the simplex crawling through a very degenerate LP.  Instead
 * U is held fixed and g(U), the traffic that does not fit under U, is
 * minimised: the u columns when admission served everything, else the
 * excess columns v_p of the class rows.  g is convex, piecewise linear
 * and non-increasing in U, and U's reduced cost is a subgradient, so
 * Newton's method from below (U_next = U - g / g') never overshoots and
 * ends on the exact breakpoint where g reaches 0.  Each step only moves
 * U's bounds, so the dual simplex goes on from the previous basis.  When
 * everything fit, the start is a lower bound (node cuts), and optimal if
 * it fits.  Otherwise it is just below h, and is halved while it fits.
 * The recorded stage sums the steps.
 */
static int
balance(struct arcform *f, struct err *e)
{
	const struct model *m = f->m;
	struct lp_result res;
	double U, g, slope, next, gtol, ms = 0;
	int steps, iters = 0, r, p;
	bool from_below = false;
	size_t k;

	if (wants_export(f, false) && (r = export_balance(f, e)) != 0)
		return r;
	lp_clear_obj(f->lp);
	if (f->all_fit) {
		for (k = 0; k < m->n_demands; k++)
			if (f->ucol[k] >= 0)
				lp_set_obj(f->lp, f->ucol[k], 1);
		U = u_lower_bound(f);
	} else {
		for (p = 0; p <= MODEL_PRIO_MAX; p++)
			if (f->vcol[p] >= 0) {
				lp_set_col_bounds(f->lp, f->vcol[p], 0,
				    INFINITY);
				lp_set_obj(f->lp, f->vcol[p], 1);
			}
		/* Admission limited by capacity usually leaves U* = h. */
		U = f->headroom * (1 - 1e-6);
	}
	gtol = ZERO_REL * fmax(1, f->demand_lp);
	for (steps = 0;; steps++) {
		if (steps == BALANCE_STEPS_MAX)
			return err_set(e, ERR_SOLVER, NULL,
			    "balance: no convergence after %d steps", steps);
		lp_set_col_bounds(f->lp, f->ucol_U, U, U);
		if ((r = run_lp(f, "balance", LP_DUAL, steps == 0, false,
		    &res, e)) != 0)
			return r;
		iters += res.iterations;
		ms += res.ms;
		g = res.objective;
		log_debug("balance step=%d U=%.12g g=%.6g iterations=%d",
		    steps, U, g, res.iterations);
		if (g <= gtol) {
			/*
			 * Newton's method on the convex, decreasing,
			 * piecewise-linear g(U) climbs from below and stops
			 * at the smallest U that fits.  A U that fits is
			 * therefore the optimum only when it was reached from
			 * a lower bound (a U under which traffic did not fit):
			 * after admission limited traffic, the start (just
			 * under h) need not be one, so restart from U = 0,
			 * which always is.
			 */
			if (f->all_fit || U <= 0 || from_below)
				break;
			U = 0;
			from_below = true;
			continue;
		}
		/* Traffic does not fit under U: U is below the optimum. */
		from_below = true;
		slope = lp_col_dual(f->lp, f->ucol_U);
		if (!(slope < 0))
			return err_set(e, ERR_SOLVER, NULL,
			    "balance: traffic does not fit under U = %g and "
			    "more capacity does not help", U);
		next = fmin(U - g / slope, f->headroom);
		if (next <= U * (1 + 1e-15)) {
			U = next;
			break;
		}
		U = next;
	}
	/* U is the optimum of the exported min-U LP (export_balance()). */
	if ((r = record(f, "balance", U, U, iters, ms, e)) != 0)
		return r;

	lp_set_col_bounds(f->lp, f->ucol_U, 0, fmin(f->headroom,
	    U * (1 + m->policy.balance_tol) + U_ABS));
	if (f->all_fit)
		pin_unserved(f, -1);
	for (p = 0; p <= MODEL_PRIO_MAX; p++)
		if (f->vcol[p] >= 0)
			lp_set_col_bounds(f->lp, f->vcol[p], 0, fmax(0,
			    lp_col_value(f->lp, f->vcol[p])));
	/*
	 * When everything fit, the basis of "admit" is cost-optimal at
	 * U = h; lowering U keeps it dual feasible, so the dual simplex
	 * repairs it far faster than the primal simplex improves Newton's
	 * last basis (measured: 10x fewer iterations).  After per-class
	 * admission that basis optimises another objective: the primal
	 * simplex goes on from Newton's last, feasible basis instead.
	 */
	if (f->all_fit) {
		lp_basis_load(f->lp, f->admit_basis);
		f->cost_method = LP_DUAL;
	}
	return 0;
}

/*
 * Stage 2 (congestion only): minimise sum phi over the admitted traffic,
 * then cap sum phi there (plus balance_tol), as balance caps U.
 *
 * The load and piece rows join the LP only now, so admission is the same
 * for every objective.  New rows start with their slacks basic and new
 * columns non-basic at 0; with the objective on the phi columns alone the
 * basic variables all cost 0, so every reduced cost is the column's own
 * cost, >= 0: the basis is dual feasible and the dual simplex repairs the
 * rows that the current flows violate.
 */
static int
congestion(struct arcform *f, struct err *e)
{
	const struct model *m = f->m;
	const struct congestion_piece *pc;
	char name[64];
	size_t si, a;
	int *rc, *pcol, n_rc, j, row, lcol, i, r;
	double *rv, c, z;

	f->phicol = xcalloc(f->n_arcs, sizeof(*f->phicol));
	rc = xcalloc(f->n_src + 1, sizeof(*rc));
	rv = xcalloc(f->n_src + 1, sizeof(*rv));
	pcol = xcalloc(f->n_arcs + 1, sizeof(*pcol));
	lp_clear_obj(f->lp);
	for (a = 0; a < f->n_arcs; a++) {
		f->phicol[a] = -1;
		if (f->cap_row[a] < 0)
			continue;
		c = m->links[a / 2].capacity_bps / f->scale;
		lcol = lp_add_cols(f->lp, 2);
		f->phicol[a] = lcol + 1;
		lp_set_col_bounds(f->lp, lcol, 0, INFINITY);
		lp_set_col_bounds(f->lp, lcol + 1, 0, INFINITY);
		snprintf(name, sizeof(name), "l_%zu_%s", a / 2,
		    a % 2 == 0 ? "ab" : "ba");
		lp_set_col_name(f->lp, lcol, name);
		snprintf(name, sizeof(name), "phi_%zu_%s", a / 2,
		    a % 2 == 0 ? "ab" : "ba");
		lp_set_col_name(f->lp, lcol + 1, name);
		lp_set_obj(f->lp, lcol + 1, 1);

		n_rc = 0;
		for (si = 0; si < f->n_src; si++)
			if ((j = f->fcol[si * f->n_arcs + a]) >= 0) {
				rc[n_rc] = j;
				rv[n_rc++] = 1;
			}
		rc[n_rc] = lcol;
		rv[n_rc++] = -1;
		row = lp_add_row(f->lp, n_rc, rc, rv, 0, 0);
		snprintf(name, sizeof(name), "load_%zu_%s", a / 2,
		    a % 2 == 0 ? "ab" : "ba");
		lp_set_row_name(f->lp, row, name);

		for (i = 0; i < CONGESTION_PIECES; i++) {
			pc = &congestion_pieces[i];
			rc[0] = lcol + 1;
			rv[0] = 1;
			rc[1] = lcol;
			rv[1] = -pc->slope;
			row = lp_add_row(f->lp, 2, rc, rv,
			    -pc->intercept * c, INFINITY);
			snprintf(name, sizeof(name), "phi_%zu_%s_%d", a / 2,
			    a % 2 == 0 ? "ab" : "ba", i + 1);
			lp_set_row_name(f->lp, row, name);
		}
	}
	if ((r = stage(f, "congestion", LP_DUAL, f->scale, false, &z,
	    e)) != 0)
		goto out;

	/* Later stages may not raise the congestion cost beyond the cap. */
	n_rc = 0;
	for (a = 0; a < f->n_arcs; a++)
		if (f->phicol[a] >= 0)
			pcol[n_rc++] = f->phicol[a];
	free(rv);
	rv = xcalloc((size_t)n_rc + 1, sizeof(*rv));
	for (i = 0; i < n_rc; i++)
		rv[i] = 1;
	/* With every link down there is no phi to cap. */
	if (n_rc > 0) {
		row = lp_add_row(f->lp, n_rc, pcol, rv, -INFINITY,
		    z * (1 + m->policy.balance_tol) + PHI_ABS);
		lp_set_row_name(f->lp, row, "congestion_cap");
	}
	r = 0;
out:
	free(rc);
	free(rv);
	free(pcol);
	return r;
}

/* Stage 3: minimise TE metric x flow. */
static int
cost(struct arcform *f, struct err *e)
{
	double z;

	lp_clear_obj(f->lp);
	set_cost_obj(f);
	return stage(f, "cost", f->cost_method, f->metric_max * f->scale,
	    true, &z, e);
}

/* ---- from LP values to the plan ---- */

/*
 * Lists demand indices with a positive rate, sorted by source, then
 * priority, then index (two stable counting sorts).  Returns the count;
 * start[si] .. start[si + 1] delimit source si's demands.
 */
static size_t
group_demands(const struct arcform *f, size_t *order, size_t *start)
{
	const struct model *m = f->m;
	size_t by_prio[MODEL_PRIO_MAX + 2], *tmp, k, i, n = 0, si;

	memset(by_prio, 0, sizeof(by_prio));
	for (k = 0; k < m->n_demands; k++)
		if (f->ucol[k] >= 0)
			by_prio[m->demands[k].priority + 1]++;
	for (i = 0; i <= MODEL_PRIO_MAX; i++)
		by_prio[i + 1] += by_prio[i];
	tmp = xcalloc(m->n_demands + 1, sizeof(*tmp));
	for (k = 0; k < m->n_demands; k++)
		if (f->ucol[k] >= 0) {
			tmp[by_prio[m->demands[k].priority]++] = k;
			n++;
		}
	memset(start, 0, (f->n_src + 1) * sizeof(*start));
	for (i = 0; i < n; i++)
		start[f->src_of[m->demands[tmp[i]].src] + 1]++;
	for (si = 0; si < f->n_src; si++)
		start[si + 1] += start[si];
	for (i = 0; i < n; i++) {
		si = (size_t)f->src_of[m->demands[tmp[i]].src];
		order[start[si]++] = tmp[i];
	}
	for (si = f->n_src; si > 0; si--)
		start[si] = start[si - 1];
	start[0] = 0;
	free(tmp);
	return n;
}

/* Decomposes every source's flow into the plan's routes. */
static void
routes_from_lp(struct arcform *f)
{
	const struct model *m = f->m;
	const struct link *l;
	struct decomp *dc;
	size_t *tail, *head, *order, *start, *dst, si, a, j, k, lo, hi;
	double *flow, *want, x;
	int c;

	tail = xcalloc(f->n_arcs, sizeof(*tail));
	head = xcalloc(f->n_arcs, sizeof(*head));
	for (a = 0; a < f->n_arcs; a++) {
		l = &m->links[a / 2];
		tail[a] = a % 2 == 0 ? l->a : l->b;
		head[a] = a % 2 == 0 ? l->b : l->a;
	}
	dc = decomp_new(f->n, f->n_arcs, tail, head);
	order = xcalloc(m->n_demands + 1, sizeof(*order));
	start = xcalloc(f->n_src + 1, sizeof(*start));
	dst = xcalloc(m->n_demands + 1, sizeof(*dst));
	want = xcalloc(m->n_demands + 1, sizeof(*want));
	flow = xcalloc(f->n_arcs + 1, sizeof(*flow));
	group_demands(f, order, start);
	for (si = 0; si < f->n_src; si++) {
		memset(flow, 0, f->n_arcs * sizeof(*flow));
		for (a = 0; a < f->n_arcs; a++) {
			if ((c = f->fcol[si * f->n_arcs + a]) < 0)
				continue;
			/*
			 * The simplex leaves flows as low as -tol_bnd (1e-7
			 * LP units) while keeping conservation exact.  Read
			 * a negative flow as flow on the opposite arc, so the
			 * decomposition sees an exactly conserved flow and
			 * small demands keep their paths.
			 */
			x = lp_col_value(f->lp, c);
			if (x >= 0)
				flow[a] += x;
			else
				flow[a ^ 1] -= x;
		}
		lo = start[si];
		hi = start[si + 1];
		for (j = lo; j < hi; j++) {
			k = order[j];
			dst[j] = m->demands[k].dst;
			x = f->d_lp[k] - lp_col_value(f->lp, f->ucol[k]);
			want[j] = fmin(fmax(x, 0), f->d_lp[k]);
		}
		decomp_source(dc, f->src_node[si], flow, DUST, hi - lo,
		    order + lo, dst + lo, want + lo, f->scale, f->p->routes);
	}
	decomp_free(dc);
	free(tail);
	free(head);
	free(order);
	free(start);
	free(dst);
	free(want);
	free(flow);
}

/* ---- entry points ---- */

int
form_arc_solve(const struct model *m, const struct solve_opts *o,
    struct plan **planp, struct err *e)
{
	struct arcform f;
	struct plan *p;
	int r = ERR_INTERNAL;

	*planp = NULL;
	memset(&f, 0, sizeof(f));
	f.m = m;
	f.o = o;
	f.t0 = clock_ms();
	for (r = 0; r <= MODEL_PRIO_MAX; r++)
		f.vcol[r] = -1;
	p = xcalloc(1, sizeof(*p));
	p->objective = m->policy.objective;
	p->model_revision = m->revision;
	p->n_routes = m->n_demands;
	p->routes = xcalloc(m->n_demands, sizeof(*p->routes));
	p->n_arcs = 2 * m->n_links;
	p->arcs = xcalloc(p->n_arcs, sizeof(*p->arcs));
	f.p = p;

	if ((r = setup(&f, e)) != 0)
		goto out;
	p->scale_bps = f.scale;
	if (f.n_src == 0) {
		if (o->export_path != NULL) {
			r = err_set(e, ERR_INVALID, "export_stage",
			    "no LP to export: no demand has a positive rate");
			goto out;
		}
		plan_finish(m, p, true, NULL, NULL);
	} else {
		f.lp = lp_new("weft");
		build(&f);
		f.price = xcalloc(f.n_arcs, sizeof(*f.price));
		f.sat = xcalloc(f.n_arcs, sizeof(*f.sat));
		if ((r = admit(&f, e)) != 0)
			goto out;
		if (f.balance && (r = balance(&f, e)) != 0)
			goto out;
		if (f.congestion && (r = congestion(&f, e)) != 0)
			goto out;
		if ((r = cost(&f, e)) != 0)
			goto out;
		if (o->export_path != NULL && !f.exported) {
			r = err_set(e, ERR_INVALID, "export_stage",
			    "stage %d was not solved; this model took %zu "
			    "stages", o->export_stage, p->n_stages);
			goto out;
		}
		routes_from_lp(&f);
		plan_finish(m, p, false, f.price, f.sat);
	}
	p->solve_ms = clock_ms() - f.t0;
	*planp = p;
	p = NULL;
	r = 0;
out:
	plan_free(p);
	lp_free(f.lp);
	free(f.src_node);
	free(f.src_of);
	free(f.cap_row);
	free(f.fcol);
	free(f.ucol);
	free(f.phicol);
	free(f.d_lp);
	free(f.price);
	free(f.sat);
	lp_basis_free(f.admit_basis);
	return r;
}
