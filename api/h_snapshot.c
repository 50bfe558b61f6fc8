/* SPDX-License-Identifier: GPL-3.0-or-later */
/* GET /v1/snapshot: the published plan's model and figures as one file. */
#include <stddef.h>

#include "handlers.h"
#include "../daemon/base/err.h"
#include "../daemon/service.h"
#include "codec_snapshot.h"
#include "http.h"
#include "reply.h"

/*
 * The snapshot is made from the published plan's own model (the one its
 * solve read), so model, revisions and figures belong together without
 * any retry; a model revision written since is not in it (the plan's
 * model_revision says which one is).
 */
int
h_snapshot(struct req *rq, struct err *e)
{
	struct published *pub;
	char *text;
	size_t len = 0;

	if ((pub = service_plan_ref(rq->svc)) == NULL)
		return err_set(e, ERR_BUSY, "", "no plan has been published "
		    "yet; retry shortly");
	if (pub->plan == NULL) {
		err_set(e, ERR_CONFLICT, "", "the solve of model revision "
		    "%lld failed: there is no plan to take a snapshot of",
		    (long long)pub->model_revision);
		service_plan_unref(pub);
		return ERR_CONFLICT;
	}
	text = codec_snapshot_encode(pub->model, pub->summary_json,
	    pub->model_revision, pub->revision, &len);
	service_plan_unref(pub);
	return reply_encoded(rq, text, len, "the snapshot", e);
}
