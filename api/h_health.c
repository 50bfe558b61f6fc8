/* SPDX-License-Identifier: GPL-3.0-or-later */
/* GET /v1/health: the daemon serves; revisions and the solver's state. */
#include <stdint.h>

#include "handlers.h"
#include "../daemon/base/err.h"
#include "../daemon/service.h"
#include "http.h"
#include "reply.h"

int
h_health(struct req *rq, struct err *e)
{
	struct service_status st;
	int r;

	if ((r = service_status(rq->svc, &st, e)) != 0)
		return r;
	/*
	 * "current" says whether the published plan reflects the newest
	 * model; a failed solve keeps the last good plan published.
	 */
	reply_packf(rq, 200, "{s:s, s:I, s:I, s:I, s:b, s:{s:b, s:I, s:s}}",
	    "status", "ok",
	    "model_revision", (long long)st.model_revision,
	    "plan_revision", (long long)st.plan_revision,
	    "plan_model_revision", (long long)st.plan_model_revision,
	    "plan_current", st.plan_revision > 0 &&
	    st.plan_model_revision == st.model_revision,
	    "solver", "last_solve_failed", st.last_solve_failed,
	    "failed_model_revision", (long long)st.failed_model_revision,
	    "last_error", st.last_error);
	return 0;
}
