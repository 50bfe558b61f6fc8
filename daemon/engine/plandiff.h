/* SPDX-License-Identifier: GPL-3.0-or-later */
/* What changed between two plans: demands whose paths moved, and how much. */
#ifndef WEFT_ENGINE_PLANDIFF_H
#define WEFT_ENGINE_PLANDIFF_H

/*
 * DESIGN
 * The two plans may come from different model snapshots (a link went
 * down, a matrix was replaced), so nothing is compared by index.  A demand
 * is identified by (source id, sink id, priority, occurrence), where
 * occurrence counts earlier demands of the same model with the same three
 * fields (0 for the first): a matrix may hold one pair twice.  A path is
 * identified by its sequence of link ids (links, not arcs: a path's
 * direction is fixed by its demand's ends).
 *
 * For a demand present in both plans, its old and new paths give two
 * vectors of rates over the union of their paths (0 where a path is
 * absent), and moved_bps = 1/2 sum |old - new|.  When the carried rate
 * stays the same this is exactly the traffic that has to change paths;
 * when it changes (traffic becomes unserved, or is admitted again), the
 * difference counts half.  A demand counts as changed when moved_bps
 * exceeds PLANDIFF_TOL times the larger of its two carried rates (or 1
 * bit/s), so rounding dust in re-solved rates is not reported as a move.
 * Demands in only one plan are "added" or "removed"; they are listed but
 * not counted in moved_bps, since their traffic did not move.
 *
 * Pure function of its arguments: any thread; the result borrows nothing.
 */

#include <stdbool.h>
#include <stddef.h>

struct err;
struct model;
struct plan;

#define PLANDIFF_TOL	1e-9	/* relative: below this nothing moved */

enum plandiff_kind {
	PLANDIFF_CHANGED = 0,	/* in both plans, paths or rates differ */
	PLANDIFF_ADDED = 1,	/* only in the new plan */
	PLANDIFF_REMOVED = 2,	/* only in the old plan */
};

struct plandiff_demand {
	enum plandiff_kind kind;
	long old_k;		/* demand index in the old model, -1: none */
	long new_k;		/* demand index in the new model, -1: none */
	size_t occurrence;	/* see DESIGN */
	double moved_bps;	/* 0 for added and removed demands */
};

struct plandiff {
	struct plandiff_demand *demands;	/* owned: only the demands
						   that changed, were added
						   or removed, in the new
						   model's order, then the
						   removed ones in the old
						   model's order */
	size_t n_demands;
	size_t n_compared;	/* demands present in both plans */
	size_t n_changed;
	size_t n_added;
	size_t n_removed;
	double moved_bps;	/* sum over changed demands */
	double old_carried_bps;	/* sum of the old plan's carried rates */
	double new_carried_bps;	/* same for the new plan */
	double moved_share;	/* moved_bps / max(old, new carried); 0 when
				   both carry nothing.  In [0, 1]. */
};

/*
 * Compares plan old_p (solved from old_m) with new_p (from new_m).
 * Returns 0 with a new diff in *dp (free with plandiff_free), or
 * ERR_INVALID when a plan does not fit its model (route or arc count, an
 * arc index out of range), with *dp NULL and detail in e.
 */
int plandiff_compute(const struct model *old_m, const struct plan *old_p,
    const struct model *new_m, const struct plan *new_p,
    struct plandiff **dp, struct err *e);

/* Frees d (NULL ok). */
void plandiff_free(struct plandiff *d);

#endif /* WEFT_ENGINE_PLANDIFF_H */
