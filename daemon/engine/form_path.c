/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The path formulation: a master LP over path columns, grown by pricing. */

/*
 * DESIGN
 * In LP units (bit/s divided by scale, the largest capacity of an up link
 * when the master was built), the master holds
 *
 *   x[P] >= 0       flow on path P of demand k (a column of the pool)
 *   u[k] in [0, d_k]  unserved part of demand k
 *   U               the utilisation bound
 *
 *   dem_k:  sum{x[P] : P of k} + u[k] = d_k            (dual pi_k)
 *   cap_a:  sum{x[P] : P crosses a} - c_a U <= 0       (dual lam_a <= 0)
 *   cc:     sum (cost P) x[P] <= limit   (free but for the keep-paths stage)
 *   cls_p:  sum{u[k] : class p} <= limit (free but after admission of p)
 *
 * U is fixed at the headroom h for the cost objective, so cap_a reads
 * load <= h c_a as in the node-arc LP.  Rows and the u and U columns are
 * made once; only path columns are added, never removed: a path crossing a
 * down link is fixed at zero.  Columns of a demand are linked through
 * pcol.next, for the duplicate check and the keep-paths bound.
 *
 * Each stage of engine.h (admit, admit-pN, balance, cost, and keep-paths
 * when asked) is a column generation loop on the same master: solve the
 * restricted master (primal simplex from the previous basis, which stays
 * primal feasible when columns are added at zero), then price: with
 * w_a = alpha metric_a - lam_a - lam_cc metric_a >= 0, one Dijkstra per
 * source gives every demand's shortest path; a path shorter than pi_k has
 * a negative reduced cost and enters (form_path_price.c).  The same
 * shortest paths give the Lagrangian bound L(lam) of the stage, so every
 * round knows its gap.  Admission stages run until no column prices out;
 * the balance and cost stages stop earlier once the gap is at most
 * policy.gap_target.  A time limit that passes in the cost stage ends it
 * with the plan it has and its gap; anywhere else it is ERR_TIMEOUT.
 *
 * The balance stage minimises U directly.  A warm balance solve admits by
 * minimising W_balance x sum u + U instead of W x sum u + cost: the kept
 * basis is then nearly optimal at once, and when everything fits, the
 * balance stage has nothing left to do.  (From a crash basis of shortest
 * paths the cost-like admission is faster, so a new master uses that.)
 *
 * The state survives between calls (engine_solve_warm()): when the next
 * model has the same nodes, links, TE metrics and demand list shape, link
 * state, capacities and rates are written into bounds and coefficients and
 * the stages run again from the kept basis (shortcut() first, when the
 * change only takes away after a balance plan that fit).  The first LP of
 * a solve runs
 * the dual simplex (a crash basis of shortest paths when new; the
 * previous optimum, still dual feasible for cost-like objectives, when
 * warm; a kept balance basis is repaired by the primal simplex), later
 * ones the primal simplex.
 *
 * Where the time goes: GLPK's simplex iterations, about 1 ms each on
 * brain (14,976 rows, 30,000+ columns); pricing is under 1 %.  Most rows
 * are demand rows, so the node-arc LP and this master cost about the same
 * per iteration there, and a full solve is no faster than the node-arc
 * one; warm solves need a few hundred iterations instead of thousands.
 * XXX Demand rows could become column bounds for demands with a single
 * column, and the pool is never pruned: a long run of changes grows it.
 *
 * The plan's routes are the columns with positive flow; loads and totals
 * are computed from those routes, as in the node-arc formulation.
 */

#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "form_path.h"
#include "form_path_int.h"
#include "form_pot.h"
#include "lp.h"
#include "../base/clock.h"
#include "../base/err.h"
#include "../base/log.h"
#include "../base/xalloc.h"

/* ---- stages ---- */

/* Sets the master's objective for a stage. */
static void
set_obj(struct engine_state *st, enum mode md, int prio)
{
	size_t k, j;

	lp_clear_obj(st->lp);
	for (k = 0; k < st->n_dem; k++)
		lp_set_obj(st->lp, (int)k, form_path_u_obj(st, md, prio, k));
	lp_set_obj(st->lp, st->col_U, md == M_BALANCE ||
	    (md == M_ADMIT && st->admit_U) ? 1 : 0);
	for (j = 0; j < st->n_committed; j++)
		lp_set_obj(st->lp, st->col0 + (int)j, form_path_obj(st, md, j));
}

static int
record(struct engine_state *st, const char *name, double objective,
    double lp_objective, int iterations, double ms, struct err *e)
{
	struct plan_stage *sg;

	if (st->p->n_stages == PLAN_STAGES_MAX)
		return err_set(e, ERR_INTERNAL, NULL, "too many stages");
	sg = &st->p->stages[st->p->n_stages++];
	snprintf(sg->name, sizeof(sg->name), "%s", name);
	sg->objective = objective;
	sg->lp_objective = lp_objective;
	sg->iterations = iterations;
	sg->ms = ms;
	return 0;
}

/* What a stage's objective measures. */
enum unit {
	UNIT_RATIO = 0,		/* a fraction (U) */
	UNIT_RATE = 1,		/* bit/s */
	UNIT_COST = 2,		/* TE metric x bit/s */
};

