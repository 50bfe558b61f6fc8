/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Renders the difference of two plans (GET /v1/plan/diff) as JSON. */
#ifndef WEFT_API_CODEC_DIFF_H
#define WEFT_API_CODEC_DIFF_H

/*
 * DESIGN
 * plandiff_compute() says which demands changed and by how much; this file
 * adds what a person needs to read it: node ids, and each changed demand's
 * old and new paths (link ids) with their rates, taken from the two plans.
 * The shape is documented in docs/api.md under "Plan diff".
 */

#include <stddef.h>
#include <stdint.h>

struct model;
struct plan;
struct plandiff;

/*
 * Renders diff d of plan old_p (model old_m, plan revision from) and plan
 * new_p (model new_m, revision to) into a new NUL-terminated JSON text
 * *textp of *lenp bytes (the caller frees it).  Returns 0, or ERR_INTERNAL
 * (d does not fit the plans, or jansson failed) with *textp NULL.  Any
 * thread.
 */
int codec_diff_render(const struct model *old_m, const struct plan *old_p,
    int64_t from, const struct model *new_m, const struct plan *new_p,
    int64_t to, const struct plandiff *d, char **textp, size_t *lenp);

#endif /* WEFT_API_CODEC_DIFF_H */
