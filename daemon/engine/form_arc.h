/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The node-arc formulation, with commodities aggregated per source. */
#ifndef WEFT_ENGINE_FORM_ARC_H
#define WEFT_ENGINE_FORM_ARC_H

#include "engine.h"

struct err;

/*
 * Largest LP the formulation builds, in flow columns (sources with demand
 * x arcs of up links).  Beyond it the LP would not solve in useful time;
 * brain-sized networks (161 nodes, 664 arcs) need about 1e5.
 */
#define FORM_ARC_COLS_MAX	4000000

/*
 * Solves m, which engine_check() accepted, with the node-arc formulation
 * and the staged objectives described in engine.h.  Returns 0 with a new
 * plan in *planp, ERR_TOOBIG when the LP would exceed FORM_ARC_COLS_MAX,
 * ERR_INVALID when o asks to export a stage that is not solved,
 * ERR_IO when the export cannot be written, ERR_TIMEOUT or ERR_SOLVER;
 * detail in e.  Any thread; no shared state.
 */
int form_arc_solve(const struct model *m, const struct solve_opts *o,
    struct plan **planp, struct err *e);

#endif /* WEFT_ENGINE_FORM_ARC_H */