/*
 * The reported units per LP unit of the kept master (fresh false) or of
 * a master built afresh for the current model (fresh true).
 */
static double
unit_of_stage(const struct engine_state *st, enum unit u, bool fresh)
{
	double scale = fresh ? st->scale_fresh : st->scale;
	double metric = fresh ? st->metric_max_fresh : st->metric_max;

	switch (u) {
	case UNIT_RATE:
		return scale;
	case UNIT_COST:
		return scale * metric;
	default:
		return 1;
	}
}

/* Whether the time limit has passed. */
static bool
late(const struct engine_state *st)
{
	return st->o->time_limit_s > 0 &&
	    clock_ms() - st->t0 >= st->o->time_limit_s * 1e3;
}

/*
 * One stage: column generation on the master with the stage's objective,
 * recorded as the plan's next stage (objective x unit).  exact: run until
 * no column prices out; else stop once the gap is at most the policy's
 * gap target.  Returns 0 with the master's optimum in *zp (LP units) and
 * its bound in *boundp, or an error with detail in e.
 */
static int
cg(struct engine_state *st, enum mode md, int prio, bool exact,
    const char *name, enum unit uk, double *zp, double *boundp, struct err *e)
{
	double unit = unit_of_stage(st, uk, false);
	struct lp_params prm;
	struct lp_result res;
	double t0 = clock_ms(), z = 0, L = -INFINITY, gap = INFINITY, floor;
	int rounds = 0, iters = 0, r;
	size_t added;
	bool last = md == M_COST || md == M_KEEP;

	set_obj(st, md, prio);
	floor = ZERO_REL * fmax(1, st->demand_lp);
	for (;;) {
		if (solve_cancelled(st->o))
			return err_set(e, ERR_TIMEOUT, NULL,
			    "the solve was cancelled in stage %s", name);
		if (late(st)) {
			/* A last stage that has a solution may stop here. */
			if (last && rounds > 0)
				break;
			return err_set(e, ERR_TIMEOUT, NULL,
			    "time limit of %g s passed in stage %s",
			    st->o->time_limit_s, name);
		}
		memset(&prm, 0, sizeof(prm));
		prm.method = st->next_dual ? LP_DUAL : LP_PRIMAL;
		st->next_dual = false;
		prm.verbose = st->o->verbose;
		if (st->o->time_limit_s > 0)
			prm.time_limit_s = st->o->time_limit_s -
			    (clock_ms() - st->t0) / 1e3;
		r = lp_solve(st->lp, &prm, &res);
		iters += res.iterations;
		if (r == ERR_TIMEOUT)
			return err_set(e, ERR_TIMEOUT, NULL,
			    "time limit of %g s passed in stage %s",
			    st->o->time_limit_s, name);
		if (r != 0)
			return err_set(e, ERR_SOLVER, NULL,
			    "the simplex method failed in stage %s", name);
		if (res.status != LP_OPTIMAL)
			return err_set(e, ERR_SOLVER, NULL,
			    "stage %s ended without an optimum (status %d)",
			    name, (int)res.status);
		z = res.objective;
		added = form_path_price(st, md, prio, &L);
		rounds++;
		gap = (z - L) / fmax(fabs(z), floor);
		log_debug("column generation stage=%s round=%d iterations=%d "
		    "objective=%.12g bound=%.12g gap=%.3g columns=%zu new=%zu",
		    name, rounds, res.iterations, z, L, gap, st->n_committed,
		    added);
		if (added == 0)
			break;
		if (!exact && gap <= st->m->policy.gap_target)
			break;
		if (rounds == ROUNDS_MAX) {
			log_warn("column generation stage=%s stopped after %d "
			    "rounds gap=%.3g", name, rounds, gap);
			break;
		}
		form_path_pool_commit(st, md);
	}
	form_path_pool_drop(st);
	st->iters += iters;
	st->rounds += rounds;
	*zp = z;
	*boundp = fmin(L, z);
	st->gap = fmax(0, gap);
	st->bound = *boundp;
	/*
	 * lp_objective is what a master built afresh for this model would
	 * report (its LP unit and metric scale), so that it compares with
	 * the exported node-arc LP even when the kept master's units differ.
	 */
	return record(st, name, z * unit, z * unit /
	    unit_of_stage(st, uk, true), iters, clock_ms() - t0, e);
}

/* Pins each u of class prio (all classes: -1) where it is now. */
static void
pin_unserved(struct engine_state *st, int prio)
{
	size_t k;
	double x;

	for (k = 0; k < st->n_dem; k++) {
		if (prio >= 0 && st->dprio[k] != prio)
			continue;
		x = fmin(fmax(lp_col_value(st->lp, (int)k), 0), st->d_lp[k]);
		lp_set_col_bounds(st->lp, (int)k, 0, x);
		st->u_hi[k] = x;
	}
}

