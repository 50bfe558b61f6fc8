/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Renders a published plan into the JSON texts the plan routes serve. */
#ifndef WEFT_API_CODEC_PLAN_H
#define WEFT_API_CODEC_PLAN_H

/*
 * DESIGN
 * The daemon renders a plan's summary once, when the solver thread
 * publishes it (GET /v1/plan then only copies bytes); the routes and
 * loads grow with the matrix, so they are written one entry at a time as
 * they are sent (api/plan_list.c, with the entry functions below), while
 * codec_plan_render() writes them whole for weft solve and the tests.
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
 * routes and loads are empty.  routesp and loadsp (with their lengths)
 * may be NULL: that text is then not rendered (the daemon renders only
 * the summary; it streams the lists, api/plan_list.h).  The texts belong
 * to the caller (free()).
 * Returns 0, or ERR_INTERNAL (the plan does not match the model, or
 * jansson failed) with every out-parameter NULL.  Any thread may call it.
 */
int codec_plan_render(const struct model *m, const struct plan *p,
    int64_t revision, char **summaryp, size_t *summary_lenp, char **routesp,
    size_t *routes_lenp, char **loadsp, size_t *loads_lenp);

/*
 * The entries of the lists one at a time, as codec_plan_render() writes
 * them inside "routes" and "links": each appends the compact text of
 * demand k's route, of link i's loads, or of the number x (null when not
 * finite) to the text at *bufp (*lenp bytes used of *capp allocated; the
 * buffer grows, NULL with 0 to start, and is not NUL-terminated).  p must
 * be a plan of m (NULL: ERR_INTERNAL).  Return 0, or ERR_INTERNAL (an
 * index out of range, an arc outside the plan, jansson failed) with *lenp
 * unchanged.  Any thread.
 */
int codec_plan_route_text(const struct model *m, const struct plan *p,
    size_t k, char **bufp, size_t *lenp, size_t *capp);
int codec_plan_link_text(const struct model *m, const struct plan *p,
    size_t i, char **bufp, size_t *lenp, size_t *capp);
int codec_plan_num_text(double x, char **bufp, size_t *lenp, size_t *capp);

#endif /* WEFT_API_CODEC_PLAN_H */
