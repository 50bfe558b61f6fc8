/* SPDX-License-Identifier: GPL-3.0-or-later */
/* What-if scenarios: a model changed by failures, factors and new links. */
#ifndef WEFT_ENGINE_SCENARIO_H
#define WEFT_ENGINE_SCENARIO_H

/*
 * DESIGN
 * A scenario says what to change in a copy of the live model; it never
 * touches the live one.  scenario_apply() checks every id and number
 * before it changes anything, so a bad scenario is refused whole.  The
 * order of changes is fixed: link edits, new links, failures (links,
 * then the links of failed nodes, then the links of failed SRLGs), the
 * whole-matrix factor, then the per-site factors in the order given.  A
 * failed node keeps its demands: no routing can carry them, and they are
 * reported as cut off (model_cut_off()).  Ids are node and link ids as
 * in the topology.
 */

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#include "model.h"

struct err;

/* Demands from a node in from[] to a node in to[] times factor; an
   absent list (all_from, all_to) means every node. */
struct scenario_scale {
	char **from;		/* owned ids */
	size_t n_from;
	bool all_from;
	char **to;
	size_t n_to;
	bool all_to;
	double factor;		/* finite, >= 0 */
};

/* An edit of an existing link; has_* say which members are set. */
struct scenario_link {
	char *id;
	bool has_capacity, has_metric, has_state;
	double capacity_bps, te_metric;
	bool up;
};

/* A new link, as in the topology. */
struct scenario_new_link {
	char *id, *a, *b;
	double capacity_bps, te_metric;
	uint32_t *srlgs;
	size_t n_srlgs;
};

struct scenario {
	char **fail_links;
	size_t n_fail_links;
	char **fail_nodes;
	size_t n_fail_nodes;
	uint32_t *fail_srlgs;
	size_t n_fail_srlgs;
	double scale;		/* whole matrix; 1 when not given */
	struct scenario_scale *scales;
	size_t n_scales;
	struct scenario_link *links;
	size_t n_links;
	struct scenario_new_link *add;
	size_t n_add;
};

/* Returns a new empty scenario (no change, scale 1). */
struct scenario *scenario_new(void);

/* Frees sc and everything it owns; NULL ok. */
void scenario_free(struct scenario *sc);

/*
 * Makes *outp, a copy of live changed by sc.  failedp (may be NULL)
 * receives a new array of the indices of the links the scenario took
 * down that were up in live, ascending, and *n_failedp their count.
 * Returns 0, or ERR_INVALID naming the member ("fail.links[2]",
 * "scale_demands[0].factor", "add_links[1].a", ...) with nothing made.
 */
int scenario_apply(const struct model *live, const struct scenario *sc,
    struct model **outp, size_t **failedp, size_t *n_failedp,
    struct err *e);

/*
 * Replaces m's demands with mx's; entries naming nodes m lacks are left
 * out and counted in m->n_unplaced and m->unplaced_bps, as storage does
 * for the policy's matrix.
 */
void model_use_matrix(struct model *m, const struct matrix *mx);

/*
 * Marks in cut[k] (n_demands entries, may be NULL) each demand with a
 * positive rate whose ends no path of up links joins; returns how many
 * and their total rate in *ratep (may be NULL).
 */
size_t model_cut_off(const struct model *m, bool *cut, double *ratep);

#endif /* WEFT_ENGINE_SCENARIO_H */