/* Shadow prices after an admission stage that left its class short. */
static void
take_prices(struct engine_state *st)
{
	size_t a;
	double y, act, u, pr;
	int row;

	u = lp_col_value(st->lp, st->col_U);
	for (a = 0; a < st->n_arcs; a++) {
		if (!st->up[a / 2] || st->price[a] != 0)
			continue;
		row = (int)(st->n_dem + a);
		/* As in the node-arc formulation: one more LP unit of
		   capacity lowers unserved traffic by -y units. */
		y = lp_row_dual(st->lp, row);
		pr = -y * u;
		act = lp_row_value(st->lp, row);
		if (pr > PRICE_MIN && act >= -1e-9) {
			st->price[a] = pr;
			st->sat[a] = true;
		}
	}
}

static void
set_U(struct engine_state *st, double lo, double hi)
{
	st->U_lo = lo;
	st->U_hi = hi;
	lp_set_col_bounds(st->lp, st->col_U, lo, hi);
}

/* Puts rates and bounds back to the model's, before the stages run. */
static void
reset(struct engine_state *st)
{
	size_t k;
	int p;

	for (k = 0; k < st->n_dem; k++) {
		lp_set_row_bounds(st->lp, (int)k, st->d_lp[k], st->d_lp[k]);
		lp_set_col_bounds(st->lp, (int)k, 0, st->d_lp[k]);
		st->u_hi[k] = st->d_lp[k];
	}
	for (p = 0; p < NPRIO; p++)
		if (st->class_row[p] >= 0) {
			lp_set_row_bounds(st->lp, st->class_row[p], -INFINITY,
			    INFINITY);
			st->class_on[p] = false;
		}
	lp_set_row_bounds(st->lp, st->row_cc, -INFINITY, INFINITY);
	st->cc_on = false;
	if (st->balance)
		set_U(st, 0, st->headroom);
	else
		set_U(st, st->headroom, st->headroom);
}

/* Bounds class prio's unserved total by hi, making its row if needed. */
static void
bound_class(struct engine_state *st, int prio, double hi)
{
	int *cols, n = 0;
	double *vals;
	size_t k;
	char name[32];

	if (st->class_row[prio] < 0) {
		cols = xcalloc(st->n_dem + 1, sizeof(*cols));
		vals = xcalloc(st->n_dem + 1, sizeof(*vals));
		for (k = 0; k < st->n_dem; k++)
			if (st->dprio[k] == prio) {
				cols[n] = (int)k;
				vals[n++] = 1;
			}
		st->class_row[prio] = lp_add_row(st->lp, n, cols, vals,
		    -INFINITY, hi);
		snprintf(name, sizeof(name), "admit_p%d", prio);
		lp_set_row_name(st->lp, st->class_row[prio], name);
		free(cols);
		free(vals);
	} else {
		lp_set_row_bounds(st->lp, st->class_row[prio], -INFINITY, hi);
	}
	st->class_on[prio] = true;
	st->class_hi[prio] = hi;
}

static double
sum_unserved(const struct engine_state *st)
{
	size_t k;
	double z = 0;

	for (k = 0; k < st->n_dem; k++)
		z += fmax(lp_col_value(st->lp, (int)k), 0);
	return z;
}

/* Admission: everything at once, else class by class (engine.h). */
static int
admit(struct engine_state *st, struct err *e)
{
	double z, L, zu;
	char name[32];
	int prio, r;

	if ((r = cg(st, M_ADMIT, -1, true, "admit", UNIT_RATE, &z, &L,
	    e)) != 0)
		return r;
	zu = sum_unserved(st);
	st->p->stages[st->p->n_stages - 1].objective = zu * st->scale;
	if (zu <= ZERO_REL * fmax(1, st->demand_lp)) {
		st->all_fit = true;
		pin_unserved(st, -1);
		return 0;
	}
	/* Classes are admitted at full usable capacity. */
	set_U(st, st->headroom, st->headroom);
	for (prio = 0; prio < NPRIO; prio++) {
		if (st->class_lp[prio] == 0)
			continue;
		snprintf(name, sizeof(name), "admit-p%d", prio);
		if ((r = cg(st, M_CLASS, prio, true, name, UNIT_RATE, &z, &L,
		    e)) != 0)
			return r;
		if (z <= ZERO_REL * fmax(1, st->class_lp[prio])) {
			pin_unserved(st, prio);
			continue;
		}
		take_prices(st);
		/* Later stages may not serve this class any worse. */
		bound_class(st, prio, z * (1 + FIX_REL) + DUST);
	}
	return 0;
}

/* Minimises U with admission decided, then caps U there. */
static int
balance(struct engine_state *st, struct err *e)
{
	double z, L, cap;
	int r;

	set_U(st, 0, st->headroom);
	if ((r = cg(st, M_BALANCE, -1, false, "balance", UNIT_RATIO, &z, &L,
	    e)) != 0)
		return r;
	cap = fmin(st->headroom, z * (1 + st->m->policy.balance_tol) + U_ABS);
	set_U(st, 0, fmax(cap, 0));
	st->kept_U = z;
	return 0;
}

/*
 * Keep-paths: with the cost held within keep_paths_tol of its optimum z,
 * move as little flow as possible onto paths the previous plan did not
 * use.
 */
