/* SPDX-License-Identifier: GPL-3.0-or-later */
/* GET /v1/health: the daemon serves, with its model and plan revisions. */
#include <stdint.h>

#include "handlers.h"
#include "../daemon/base/err.h"
#include "../daemon/service.h"
#include "http.h"
#include "reply.h"

int
h_health(struct req *rq, struct err *e)
{
	struct published *pub;
	int64_t rev, plan_rev = 0;
	int r;

	if ((r = service_revision(rq->svc, &rev, e)) != 0)
		return r;
	if ((pub = service_plan_ref(rq->svc)) != NULL) {
		plan_rev = pub->revision;
		service_plan_unref(pub);
	}
	reply_packf(rq, 200, "{s:s, s:I, s:I}", "status", "ok",
	    "model_revision", (long long)rev, "plan_revision",
	    (long long)plan_rev);
	return 0;
}
