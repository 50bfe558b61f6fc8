/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The scenarios of a sweep kind and the solve of one of them. */
#ifndef WEFT_DAEMON_SWEEPSET_H
#define WEFT_DAEMON_SWEEPSET_H

/*
 * DESIGN
 * Two programs sweep: weftd on its worker threads (sweeps.c) and
 * weft-mpisweep on MPI ranks (daemon/mpisweep/).  Both enumerate the
 * scenarios of a kind here and solve each here, so that the same model
 * gives the same scenarios, in the same order, solved the same way.  A
 * set is built once from the live model and is read-only afterwards: any
 * thread may read it and solve scenarios of it at the same time, each
 * thread on its own copy of the model (GLPK is thread-local).
 *
 * The order: "links" each up link by link index; "link-pairs" each pair
 * (l, j) of up links with l < j, l outer; "nodes" every node by index,
 * with all its up links; "srlgs" each distinct SRLG of an up link,
 * ascending, with all its up links.
 */

#include <stdbool.h>
#include <stddef.h>

struct db_sweep_result;
struct engine_seed;
struct err;
struct model;
struct plan;

struct sweepset {
	size_t n;		/* scenarios */
	size_t *off;		/* owned, n + 1 entries: scenario i takes
				   down links[off[i] .. off[i + 1]) */
	size_t *links;		/* owned: link indices of the live model */
	char **fail_json;	/* owned, n labels such as
				   {"links":["L1","L2"]} */
};

/*
 * Counts the scenarios of kind ("links", "nodes", "srlgs", "link-pairs")
 * on m without making them: *np, or -1 for "srlgs" (known once built).
 * ERR_INVALID at "kind" for another kind.
 */
int sweepset_count(const struct model *m, const char *kind, long *np,
    struct err *e);

/*
 * Fills *set (any previous content is not freed) with the scenarios of
 * kind on m.  ERR_INVALID at "kind" for an unknown kind, with *set
 * empty.  Free with sweepset_clear().
 */
int sweepset_build(const struct model *m, const char *kind,
    struct sweepset *set, struct err *e);

/* Frees what set owns and empties it; NULL ok. */
void sweepset_clear(struct sweepset *set);

/*
 * Solves m on the calling thread, warm from sd when given (NULL: from
 * nothing), within time_limit_s (0: none): the path formulation from the
 * seed, the node-arc one as engine_solve().  As engine_solve().
 */
int sweepset_solve(const struct engine_seed *sd, const struct model *m,
    double time_limit_s, struct plan **pp, struct err *e);

/*
 * Solves scenario i of set on a copy of live (its links down, every
 * demand rate times scale) from sd, and fills *res (idx, fail_json and
 * error owned by res; free them with free()).  A failed solve is a
 * result with status "failed" and the message, not an error.  *pp gets
 * the scenario's plan (the caller's; NULL when it failed).
 */
void sweepset_eval(const struct sweepset *set, size_t i,
    const struct model *live, const struct engine_seed *sd, double scale,
    double time_limit_s, struct db_sweep_result *res, struct plan **pp);

/*
 * Keeps in worst[a] the largest load of arc a seen (p->n_arcs entries,
 * the live model's arcs) and in worst_idx[a] the scenario idx causing it:
 * a load replaces the kept one when larger.  p may be NULL (nothing).
 */
void sweepset_worst(double *worst, long *worst_idx, const struct plan *p,
    long idx);

#endif /* WEFT_DAEMON_SWEEPSET_H */