static int
keep(struct engine_state *st, double z, struct err *e)
{
	double zk, L, gap = st->gap, bound = st->bound;
	int r;

	st->cc_hi = z * (1 + st->m->policy.keep_paths_tol) +
	    ZERO_REL * fmax(1, fabs(z));
	lp_set_row_bounds(st->lp, st->row_cc, -INFINITY, st->cc_hi);
	st->cc_on = true;
	r = cg(st, M_KEEP, -1, true, "keep-paths", UNIT_RATE, &zk, &L,
	    e);
	/* The plan's gap and bound stay those of the cost stage. */
	st->gap = gap;
	st->bound = bound;
	return r;
}

/*
 * The warm shortcut for a change that only takes away (links down,
 * capacities lowered; rates unchanged) after a balance solve that fit: the
 * least U cannot have fallen, so when everything still fits with U at
 * most the kept cap, the balance optimum is within balance_tol of the
 * kept one and the cap stands.  One column generation on W x sum u +
 * cost with U capped there decides it; the kept basis (an optimum of the
 * same LP with the old data) is dual feasible for it, or nearly.  Sets
 * *donep when the stages are done; else the master is left for the full
 * stages, which reset it.
 */
static int
shortcut(struct engine_state *st, bool *donep, struct err *e)
{
	double z, L, t0 = clock_ms();
	size_t k;
	int p, r, n0 = st->p->n_stages;

	*donep = false;
	for (k = 0; k < st->n_dem; k++) {
		lp_set_row_bounds(st->lp, (int)k, st->d_lp[k], st->d_lp[k]);
		lp_set_col_bounds(st->lp, (int)k, 0, st->d_lp[k]);
		st->u_hi[k] = st->d_lp[k];
	}
	for (p = 0; p < NPRIO; p++)
		if (st->class_row[p] >= 0 && st->class_on[p]) {
			lp_set_row_bounds(st->lp, st->class_row[p], -INFINITY,
			    INFINITY);
			st->class_on[p] = false;
		}
	lp_set_row_bounds(st->lp, st->row_cc, -INFINITY, INFINITY);
	st->cc_on = false;
	set_U(st, 0, st->kept_cap);
	st->admit_U = false;
	st->next_dual = true;
	if (record(st, "admit", 0, 0, 0, 0, e) != 0 ||
	    record(st, "balance", st->kept_U, st->kept_U, 0, 0, e) != 0)
		return ERR_INTERNAL;
	if ((r = cg(st, M_ADMIT, -1, false, "cost", UNIT_COST, &z, &L,
	    e)) != 0)
		return r;
	if (sum_unserved(st) > ZERO_REL * fmax(1, st->demand_lp)) {
		/* It no longer fits under the cap: the full stages decide. */
		log_debug("warm shortcut failed after %.1f ms", clock_ms() - t0);
		st->p->n_stages = n0;
		st->admit_U = true;
		return 0;
	}
	pin_unserved(st, -1);
	st->all_fit = true;
	st->p->stages[n0 + 2].ms = clock_ms() - t0;
	*donep = true;
	return 0;
}

static int
run_stages(struct engine_state *st, struct err *e)
{
	double z, L;
	bool done = false;
	int r;

	st->all_fit = false;
	if (st->tighter && (r = shortcut(st, &done, e)) != 0)
		return r;
	st->kept_fit = false;
	if (done)
		goto kept;
	reset(st);
	if ((r = admit(st, e)) != 0)
		return r;
	if (st->balance && (r = balance(st, e)) != 0)
		return r;
	/*
	 * XXX Going back to admission's cost-optimal basis for the cost
	 * stage with the dual simplex (as the node-arc formulation does)
	 * took twice the iterations here (brain: 6325 against 2860).
	 */
	if ((r = cg(st, M_COST, -1, false, "cost", UNIT_COST, &z, &L,
	    e)) != 0)
		return r;
kept:
	if (st->balance && st->all_fit) {
		st->kept_fit = true;
		st->kept_cap = st->U_hi;
		st->kept_tol = st->m->policy.balance_tol;
	}
	if (st->m->policy.keep_paths && st->has_prev &&
	    (r = keep(st, z, e)) != 0)
		return r;
	return 0;
}

/* ---- building and keeping the master ---- */

struct pot **
form_path_pot_slot(struct engine_state **stp)
{
	if (*stp == NULL)
		*stp = xcalloc(1, sizeof(**stp));
	return &(*stp)->pot;
}

void
form_path_state_free(struct engine_state *st)
{
	size_t i;

	if (st == NULL)
		return;
	for (i = 0; i < st->n; i++)
		free(st->node_id[i]);
	for (i = 0; i < st->n_links; i++)
		free(st->link_id[i]);
	free(st->node_id);
	free(st->link_id);
	free(st->link_metric);
	free(st->tail);
	free(st->head);
	free(st->metric);
	free(st->out_start);
	free(st->out_arc);
	free(st->dsrc);
	free(st->ddst);
	free(st->dprio);
	free(st->src_node);
	free(st->src_start);
	free(st->src_dem);
	free(st->up);
	free(st->cap_lp);
	free(st->d_lp);
	free(st->u_hi);
	form_pot_free(st->pot);
	lp_free(st->lp);
	free(st->cols);
	free(st->parcs);
	free(st->first);
	free(st->prev_x);
	free(st->pi);
	free(st->lam);
	free(st->w);
	free(st->dist);
	free(st->via);
	free(st->sink_mark);
	free(st->h.node);
	free(st->h.at);
	free(st);
}

