/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Balance plans for very large matrices: the exponential potential method. */
#ifndef WEFT_ENGINE_FORM_POT_H
#define WEFT_ENGINE_FORM_POT_H

#include "engine.h"

/* form_pot_solve: the exact stages must decide (see form_pot.c). */
#define POT_NO_FIT	1

struct pot;

/*
 * Solves m (objective balance, checked by the caller) by the potential
 * method until the certified gap is at or below policy.gap_target (not
 * below 1e-4), the time limit or the pass limit.  Returns 0 with a plan,
 * POT_NO_FIT when the matrix does not fit within the headroom or was not
 * shown to, ERR_TIMEOUT when cancelled.  *kp holds the flows kept from
 * the previous solve (NULL: none); when m has the same nodes, links
 * (ends) and demands per source, the solve starts from them (plan->warm)
 * and, on success, *kp gets this solve's flows; on any other return *kp
 * is freed and NULL.
 */
int form_pot_solve(struct pot **kp, const struct model *m,
    const struct solve_opts *o, struct plan **planp, struct err *e);

/* Frees kept flows (NULL ok). */
void form_pot_free(struct pot *p);

#endif /* WEFT_ENGINE_FORM_POT_H */
