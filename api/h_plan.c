/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The plan routes (pre-rendered summary, routes, loads) and the LP export. */

/*
 * DESIGN
 * Plan replies borrow the published plan's pre-rendered text: the reply
 * takes the reference from service_plan_ref() and http.c drops it when
 * libmicrohttpd frees the response, so a newer plan may be published (and
 * this one released by the service) while the bytes are still being sent.
 */

#include <errno.h>
#include <stddef.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "handlers.h"
#include "../daemon/base/err.h"
#include "../daemon/engine/engine.h"
#include "../daemon/service.h"
#include "http.h"
#include "reply.h"

enum which { SUMMARY, ROUTES, LOADS };

static int
plan_text(struct req *rq, enum which w, struct err *e)
{
	struct published *pub;

	if ((pub = service_plan_ref(rq->svc)) == NULL)
		return err_set(e, ERR_BUSY, "", "no plan has been published "
		    "yet; retry shortly");
	switch (w) {
	case SUMMARY:
		reply_plan(rq, pub, pub->summary_json, pub->summary_len);
		break;
	case ROUTES:
		reply_plan(rq, pub, pub->routes_json, pub->routes_len);
		break;
	case LOADS:
		reply_plan(rq, pub, pub->loads_json, pub->loads_len);
		break;
	}
	return 0;
}

int
h_plan_summary(struct req *rq, struct err *e)
{
	return plan_text(rq, SUMMARY, e);
}

int
h_plan_routes(struct req *rq, struct err *e)
{
	return plan_text(rq, ROUTES, e);
}

int
h_plan_loads(struct req *rq, struct err *e)
{
	return plan_text(rq, LOADS, e);
}

int
h_model_export(struct req *rq, struct err *e)
{
	enum export_format fmt;
	const char *f, *s;
	char *text = NULL, *end;
	size_t len = 0;
	long stage = -1;
	int r;

	f = http_query(rq, "format");
	if (f == NULL || strcmp(f, "lp") == 0)
		fmt = EXPORT_LP;
	else if (strcmp(f, "mps") == 0)
		fmt = EXPORT_MPS;
	else
		return err_set(e, ERR_INVALID, "format", "the query parameter "
		    "format must be \"lp\" or \"mps\"");
	if ((s = http_query(rq, "stage")) != NULL) {
		errno = 0;
		stage = strtol(s, &end, 10);
		if (s[0] == '\0' || *end != '\0' || errno != 0 || stage < -1 ||
		    stage >= PLAN_STAGES_MAX)
			return err_set(e, ERR_INVALID, "stage", "the query "
			    "parameter stage must be an integer from -1 (the "
			    "last stage) to %d", PLAN_STAGES_MAX - 1);
	}
	if ((r = service_export_model(rq->svc, fmt, (int)stage, &text, &len,
	    e)) != 0)
		return r;
	reply_text(rq, "text/plain; charset=utf-8", text, len);
	return 0;
}