/* Largest capacity of an up link, and largest rate, bit/s. */
static double
unit_of(const struct model *m)
{
	size_t i;
	double cap = 0, rate = 0;

	for (i = 0; i < m->n_links; i++)
		if (m->links[i].up)
			cap = fmax(cap, m->links[i].capacity_bps);
	for (i = 0; i < m->n_demands; i++)
		rate = fmax(rate, m->demands[i].rate_bps);
	/* With no link up, LP units follow the demands instead. */
	return cap > 0 ? cap : rate;
}

/* Copies m's structure into a new state (no LP yet). */
static struct engine_state *
state_new(const struct model *m)
{
	struct engine_state *st = xcalloc(1, sizeof(*st));
	const struct link *l;
	size_t i, a, k, v, *fill;
	long *src_of;
	int p;

	st->n = m->n_nodes;
	st->node_id = xcalloc(st->n + 1, sizeof(*st->node_id));
	for (i = 0; i < st->n; i++)
		st->node_id[i] = xstrdup(m->nodes[i].id);
	st->n_links = m->n_links;
	st->n_arcs = 2 * m->n_links;
	st->link_id = xcalloc(st->n_links + 1, sizeof(*st->link_id));
	st->link_metric = xcalloc(st->n_links + 1, sizeof(*st->link_metric));
	st->tail = xcalloc(st->n_arcs + 1, sizeof(*st->tail));
	st->head = xcalloc(st->n_arcs + 1, sizeof(*st->head));
	st->metric = xcalloc(st->n_arcs + 1, sizeof(*st->metric));
	st->metric_max = 0;
	for (i = 0; i < st->n_links; i++) {
		l = &m->links[i];
		st->link_id[i] = xstrdup(l->id);
		st->link_metric[i] = l->te_metric;
		st->tail[2 * i] = st->head[2 * i + 1] = l->a;
		st->head[2 * i] = st->tail[2 * i + 1] = l->b;
		if (l->up)
			st->metric_max = fmax(st->metric_max, l->te_metric);
	}
	if (st->metric_max == 0)
		st->metric_max = 1;
	for (a = 0; a < st->n_arcs; a++)
		st->metric[a] = st->link_metric[a / 2] / st->metric_max;
	st->out_start = xcalloc(st->n + 2, sizeof(*st->out_start));
	st->out_arc = xcalloc(st->n_arcs + 1, sizeof(*st->out_arc));
	fill = xcalloc(st->n + 1, sizeof(*fill));
	for (a = 0; a < st->n_arcs; a++)
		st->out_start[st->tail[a] + 1]++;
	for (v = 0; v < st->n; v++)
		st->out_start[v + 1] += st->out_start[v];
	for (a = 0; a < st->n_arcs; a++) {
		v = st->tail[a];
		st->out_arc[st->out_start[v] + fill[v]++] = a;
	}
	free(fill);

	st->n_dem = m->n_demands;
	st->dsrc = xcalloc(st->n_dem + 1, sizeof(*st->dsrc));
	st->ddst = xcalloc(st->n_dem + 1, sizeof(*st->ddst));
	st->dprio = xcalloc(st->n_dem + 1, sizeof(*st->dprio));
	src_of = xcalloc(st->n + 1, sizeof(*src_of));
	for (v = 0; v < st->n; v++)
		src_of[v] = -1;
	st->src_node = xcalloc(st->n + 1, sizeof(*st->src_node));
	st->src_start = xcalloc(st->n + 2, sizeof(*st->src_start));
	st->src_dem = xcalloc(st->n_dem + 1, sizeof(*st->src_dem));
	for (k = 0; k < st->n_dem; k++) {
		st->dsrc[k] = m->demands[k].src;
		st->ddst[k] = m->demands[k].dst;
		st->dprio[k] = m->demands[k].priority;
		if (src_of[st->dsrc[k]] < 0) {
			src_of[st->dsrc[k]] = (long)st->n_src;
			st->src_node[st->n_src++] = st->dsrc[k];
		}
		st->src_start[src_of[st->dsrc[k]] + 1]++;
	}
	for (i = 0; i < st->n_src; i++)
		st->src_start[i + 1] += st->src_start[i];
	fill = xcalloc(st->n_src + 1, sizeof(*fill));
	/* Within a source, demands keep their order (priority is not
	   needed: every demand gets its own columns). */
	for (k = 0; k < st->n_dem; k++) {
		i = (size_t)src_of[st->dsrc[k]];
		st->src_dem[st->src_start[i] + fill[i]++] = k;
	}
	free(fill);
	free(src_of);

	st->up = xcalloc(st->n_links + 1, sizeof(*st->up));
	st->cap_lp = xcalloc(st->n_arcs + 1, sizeof(*st->cap_lp));
	st->d_lp = xcalloc(st->n_dem + 1, sizeof(*st->d_lp));
	st->u_hi = xcalloc(st->n_dem + 1, sizeof(*st->u_hi));
	st->first = xcalloc(st->n_dem + 1, sizeof(*st->first));
	for (k = 0; k < st->n_dem; k++)
		st->first[k] = -1;
	for (p = 0; p < NPRIO; p++)
		st->class_row[p] = -1;
	st->pi = xcalloc(st->n_dem + 1, sizeof(*st->pi));
	st->lam = xcalloc(st->n_arcs + 1, sizeof(*st->lam));
	st->w = xcalloc(st->n_arcs + 1, sizeof(*st->w));
	st->dist = xcalloc(st->n + 1, sizeof(*st->dist));
	st->via = xcalloc(st->n + 1, sizeof(*st->via));
	st->sink_mark = xcalloc(st->n + 1, sizeof(*st->sink_mark));
	st->h.node = xcalloc(st->n + 1, sizeof(*st->h.node));
	st->h.at = xcalloc(st->n + 1, sizeof(*st->h.at));
	st->W = (double)st->n;
	st->scale = unit_of(m);
	return st;
}

