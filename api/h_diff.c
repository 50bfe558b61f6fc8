/* SPDX-License-Identifier: GPL-3.0-or-later */
/* GET /v1/plan/diff?from=REV: what moved between a kept plan and the live one. */

/*
 * DESIGN
 * The service keeps the last SERVICE_PLANS_KEPT published plans with
 * their models (service_plan_ref_rev); this handler takes references on
 * the requested one and on the live one, compares them (plandiff.c) and
 * renders the result on the requesting HTTP thread.  A revision that was
 * never published, or is no longer kept, is 404 with the range that is
 * kept, so a client knows what it can ask for.
 */

#include <errno.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>

#include "handlers.h"
#include "../daemon/base/err.h"
#include "../daemon/engine/plandiff.h"
#include "../daemon/service.h"
#include "codec_diff.h"
#include "http.h"
#include "query.h"
#include "reply.h"

int
h_plan_diff(struct req *rq, struct err *e)
{
	struct published *cur = NULL, *old = NULL;
	struct plandiff *d = NULL;
	char *text = NULL;
	size_t len = 0;
	int64_t from, oldest, newest;
	int r;

	if ((r = query_from(http_query(rq, "from"), &from, e)) != 0)
		return r;
	if ((cur = service_plan_ref(rq->svc)) == NULL)
		return err_set(e, ERR_BUSY, "", "no plan has been published "
		    "yet; retry shortly");
	r = ERR_INTERNAL;
	if ((old = service_plan_ref_rev(rq->svc, from)) == NULL) {
		service_plans_kept(rq->svc, &oldest, &newest);
		if (from > cur->revision)
			r = err_set(e, ERR_NOTFOUND, "from", "plan revision "
			    "%lld has not been published; the newest is %lld",
			    (long long)from, (long long)cur->revision);
		else
			r = err_set(e, ERR_NOTFOUND, "from", "plan revision "
			    "%lld is no longer kept; the oldest kept is %lld",
			    (long long)from, (long long)(oldest != 0 ? oldest :
			    cur->revision));
		goto out;
	}
	if (old->plan == NULL || cur->plan == NULL) {
		r = err_set(e, ERR_INTERNAL, "", "a kept plan has no routes");
		goto out;
	}
	if ((r = plandiff_compute(old->model, old->plan, cur->model,
	    cur->plan, &d, e)) != 0) {
		/* Published plans fit their models: a mismatch is our bug. */
		r = ERR_INTERNAL;
		goto out;
	}
	if ((r = codec_diff_render(old->model, old->plan, old->revision,
	    cur->model, cur->plan, cur->revision, d, &text, &len)) != 0)
		goto out;
	reply_json(rq, 200, text, len);
	snprintf(rq->etag, sizeof(rq->etag), "\"%lld\"",
	    (long long)cur->revision);
	r = 0;
out:
	plandiff_free(d);
	service_plan_unref(old);
	service_plan_unref(cur);
	return r;
}
