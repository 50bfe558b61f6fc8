/* SPDX-License-Identifier: GPL-3.0-or-later */
/* GET /metrics: the daemon's state in the OpenMetrics text format. */

#include <stdbool.h>
#include <stddef.h>

#include "handlers.h"
#include "../daemon/base/err.h"
#include "../daemon/events.h"
#include "../daemon/service.h"
#include "http.h"
#include "metrics.h"
#include "reply.h"

int
h_metrics(struct req *rq, struct err *e)
{
	struct service_status st;
	struct metrics_now mn = { 0 };
	struct published *pub;
	char *text;
	size_t len = 0;
	bool om;
	int r;

	if ((r = service_status(rq->svc, &st, e)) != 0)
		return r;
	om = metrics_wants_openmetrics(http_header(rq, "Accept"));
	pub = service_plan_ref(rq->svc);
	if (pub != NULL) {
		mn.plan_text = pub->metrics_text;
		mn.plan_len = pub->metrics_len;
	}
	mn.model_revision = st.model_revision;
	mn.plan_current = pub != NULL &&
	    pub->model_revision == st.model_revision;
	mn.last_solve_failed = st.last_solve_failed;
	mn.stats = service_stats(rq->svc);
	mn.long_polls = service_plan_waiters(rq->svc);
	mn.event_streams = events_count(service_events(rq->svc));
	text = metrics_render(&mn, om, &len);
	service_plan_unref(pub);
	reply_text(rq, om ? METRICS_CTYPE_OPENMETRICS : METRICS_CTYPE_TEXT,
	    text, len);
	return 0;
}