/*
 * Whether m has the structure st was built for: the same node ids, link
 * ids, ends and TE metrics, the same demand ends and priorities, and an
 * LP unit within SCALE_DRIFT of st's.  why says what differs.
 */
static bool
same_shape(const struct engine_state *st, const struct model *m,
    const char **why)
{
	size_t i;
	double unit;

	*why = NULL;
	if (m->n_nodes != st->n || m->n_links != st->n_links)
		*why = "node or link count";
	for (i = 0; *why == NULL && i < st->n; i++)
		if (strcmp(m->nodes[i].id, st->node_id[i]) != 0)
			*why = "node ids";
	for (i = 0; *why == NULL && i < st->n_links; i++)
		if (strcmp(m->links[i].id, st->link_id[i]) != 0 ||
		    m->links[i].a != st->tail[2 * i] ||
		    m->links[i].b != st->head[2 * i])
			*why = "link ids or ends";
		else if (m->links[i].te_metric != st->link_metric[i])
			*why = "TE metrics";
	if (*why == NULL && m->n_demands != st->n_dem)
		*why = "demand count";
	for (i = 0; *why == NULL && i < st->n_dem; i++)
		if (m->demands[i].src != st->dsrc[i] ||
		    m->demands[i].dst != st->ddst[i] ||
		    m->demands[i].priority != st->dprio[i])
			*why = "demand ends or priorities";
	if (*why == NULL) {
		unit = unit_of(m);
		if (!(unit > 0) || unit > st->scale * SCALE_DRIFT ||
		    unit < st->scale / SCALE_DRIFT)
			*why = "capacity range";
	}
	return *why == NULL;
}

/* Writes the U column's entries: -c_a in each up arc's row. */
static void
set_U_col(struct engine_state *st)
{
	int *rows, n = 0;
	double *vals;
	size_t a;

	rows = xcalloc(st->n_arcs + 1, sizeof(*rows));
	vals = xcalloc(st->n_arcs + 1, sizeof(*vals));
	for (a = 0; a < st->n_arcs; a++)
		if (st->cap_lp[a] > 0) {
			rows[n] = (int)(st->n_dem + a);
			vals[n++] = -st->cap_lp[a];
		}
	lp_set_col_entries(st->lp, st->col_U, n, rows, vals);
	free(rows);
	free(vals);
}

/*
 * Writes m's link states, capacities, rates and policy into st (the LP
 * too, once it exists).  Columns crossing a down link are fixed at zero.
 */
static void
apply(struct engine_state *st, const struct model *m)
{
	const struct link *l;
	struct pcol *c;
	size_t i, a, k, j, t;
	double cap;
	bool cap_changed = false, up_changed = false, dead;

	/* Whether every change since the last solve only takes away. */
	st->tighter = st->lp != NULL && st->kept_fit &&
	    m->policy.objective == OBJ_BALANCE &&
	    m->policy.headroom == st->headroom &&
	    m->policy.balance_tol == st->kept_tol;
	for (i = 0; i < st->n_links; i++) {
		l = &m->links[i];
		if (l->up != st->up[i])
			up_changed = true;
		if (l->up && !st->up[i])
			st->tighter = false;
		st->up[i] = l->up;
		cap = l->up ? l->capacity_bps / st->scale : 0;
		for (a = 2 * i; a <= 2 * i + 1; a++) {
			if (cap != st->cap_lp[a])
				cap_changed = true;
			if (cap > st->cap_lp[a])
				st->tighter = false;
			st->cap_lp[a] = cap;
		}
	}
	st->demand_lp = 0;
	memset(st->class_lp, 0, sizeof(st->class_lp));
	for (k = 0; k < st->n_dem; k++) {
		/*
		 * Rates raised would keep the argument, but U then usually
		 * rises too and the shortcut only costs time (brain, all
		 * rates x 1.1: 4.9 s against 0.13 s): any rate change takes
		 * the full stages.
		 */
		if (m->demands[k].rate_bps / st->scale != st->d_lp[k])
			st->tighter = false;
		st->d_lp[k] = m->demands[k].rate_bps / st->scale;
		st->demand_lp += st->d_lp[k];
		st->class_lp[st->dprio[k]] += st->d_lp[k];
	}
	st->headroom = m->policy.headroom;
	st->balance = m->policy.objective == OBJ_BALANCE;
	st->scale_fresh = unit_of(m);
	st->metric_max_fresh = 0;
	for (i = 0; i < st->n_links; i++)
		if (m->links[i].up)
			st->metric_max_fresh = fmax(st->metric_max_fresh,
			    m->links[i].te_metric);
	if (st->metric_max_fresh == 0)
		st->metric_max_fresh = 1;
	/*
	 * Carrying one more LP unit raises no arc's utilisation by more than
	 * 1 / (its capacity), so serving is usually worth more than the rise
	 * in U it causes.  Where not, admission leaves traffic unserved and
	 * the exact per-class stages decide: the weight never changes the
	 * result, only how soon it is found.
	 */
	cap = INFINITY;
	for (a = 0; a < st->n_arcs; a++)
		if (st->cap_lp[a] > 0)
			cap = fmin(cap, st->cap_lp[a]);
	st->W_balance = cap < INFINITY ? 2 / cap : 1;
	if (st->lp == NULL)
		return;
	if (cap_changed)
		set_U_col(st);
	if (!up_changed)
		return;
	for (j = 0; j < st->n_committed; j++) {
		c = &st->cols[j];
		dead = false;
		for (t = 0; t < c->n_arcs && !dead; t++)
			dead = !st->up[st->parcs[c->off + t] / 2];
		if (dead != c->dead)
			lp_set_col_bounds(st->lp, st->col0 + (int)j, 0,
			    dead ? 0 : INFINITY);
		c->dead = dead;
	}
}

