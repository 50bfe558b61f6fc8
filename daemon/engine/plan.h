/* SPDX-License-Identifier: GPL-3.0-or-later */
/* A solved plan: routes per demand, loads per arc, status and totals. */
#ifndef WEFT_ENGINE_PLAN_H
#define WEFT_ENGINE_PLAN_H

/*
 * DESIGN
 * engine_solve() builds a plan for one model snapshot; after that the plan
 * is immutable.  Arrays run parallel to the model it was solved from:
 * routes[k] belongs to model->demands[k], arcs[2*i] is link i's a->b
 * direction and arcs[2*i+1] its b->a direction.  All rates are bit/s in the
 * model's units (unscaled).  A plan does not own or reference the model;
 * whoever publishes it keeps the two together.
 */

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#include "model.h"

enum plan_status {
	PLAN_OPTIMAL = 0,	/* all traffic carried, objective optimal */
	PLAN_PARTIAL = 1,	/* optimal, but some traffic left unserved */
	PLAN_EMPTY = 2,		/* no demands to route (or no matrix) */
};

/* Returns "optimal", "partial" or "empty". */
const char *plan_status_str(enum plan_status s);

struct plan_path {
	size_t *arcs;		/* owned: arc indices from src to dst */
	size_t n_arcs;
	double rate_bps;	/* > 0 */
};

struct plan_route {
	double carried_bps;	/* sum of paths' rates */
	double unserved_bps;	/* rate - carried, >= 0 */
	struct plan_path *paths;	/* owned, largest rate first */
	size_t n_paths;
};

struct plan_arc {
	double load_bps;	/* planned load */
	double capacity_bps;	/* capacity of the arc (0 when link down) */
	double util;		/* load / capacity, 0 when capacity is 0 */
	double headroom_bps;	/* capacity x policy headroom - load */
	double shadow_price;	/* dual of the capacity row in the stage
				   that limited admission, per bit/s; 0 when
				   all traffic was carried */
	bool saturated;		/* tight with non-zero shadow price while
				   traffic was left unserved */
};

struct plan_stage {
	char name[32];		/* "admit-p0", "balance", "cost", ... */
	double objective;	/* objective value, in the units of the stage:
				   bit/s for admission, a fraction for
				   balance, bit/s (of Phi) for congestion,
				   TE metric x bit/s for cost */
	int iterations;		/* simplex iterations */
	double ms;		/* wall time of this stage */
	double lp_objective;	/* the objective exactly as GLPK reported it,
				   in scaled LP units, so an exported model
				   solved elsewhere can be compared */
};

#define PLAN_STAGES_MAX	(8 + 4)

struct plan {
	enum plan_status status;
	enum objective objective;	/* the policy objective solved */
	double max_util;	/* max over up arcs of load / capacity */
	double total_cost;	/* sum over arcs of TE metric x load, bit/s */
	double congestion;	/* sum over up arcs of the congestion cost
				   Phi(load, capacity), bit/s (congestion.h);
				   filled whatever the objective */
	double demand_bps;	/* sum of demanded rates */
	double carried_bps;	/* sum of carried rates */
	double unserved_bps;	/* demand - carried */
	double unserved_by_prio_bps[8];	/* per priority class */
	double solve_ms;	/* wall time of engine_solve */
	double scale_bps;	/* bit/s per LP unit used internally */
	struct plan_route *routes;	/* owned, one per model demand */
	size_t n_routes;
	struct plan_arc *arcs;	/* owned, two per model link */
	size_t n_arcs;
	size_t *saturated_links;	/* owned: link indices, ascending */
	size_t n_saturated;
	struct plan_stage stages[PLAN_STAGES_MAX];
	size_t n_stages;
	enum formulation formulation;	/* the formulation that solved it */
	double gap;		/* certified relative optimality gap of the
				   last objective stage: (objective - bound)
				   / |objective|; 0 for the node-arc one */
	double bound;		/* lower bound on the last objective stage's
				   optimum, in that stage's units (TE metric
				   x bit/s for cost) */
	int iterations;		/* simplex iterations, all stages */
	int cg_rounds;		/* column generation rounds, all stages;
				   0 for the node-arc formulation */
	size_t columns;		/* LP columns at the end: path columns for
				   the path formulation */
	bool warm;		/* solved by re-optimising a kept master
				   (engine_solve_warm); false: built afresh */
	double moved_bps;	/* traffic that changed paths relative to
				   the previous plan of the same state: half
				   the L1 distance of the per-demand path
				   flows, bit/s; -1 when there is none */
	int64_t model_revision;	/* copied from the model */
	int64_t revision;	/* set by the publisher, 0 until published */
};

/* Unserved traffic at or below this share of a demand counts as none. */
#define PLAN_SERVED_REL	1e-9
/* Nor does a shortfall at or below this many LP units (x scale_bps) of
   a demand that is partly carried: below the LP's resolution. */
#define PLAN_LP_RESOLUTION	1e-9

/*
 * Completes a plan whose routes (paths and carried rates) a formulation
 * has filled: folds rounding dust into fully carried demands, then sets
 * loads, utilisation, headroom, congestion, totals, status and the
 * saturated links, all computed from the routes, so routes and loads
 * always agree.  empty: there was nothing to route.  price and sat (per
 * arc, may be NULL) come from the admission stages and are kept only when
 * traffic was left unserved.
 */
void plan_finish(const struct model *m, struct plan *p, bool empty,
    const double *price, const bool *sat);

/* Frees p and everything it owns; p may be NULL. */
void plan_free(struct plan *p);

#endif /* WEFT_ENGINE_PLAN_H */
