/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The plan's routes and loads as streamed JSON: filtered, paged, cursors. */
#ifndef WEFT_API_PLAN_LIST_H
#define WEFT_API_PLAN_LIST_H

/*
 * DESIGN
 * GET /v1/plan/routes and /v1/plan/loads are not rendered whole: a
 * plan_list walks the published plan's demands (or links) in model order
 * and writes one entry at a time (api/codec_plan.h) into a small pending
 * buffer that plan_list_fill() hands to libmicrohttpd as it asks, so a
 * reply of hundreds of megabytes never exists in memory.  The model and
 * plan are borrowed: the caller keeps them alive (h_plan.c holds the
 * published plan's reference until the stream is freed).
 *
 * Without paging the text is exactly what codec_plan_render() writes.
 * With paging ("paged") at most limit entries are written and the object
 * ends with "next": the cursor "R.K" of the next page (R the plan
 * revision, K the index of the demand or link to resume at), or null when
 * no matching entry is left.  A cursor names the plan it was cut from, so
 * its pages stay consistent while newer plans are published.
 *
 * One list is used by one thread at a time (libmicrohttpd's reader).
 */

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#include "../daemon/engine/engine.h"

enum plan_list_kind {
	PLAN_LIST_ROUTES,	/* demands, GET /v1/plan/routes */
	PLAN_LIST_LOADS,	/* links, GET /v1/plan/loads */
};

/* What a list carries: model indices, -1 for "any". */
struct plan_list_opts {
	enum plan_list_kind kind;
	long src;		/* routes: the demand's source node */
	long dst;		/* routes: the demand's destination node */
	long link;		/* routes: a path uses this link; loads: this
				   link only */
	long node;		/* loads: links with an end at this node */
	size_t start;		/* first index looked at (a cursor's K) */
	size_t limit;		/* entries at most; 0: no limit */
	bool paged;		/* write "next" (limit or a cursor given) */
};

struct plan_list;

/*
 * Makes a list of plan p (solved from m, published as revision) with
 * options o; m and p are borrowed until plan_list_free().  p NULL: an
 * empty list.  Never fails (start past the end gives an empty page).
 */
struct plan_list *plan_list_new(const struct model *m, const struct plan *p,
    int64_t revision, const struct plan_list_opts *o);

/* The number of entries the list walks (demands or links; 0 with no
   plan): a cursor's K is at most this. */
size_t plan_list_size(const struct model *m, const struct plan *p,
    enum plan_list_kind kind);

/*
 * As http_fill_fn: writes the next bytes of the text into buf (at most
 * max), returns how many (>= 1), or HTTP_FILL_END when the text is
 * complete.  Never 0.  An entry that cannot be rendered (our bug) is
 * logged and ends the text early, leaving it invalid JSON, since the
 * status line is gone by then.
 */
long plan_list_fill(void *ctx, char *buf, size_t max);

/* Frees l (NULL ok). */
void plan_list_free(struct plan_list *l);

#endif /* WEFT_API_PLAN_LIST_H */