/*
 * Builds the master: rows, u and U, and one column per demand on its
 * shortest path by TE metric, with a crash basis of those paths (each
 * demand row's basic variable is its path, or its u when unreachable),
 * dual feasible for the first stage.
 */
static void
build(struct engine_state *st)
{
	size_t k, si, i, a, n_sinks, n_rows;
	int *rows, *cols, nz = 0;
	double *vals;

	st->lp = lp_new("weft-path");
	n_rows = st->n_dem + st->n_arcs + 1;
	lp_add_rows(st->lp, (int)n_rows);
	st->row_cc = (int)(st->n_dem + st->n_arcs);
	lp_set_row_name(st->lp, st->row_cc, "cost");
	lp_add_cols(st->lp, (int)st->n_dem + 1);
	st->col_U = (int)st->n_dem;
	st->col0 = st->col_U + 1;
	rows = xcalloc(st->n_dem + 1, sizeof(*rows));
	cols = xcalloc(st->n_dem + 1, sizeof(*cols));
	vals = xcalloc(st->n_dem + 1, sizeof(*vals));
	for (k = 0; k < st->n_dem; k++) {
		rows[nz] = (int)k;
		cols[nz] = (int)k;
		vals[nz++] = 1;
	}
	lp_load_matrix(st->lp, (size_t)nz, rows, cols, vals);
	free(rows);
	free(cols);
	free(vals);
	lp_set_col_name(st->lp, st->col_U, "U");
	for (a = 0; a < st->n_arcs; a++)
		lp_set_row_bounds(st->lp, (int)(st->n_dem + a), -INFINITY, 0);
	set_U_col(st);

	for (a = 0; a < st->n_arcs; a++)
		st->w[a] = st->up[a / 2] ? st->metric[a] : INFINITY;
	for (si = 0; si < st->n_src; si++) {
		if ((n_sinks = form_path_mark_sinks(st, si)) == 0)
			continue;
		form_path_dijkstra(st, st->src_node[si], st->w, n_sinks);
		for (i = st->src_start[si]; i < st->src_start[si + 1]; i++) {
			k = st->src_dem[i];
			if (st->d_lp[k] > 0 && st->dist[st->ddst[k]] < INFINITY)
				form_path_pool_add(st, k);
		}
	}
	form_path_pool_commit(st, M_ADMIT);
	for (k = 0; k < st->n_dem; k++) {
		lp_set_row_stat(st->lp, (int)k, LP_NONBASIC);
		if (st->first[k] >= 0)
			lp_set_col_stat(st->lp, st->col0 + (int)st->first[k],
			    LP_BASIC);
		else
			lp_set_col_stat(st->lp, (int)k, LP_BASIC);
	}
	log_debug("path master built rows=%zu demands=%zu columns=%zu",
	    n_rows, st->n_dem, st->n_committed);
}

/* ---- from the master to the plan ---- */

static int
cmp_path(const void *x, const void *y)
{
	double a = ((const struct plan_path *)x)->rate_bps;
	double b = ((const struct plan_path *)y)->rate_bps;

	return a < b ? 1 : a > b ? -1 : 0;
}

/*
 * Reads the flows x (LP units, dust and dead columns zero) and turns them
 * into the plan's routes.  A demand whose paths sum to more than its rate
 * (the simplex's bound tolerance on its u) has them scaled down to it.
 */
