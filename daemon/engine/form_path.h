/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The path formulation, solved by column generation, with a kept master. */
#ifndef WEFT_ENGINE_FORM_PATH_H
#define WEFT_ENGINE_FORM_PATH_H

#include "engine.h"

struct err;

/*
 * Solves m, which engine_check() accepted, with the path formulation and
 * the staged objectives described in engine.h.  *stp is the master kept
 * from the previous call (NULL: none).  When m has the structure *stp was
 * built for (engine.h says what that is), the differences are applied to
 * the kept master and it is re-optimised from its basis (plan->warm);
 * otherwise a new master replaces it.  Returns 0 with a new plan in
 * *planp and the state in *stp; on any error *stp is freed and set to
 * NULL, *planp is NULL and e has the detail: ERR_INVALID when o asks for
 * an export (only the node-arc formulation exports), ERR_TIMEOUT,
 * ERR_SOLVER.  The state belongs to the calling thread.
 */
int form_path_solve(struct engine_state **stp, const struct model *m,
    const struct solve_opts *o, struct plan **planp, struct err *e);

/*
 * The place in *stp (made, without a master, when *stp is NULL) where the
 * potential method keeps its flows between solves (form_pot.h).
 */
struct pot **form_path_pot_slot(struct engine_state **stp);

/* Frees a state (NULL ok), on the thread that made it. */
void form_path_state_free(struct engine_state *st);

#endif /* WEFT_ENGINE_FORM_PATH_H */
