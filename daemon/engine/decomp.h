/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Splitting one source's aggregated arc flow into paths per demand. */
#ifndef WEFT_ENGINE_DECOMP_H
#define WEFT_ENGINE_DECOMP_H

/*
 * DESIGN
 * The node-arc formulation yields, per source s, one flow on each arc that
 * serves all of s's demands at once.  Flow decomposition (Ford and
 * Fulkerson) turns it into paths: first cancel every flow cycle, then,
 * for each sink t, walk backwards from t along arcs with positive flow
 * (the flow is acyclic, so the walk reaches s within |V| steps) and
 * subtract the path's bottleneck, until t has what its demands carry.
 * Each step zeroes an arc or finishes a sink, so a source costs
 * O((|A| + sinks) x |V|).  Numerical dust from the LP (flows at or below
 * eps, flow that conservation does not support) is dropped rather than
 * routed, so a demand may end with a hair less than the LP gave it; the
 * caller takes the carried rates from the paths.
 *
 * A struct decomp holds the graph and scratch space for one thread and is
 * reused for every source of one solve.
 */

#include <stddef.h>

#include "plan.h"

struct decomp;

/*
 * Returns scratch space for a graph of n_nodes and n_arcs arcs, arc a
 * running tail[a] -> head[a] (arrays copied).
 */
struct decomp *decomp_new(size_t n_nodes, size_t n_arcs,
    const size_t *tail, const size_t *head);

/* Frees d; d may be NULL. */
void decomp_free(struct decomp *d);

/*
 * Decomposes the flow of source src.  flow[a] is the source's flow on arc a
 * in LP units; it is destroyed.  Flows at or below eps count as zero.  The
 * source has n_dem demands: dem[j] is the index of demand j's route in
 * routes, dst[j] its sink and want[j] its carried rate in LP units.  Where
 * several demands share a sink, earlier ones are served first (callers
 * list them most important first).  Appends to each routes[dem[j]] its
 * paths, in bit/s (LP units x scale), sorted largest rate first, and sets
 * its carried_bps to their sum; unserved_bps is left to the caller.  The
 * routes must have no paths yet.
 */
void decomp_source(struct decomp *d, size_t src, double *flow, double eps,
    size_t n_dem, const size_t *dem, const size_t *dst, const double *want,
    double scale, struct plan_route *routes);

#endif /* WEFT_ENGINE_DECOMP_H */
