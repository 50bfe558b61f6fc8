/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Renders a published plan into the JSON texts the plan routes serve. */
#ifndef WEFT_API_CODEC_PLAN_H
#define WEFT_API_CODEC_PLAN_H

/*
 * DESIGN
 * A plan is rendered once, when the solver thread publishes it, into three
 * texts (summary, routes, loads); GET /v1/plan* then only copies bytes.
 * The shapes are documented in docs/api.md.  Doubles are printed with 17
 * significant digits, so they read back exactly; a non-finite value (which
 * a correct plan never holds) is written as null.
 */

#include <stddef.h>
#include <stdint.h>

#include <stdbool.h>

struct json_t;
struct model;
struct plan;

/* Entries of an explain list (bottleneck, cut_off) at most. */
#define CODEC_EXPLAIN_MAX	1000

/*
 * The plan summary of GET /v1/plan as a JSON object (NULL p: a failed
 * solve), with explain when traffic was left unserved; *okp false when
 * something could not be built.  For api/codec_*.c (jansson).
 */
struct json_t *codec_plan_summary(const struct model *m,
    const struct plan *p, int64_t revision, bool *okp);

/*
 * Renders plan p, solved from model m and published as plan revision
 * revision, into three new NUL-terminated JSON texts: *summaryp (GET
 * /v1/plan), *routesp (GET /v1/plan/routes) and *loadsp (GET
 * /v1/plan/loads), with their lengths (without the NUL).  p may be NULL
 * (the solve failed): the summary then has status "failed" and the
 * routes and loads are empty.  The texts belong to the caller (free()).
 * Returns 0, or ERR_INTERNAL (the plan does not match the model, or
 * jansson failed) with every out-parameter NULL.  Any thread may call it.
 */
int codec_plan_render(const struct model *m, const struct plan *p,
    int64_t revision, char **summaryp, size_t *summary_lenp, char **routesp,
    size_t *routes_lenp, char **loadsp, size_t *loads_lenp);

#endif /* WEFT_API_CODEC_PLAN_H */
