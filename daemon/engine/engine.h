/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The engine's entry point: solve a model into a plan, export the LP. */
#ifndef WEFT_ENGINE_ENGINE_H
#define WEFT_ENGINE_ENGINE_H

/*
 * DESIGN
 * The engine is a library (libengine.a): no HTTP, no SQL, and no threads
 * that outlive a call (the potential method computes its bound on two
 * threads of plain arithmetic, joined before it returns).  Any thread may
 * call these functions on its own model; GLPK problem objects live within
 * one call (GLPK here keeps its environment thread-local).
 *
 * The node-arc formulation aggregates demands per source (one flow
 * variable per source and arc).  Rates are scaled so the largest arc
 * capacity is 1 LP unit before GLPK sees them.  Stages, each a GLPK simplex
 * warm-started from the previous basis (form_arc.c has the detail):
 *   1. admit: minimise (nodes x unserved + cost) from a basis of
 *      shortest-path trees; when nothing is left unserved, that is already
 *      the cost optimum with all traffic carried.  Otherwise, for priority
 *      0, 1, ...: maximise the carried traffic of that class exactly, then
 *      fix it (within a tiny tolerance); saturated links and shadow prices
 *      come from these stages;
 *   2. balance only: find the smallest max utilisation U at which the
 *      admitted traffic fits (Newton's method on U over the same LP), then
 *      cap U at U*(1 + policy.balance_tol); congestion only: minimise the
 *      sum of the Fortz-Thorup link cost (congestion.h), then cap it the
 *      same way;
 *   3. minimise sum TE metric x flow (cost).
 * The plan's routes come from decomposing each source's arc flows into
 * paths; loads, costs and totals are recomputed from those paths.
 *
 * policy.formulation picks the formulation.  The path formulation
 * (form_path.c) runs the same stages, each as column generation on a
 * master LP over path columns, and can keep that master between solves
 * (struct engine_state): a model with the same structure is then solved
 * by editing bounds and re-optimising from the kept basis.  It has no
 * congestion stage yet: that objective is always solved node-arc.
 *
 * FORM_POT (form_pot.c) solves balance without an LP, by the exponential
 * potential method with an LP-duality certificate, for matrices too large
 * for either formulation; it keeps its flows in the same state and hands
 * a matrix that does not fit to the path formulation.
 */

#include <stdatomic.h>
#include <stdbool.h>

#include "model.h"
#include "plan.h"

struct err;

enum export_format {
	EXPORT_LP = 0,		/* the LP text format (glp_write_lp) */
	EXPORT_MPS = 1,		/* free MPS (glp_write_mps, GLP_MPS_FILE) */
};

struct solve_opts {
	double time_limit_s;	/* per engine_solve; 0: none */
	bool verbose;		/* route GLPK's terminal output to the log */
	/* Export: when export_path is set, the LP of stage export_stage
	   (index into plan->stages order; -1: the last stage) is written
	   there before it is solved. */
	const char *export_path;
	int export_stage;
	enum export_format export_format;
	/* Cancel: when set, another thread may make *cancel true; the
	   solve then ends with ERR_TIMEOUT at its next LP call or column
	   generation round (a simplex call already running finishes). */
	const atomic_bool *cancel;
};

/* Fills o with the defaults: no time limit, quiet, no export, no cancel. */
void solve_opts_default(struct solve_opts *o);

/* Whether o's solve was cancelled (see struct solve_opts). */
bool solve_cancelled(const struct solve_opts *o);

/*
 * Checks m (ids, ranges, references, policy), builds the LP and solves it.
 * Returns 0 with a new plan in *planp (the caller frees it with
 * plan_free), ERR_INVALID for a bad model, ERR_TIMEOUT when the time limit
 * passed, ERR_SOLVER when GLPK failed; detail in e.  An empty matrix gives
 * a plan with status PLAN_EMPTY; unserved traffic gives PLAN_PARTIAL.
 */
int engine_solve(const struct model *m, const struct solve_opts *o,
    struct plan **planp, struct err *e);

/*
 * The solver state kept between solves of one model's revisions: the
 * path formulation's master LP, its column pool and basis, and the flows
 * of the last plan.  Opaque; owned by one thread at a time (GLPK objects
 * inside), freed with engine_state_free() on that thread.
 */
struct engine_state;

/*
 * As engine_solve(), keeping state in *stp (NULL at first; the call
 * creates it).  With policy.formulation FORM_PATH, when *stp was built for
 * a model with the same node ids, link ids, ends and TE metrics, and the
 * same demand list (ends and priority per index), the changes since
 * (links up or down, capacities, rates, objective, headroom, tolerances)
 * are applied to the kept master and it is re-optimised from its basis:
 * plan->warm is true and plan->moved_bps tells how much traffic changed
 * paths since the previous plan.  Otherwise the master is built afresh
 * (plan->warm false).  policy.keep_paths then prefers the previous plan's
 * paths within policy.keep_paths_tol of the optimal cost.  With FORM_ARC
 * the state is freed (*stp becomes NULL) and the model solved as by
 * engine_solve().  An export (o->export_path) always writes and solves
 * the node-arc LP, leaving a path state as it was.  On error from the
 * path formulation *stp is freed and NULL; *planp is NULL on any error.
 */
int engine_solve_warm(struct engine_state **stp, const struct model *m,
    const struct solve_opts *o, struct plan **planp, struct err *e);

/* Frees st (NULL ok), on the thread that used it. */
void engine_state_free(struct engine_state *st);

/*
 * A seed: a copy of a kept state in plain memory (no solver object), so
 * that other threads can start from it (form_path_seed.c).
 * engine_seed_take() returns NULL when st holds no master (NULL, or the
 * last solve was node-arc).  A seed is immutable: any thread may read it
 * or free it.  engine_state_from_seed() makes a new state on the calling
 * thread (NULL for a NULL seed); engine_solve_warm() then solves a model
 * from it as it would have from the original state, and reports
 * moved_bps against the seed's plan.
 */
struct engine_seed;
struct engine_seed *engine_seed_take(const struct engine_state *st);
void engine_seed_free(struct engine_seed *sd);
struct engine_state *engine_state_from_seed(const struct engine_seed *sd);

/* Checks a model without solving it: 0 or ERR_INVALID with detail. */
int engine_check(const struct model *m, struct err *e);

/*
 * Frees the solver library's per-thread state of the calling thread.  A
 * thread that called engine_solve() calls this before it exits (or after
 * a one-off solve); a later engine_solve() on the thread starts afresh.
 */
void engine_thread_done(void);

#endif /* WEFT_ENGINE_ENGINE_H */
