/* SPDX-License-Identifier: GPL-3.0-or-later */
/* GET /v1/plan/forwarding: per-node forwarding tables of the live plan. */

/*
 * DESIGN
 * The tables are not pre-rendered: they are derived from the published
 * plan on each request (fwd_build is linear in the plan's path lengths),
 * on the requesting HTTP thread, while a reference keeps the plan and its
 * model alive.  A destination whose next hops loop is reported in the
 * reply's "loops" and logged at warning level; the tables are served as
 * they are, never adjusted.  The reply carries the plan revision as ETag.
 */

#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>

#include "handlers.h"
#include "../daemon/base/err.h"
#include "../daemon/base/log.h"
#include "../daemon/engine/fwd.h"
#include "../daemon/service.h"
#include "codec_fwd.h"
#include "http.h"
#include "reply.h"

/* Resolves query parameter key to a node index of m in *idxp (-1: none). */
static int
node_param(struct req *rq, const struct model *m, const char *key,
    long *idxp, struct err *e)
{
	const char *id;

	*idxp = -1;
	if ((id = http_query(rq, key)) == NULL)
		return 0;
	if ((*idxp = model_find_node(m, id)) < 0)
		return err_set(e, ERR_NOTFOUND, key, "no node \"%.128s\" in "
		    "the planned topology", id);
	return 0;
}

int
h_plan_forwarding(struct req *rq, struct err *e)
{
	struct published *pub;
	struct fwd *f = NULL;
	char *text = NULL;
	size_t len = 0;
	long node, dst;
	int r;

	if ((pub = service_plan_ref(rq->svc)) == NULL)
		return err_set(e, ERR_BUSY, "", "no plan has been published "
		    "yet; retry shortly");
	r = ERR_INTERNAL;
	if (pub->plan == NULL || pub->model == NULL) {
		r = err_set(e, ERR_INTERNAL, "", "published plan has no "
		    "routes");
		goto out;
	}
	if ((r = node_param(rq, pub->model, "node", &node, e)) != 0 ||
	    (r = node_param(rq, pub->model, "dst", &dst, e)) != 0)
		goto out;
	if ((r = fwd_build(pub->model, pub->plan, &f, e)) != 0) {
		/* The plan came from this model: a mismatch is our bug. */
		r = ERR_INTERNAL;
		goto out;
	}
	if (fwd_n_loops(f) > 0)
		log_warn("forwarding tables loop revision=%lld "
		    "destinations=%zu", (long long)pub->revision,
		    fwd_n_loops(f));
	if ((r = codec_fwd_render(pub->model, f, pub->revision, node, dst,
	    &text, &len)) != 0)
		goto out;
	reply_json(rq, 200, text, len);
	snprintf(rq->etag, sizeof(rq->etag), "\"%lld\"",
	    (long long)pub->revision);
	r = 0;
out:
	fwd_free(f);
	service_plan_unref(pub);
	return r;
}