static void
routes_from_lp(struct engine_state *st, double *x)
{
	struct plan_route *rt;
	struct plan_path *pp;
	struct pcol *c;
	size_t j, k, i;
	long q;
	double sum, f;

	for (j = 0; j < st->n_cols; j++) {
		c = &st->cols[j];
		x[j] = c->dead ? 0 : lp_col_value(st->lp, st->col0 + (int)j);
		if (x[j] <= DUST)
			x[j] = 0;
	}
	for (k = 0; k < st->n_dem; k++) {
		rt = &st->p->routes[k];
		sum = 0;
		for (q = st->first[k]; q >= 0; q = st->cols[q].next)
			if (x[q] > 0) {
				rt->n_paths++;
				sum += x[q];
			}
		if (rt->n_paths == 0)
			continue;
		f = sum > st->d_lp[k] ? st->d_lp[k] / sum : 1;
		rt->paths = xcalloc(rt->n_paths, sizeof(*rt->paths));
		i = 0;
		for (q = st->first[k]; q >= 0; q = st->cols[q].next) {
			if (x[q] == 0)
				continue;
			c = &st->cols[q];
			pp = &rt->paths[i++];
			pp->n_arcs = c->n_arcs;
			pp->arcs = xcalloc(c->n_arcs, sizeof(*pp->arcs));
			memcpy(pp->arcs, st->parcs + c->off,
			    c->n_arcs * sizeof(*pp->arcs));
			pp->rate_bps = x[q] * f * st->scale;
			rt->carried_bps += pp->rate_bps;
		}
		qsort(rt->paths, rt->n_paths, sizeof(*rt->paths), cmp_path);
	}
}

/* Traffic moved since the previous plan, and this plan's flows kept. */
static void
remember(struct engine_state *st, double *x)
{
	size_t j;
	double moved = 0;

	if (st->has_prev) {
		for (j = 0; j < st->n_cols; j++)
			moved += fabs(x[j] - (j < st->n_prev ?
			    st->prev_x[j] : 0));
		st->p->moved_bps = moved / 2 * st->scale;
	}
	free(st->prev_x);
	st->prev_x = x;
	st->n_prev = st->n_cols;
	st->has_prev = true;
}

/* ---- entry points ---- */

int
form_path_solve(struct engine_state **stp, const struct model *m,
    const struct solve_opts *o, struct plan **planp, struct err *e)
{
	struct engine_state *st = *stp;
	struct plan *p;
	const char *why = "no kept master";
	double *x = NULL;
	bool warm, any = false;
	size_t k;
	int r = ERR_INTERNAL;

	*planp = NULL;
	p = xcalloc(1, sizeof(*p));
	p->objective = m->policy.objective;
	p->formulation = FORM_PATH;
	p->model_revision = m->revision;
	p->n_routes = m->n_demands;
	p->routes = xcalloc(m->n_demands + 1, sizeof(*p->routes));
	p->n_arcs = 2 * m->n_links;
	p->arcs = xcalloc(p->n_arcs + 1, sizeof(*p->arcs));
	p->moved_bps = -1;
	if (o->export_path != NULL) {
		r = err_set(e, ERR_INVALID, "export_stage",
		    "only the node-arc formulation exports its LP");
		goto out;
	}
	for (k = 0; k < m->n_demands; k++)
		any = any || m->demands[k].rate_bps > 0;

	warm = st != NULL && st->lp != NULL && same_shape(st, m, &why);
	if (!warm) {
		if (st != NULL)
			log_debug("path master rebuilt: %s changed", why);
		form_path_state_free(st);
		*stp = st = state_new(m);
	}
	st->m = m;
	st->o = o;
	st->p = p;
	st->t0 = clock_ms();
	st->iters = 0;
	st->rounds = 0;
	st->gap = 0;
	st->bound = 0;
	apply(st, m);
	p->scale_bps = st->scale;
	if (!any) {
		/* Nothing to route; a kept master stays for later. */
		st->kept_fit = false;
		plan_finish(m, p, true, NULL, NULL);
		goto done;
	}
	st->price = xcalloc(st->n_arcs + 1, sizeof(*st->price));
	st->sat = xcalloc(st->n_arcs + 1, sizeof(*st->sat));
	if (st->lp == NULL)
		build(st);
	/*
	 * A crash basis is dual feasible for admission, and so is a kept
	 * cost optimum; a kept balance optimum is not (U moves to the
	 * objective), so the primal simplex repairs it.
	 */
	st->next_dual = !warm || !st->balance;
	st->admit_U = warm && st->balance;
	if ((r = run_stages(st, e)) != 0)
		goto out;
	x = xcalloc(st->n_cols + 1, sizeof(*x));
	routes_from_lp(st, x);
	plan_finish(m, p, false, st->price, st->sat);
	remember(st, x);
	x = NULL;
	p->warm = warm;
	p->gap = st->gap;
	p->bound = st->bound * st->metric_max * st->scale;
done:
	p->iterations = st->iters;
	p->cg_rounds = st->rounds;
	p->columns = st->n_committed;
	p->solve_ms = clock_ms() - st->t0;
	log_debug("path solve warm=%d rounds=%d iterations=%d columns=%zu "
	    "gap=%.3g ms=%.1f", (int)p->warm, p->cg_rounds, p->iterations,
	    p->columns, p->gap, p->solve_ms);
	*planp = p;
	p = NULL;
	r = 0;
out:
	if (st != NULL) {
		free(st->price);
		free(st->sat);
		st->price = NULL;
		st->sat = NULL;
		st->m = NULL;
		st->o = NULL;
		st->p = NULL;
	}
	if (r != 0) {
		form_path_state_free(*stp);
		*stp = NULL;
	}
	free(x);
	plan_free(p);
	return r;
}
