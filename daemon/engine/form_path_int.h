/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The path formulation's inner workings, shared by its two files. */
#ifndef WEFT_ENGINE_FORM_PATH_INT_H
#define WEFT_ENGINE_FORM_PATH_INT_H

/*
 * Only form_path.c (master, stages, plan) and form_path_price.c (shortest
 * paths, the column pool, pricing) include this.  form_path.c has the
 * DESIGN notes; the state is one thread's (see engine.h).
 */

#include <stdbool.h>
#include <stddef.h>

#include "engine.h"
#include "heap.h"

struct lp;

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
/* A reduced cost below -RC_TOL x max(1, |pi_k|) prices a path in. */
#define RC_TOL		1e-9
/* Column generation rounds allowed per stage. */
#define ROUNDS_MAX	5000
/* A kept master's LP unit may differ this much from a new build's. */
#define SCALE_DRIFT	10.0

#define NPRIO		(MODEL_PRIO_MAX + 1)

/* A path column of the pool. */
struct pcol {
	size_t k;		/* demand */
	size_t off;		/* first arc in parcs */
	size_t n_arcs;
	double cost;		/* sum of TE metric / metric_max */
	long next;		/* demand k's next column, or -1 */
	bool dead;		/* crosses a down link: fixed at zero */
};

enum mode {
	M_ADMIT = 0,		/* W x sum u + cost */
	M_CLASS = 1,		/* sum u of one class */
	M_BALANCE = 2,		/* U */
	M_COST = 3,		/* cost */
	M_KEEP = 4,		/* flow on paths unused by the previous plan */
};

struct engine_state {
	/* The structure the master was built for. */
	size_t n;		/* nodes */
	char **node_id;		/* owned copies */
	size_t n_links;
	char **link_id;		/* owned copies */
	double *link_metric;	/* TE metric per link */
	size_t n_arcs;		/* 2 per link */
	size_t *tail, *head;	/* arc ends */
	double *metric;		/* arc -> TE metric / metric_max */
	size_t *out_start, *out_arc;	/* out-arcs per node */
	size_t n_dem;
	size_t *dsrc, *ddst;	/* demand ends */
	int *dprio;
	size_t n_src;
	size_t *src_node;	/* source -> node */
	size_t *src_start, *src_dem;	/* source -> its demands */

	/* The data now written into the master. */
	double scale;		/* bit/s per LP unit */
	double metric_max;
	double scale_fresh;	/* the LP unit a new master would use now */
	double metric_max_fresh;	/* and its metric scale */
	double W;		/* weight of unserved traffic in admit */
	double W_balance;	/* the same when the objective is balance */
	double headroom;
	bool balance;
	bool *up;		/* link -> up */
	double *cap_lp;		/* arc -> capacity, LP units, 0 when down */
	double *d_lp;		/* demand -> rate, LP units */
	double *u_hi;		/* demand -> upper bound of u now */
	double demand_lp;
	double class_lp[NPRIO];

	/* The master. */
	struct pot *pot;	/* the potential method's kept flows
				   (form_pot.c), or NULL */
	struct lp *lp;
	int row_cc;		/* the cost row */
	int class_row[NPRIO];	/* class -> its row, or -1 */
	int col_U;
	bool cc_on;		/* the cost row is bounded */
	double cc_hi;
	bool class_on[NPRIO];
	double class_hi[NPRIO];
	double U_lo, U_hi;

	/* The column pool; column j is LP column col0 + j. */
	int col0;
	struct pcol *cols;
	size_t n_cols, cap_cols;
	size_t n_committed;	/* columns that are in the LP */
	size_t *parcs;
	size_t n_parcs, cap_parcs;
	long *first;		/* demand -> first column, or -1 */
	double *prev_x;		/* column -> flow in the previous plan */
	size_t n_prev;
	bool has_prev;

	/* Scratch for pricing. */
	double *pi, *lam, *w, *dist;
	size_t *via;
	unsigned *sink_mark;
	unsigned mark;
	struct heap h;

	/* One solve. */
	const struct model *m;
	const struct solve_opts *o;
	struct plan *p;
	double t0;		/* ms */
	double *price;		/* arc -> shadow price */
	bool *sat;		/* arc -> saturated */
	bool all_fit;
	bool next_dual;		/* the next LP runs the dual simplex */
	bool admit_U;		/* admit minimises W_balance x sum u + U */
	bool tighter;		/* this model only takes away from the last */
	bool kept_fit;		/* the last solve: balance, everything fit */
	double kept_U;		/* its balance optimum, LP units */
	double kept_cap;	/* and the cap on U it left in the master */
	double kept_tol;	/* with this balance_tol */
	int iters, rounds;
	double gap, bound;	/* of the last objective stage, LP units */
};

/* Shortest paths from s under w (INFINITY: unusable) into st->dist and
   st->via, until the n_sinks nodes form_path_mark_sinks() marked are
   settled. */
void form_path_dijkstra(struct engine_state *st, size_t s, const double *w,
    size_t n_sinks);

/* Marks the sinks of source si's demands with positive rate; counts them. */
size_t form_path_mark_sinks(struct engine_state *st, size_t si);

/* Pool: add demand k's path in st->via unless known (returns whether
   added), forget uncommitted columns, put new columns into the LP. */
bool form_path_pool_add(struct engine_state *st, size_t k);
void form_path_pool_drop(struct engine_state *st);
void form_path_pool_commit(struct engine_state *st, enum mode md);

/* Objective coefficients of path column j and of u[k] in a stage. */
double form_path_obj(const struct engine_state *st, enum mode md, size_t j);
double form_path_u_obj(const struct engine_state *st, enum mode md,
    int prio, size_t k);

/*
 * Prices every demand against the master's duals: new columns go to the
 * pool (uncommitted); returns their count and the stage's Lagrangian
 * bound in *boundp.
 */
size_t form_path_price(struct engine_state *st, enum mode md, int prio,
    double *boundp);

#endif /* WEFT_ENGINE_FORM_PATH_INT_H */
