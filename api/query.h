/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The values of query parameters: checked, converted, named in errors. */
#ifndef WEFT_API_QUERY_H
#define WEFT_API_QUERY_H

/*
 * DESIGN
 * libmicrohttpd splits the query string and undoes its percent escapes
 * (http_query()); what a value means is read here, apart from the
 * handlers, so that the readers take plain strings and can be tested and
 * fuzzed (tests/fuzz/fuzz_query.c) without a connection.  A value arrives
 * as a NUL-terminated string of any bytes, or NULL when the parameter is
 * absent.  Each reader returns 0 with its out-parameters set, or
 * ERR_INVALID with where the parameter's name; out-parameters are set
 * (to their "absent" value) also on failure.  Pure functions: any thread.
 */

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#include "../daemon/engine/engine.h"

struct err;

/*
 * GET /v1/plan?wait=S&after=R: wait is seconds, a number above 0 and at
 * most max_s; after (only with wait) a plan revision >= 0.  *wait_sp is 0
 * when wait is absent; *has_afterp false when after is.
 */
int query_poll(const char *wait, const char *after, double max_s,
    double *wait_sp, int64_t *afterp, bool *has_afterp, struct err *e);

/* GET /v1/plan/diff?from=R: a plan revision >= 1, required. */
int query_from(const char *from, int64_t *revp, struct err *e);

/*
 * GET /v1/model?format=F&stage=N: format "lp" (also when absent) or
 * "mps"; stage an integer from -1 (the last stage, also when absent) to
 * PLAN_STAGES_MAX - 1.
 */
int query_export(const char *format, const char *stage,
    enum export_format *fmtp, int *stagep, struct err *e);

/* The largest page GET /v1/plan/routes and /v1/plan/loads give. */
#define QUERY_LIMIT_MAX	1000000

/*
 * GET /v1/plan/routes|loads?limit=N&after=C: limit an integer from 1 to
 * QUERY_LIMIT_MAX (*limitp 0 when absent); after a cursor "R.K" as a
 * reply's "next" gives it, R a plan revision >= 1 and K an index >= 0,
 * both decimal without sign (*has_afterp false when absent).
 */
int query_page(const char *limit, const char *after, size_t *limitp,
    bool *has_afterp, int64_t *revp, size_t *indexp, struct err *e);

#endif /* WEFT_API_QUERY_H */
