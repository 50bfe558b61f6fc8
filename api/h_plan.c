/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The plan routes (pre-rendered summary, routes, loads) and the LP export. */

/*
 * DESIGN
 * Plan replies borrow the published plan's pre-rendered text: the reply
 * takes the reference from service_plan_ref() and http.c drops it when
 * libmicrohttpd frees the response, so a newer plan may be published (and
 * this one released by the service) while the bytes are still being sent.
 * The three plan texts carry the plan revision as their entity tag and
 * answer a matching If-None-Match with 304 (RFC 9110, 13.1.2).
 *
 * A long poll (GET /v1/plan?wait=S&after=R) is deferred like a what-if:
 * the connection is suspended and the service calls back (service.c,
 * planwait.c) when a plan newer than R is published, when S seconds have
 * passed or when the daemon stops; the callback, on that thread, sets the
 * reply as a plain GET /v1/plan would have it, then completes the request.
 */

#include <errno.h>
#include <math.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "handlers.h"
#include "../daemon/base/err.h"
#include "../daemon/base/xalloc.h"
#include "../daemon/engine/engine.h"
#include "../daemon/service.h"
#include "http.h"
#include "query.h"
#include "reply.h"

enum which { SUMMARY, ROUTES, LOADS };

/*
 * True when If-None-Match value inm (NULL: absent) matches the entity tag
 * etag ("\"12\"") under the weak comparison If-None-Match uses: "*", or a
 * list member equal to etag once any W/ prefix is set aside (RFC 9110,
 * 13.1.2 and 8.8.3.2).  A malformed member ends the list unmatched.
 */
static bool
none_match(const char *inm, const char *etag)
{
	const char *p = inm, *end;
	size_t n = strlen(etag);

	if (p == NULL)
		return false;
	for (;;) {
		p += strspn(p, " \t,");
		if (*p == '\0')
			return false;
		if (*p == '*')
			return true;
		if (p[0] == 'W' && p[1] == '/')
			p += 2;
		if (*p != '"' || (end = strchr(p + 1, '"')) == NULL)
			return false;
		end++;
		if ((size_t)(end - p) == n && memcmp(p, etag, n) == 0)
			return true;
		p = end;
		if (*p != '\0' && *p != ',' && *p != ' ' && *p != '\t')
			return false;
	}
}

/*
 * Replies with text w of the published plan, or 304 when inm (the
 * request's If-None-Match, NULL if none) matches its revision.
 */
static int
plan_text(struct req *rq, enum which w, const char *inm, struct err *e)
{
	struct published *pub;
	char etag[32];

	if ((pub = service_plan_ref(rq->svc)) == NULL)
		return err_set(e, ERR_BUSY, "", "no plan has been published "
		    "yet; retry shortly");
	snprintf(etag, sizeof(etag), "\"%lld\"", (long long)pub->revision);
	if (none_match(inm, etag)) {
		service_plan_unref(pub);
		reply_not_modified(rq, etag);
		return 0;
	}
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

/* A long poll in waiting. */
struct poll {
	struct req *rq;
	char *inm;		/* owned copy of If-None-Match, or NULL */
};

/* The service's callback: replies with the plan, completes the request. */
static void
poll_done(void *ctx, enum planwait_why why)
{
	struct poll *pl = ctx;
	struct req *rq = pl->rq;
	struct err e = { 0 };
	int r;

	(void)why;
	/* Timed out or stopping: the current plan, unchanged or not. */
	if ((r = plan_text(rq, SUMMARY, pl->inm, &e)) != 0)
		reply_error(rq, r, &e);
	free(pl->inm);
	free(pl);
	http_complete(rq);
}

int
h_plan_summary(struct req *rq, struct err *e)
{
	const char *inm = http_header(rq, "If-None-Match");
	struct published *pub;
	struct poll *pl;
	double wait_s;
	int64_t after;
	bool has_after, queued;
	int r;

	if ((r = query_poll(http_query(rq, "wait"), http_query(rq, "after"),
	    service_conf(rq->svc)->long_poll_max_s, &wait_s, &after,
	    &has_after, e)) != 0)
		return r;
	if (wait_s == 0)
		return plan_text(rq, SUMMARY, inm, e);
	if (!has_after) {
		/* Without after: a plan newer than the current one. */
		pub = service_plan_ref(rq->svc);
		after = pub != NULL ? pub->revision : 0;
		service_plan_unref(pub);
	}
	pl = xcalloc(1, sizeof(*pl));
	pl->rq = rq;
	pl->inm = inm != NULL ? xstrdup(inm) : NULL;
	/* Deferred before it is queued: a plan may come at once. */
	http_defer(rq);
	r = service_plan_wait(rq->svc, after, wait_s * 1e3, poll_done, pl,
	    &queued, e);
	if (r == 0 && queued)
		return 0;
	http_undefer(rq);
	free(pl->inm);
	free(pl);
	if (r != 0)
		return r;
	return plan_text(rq, SUMMARY, inm, e);
}

int
h_plan_routes(struct req *rq, struct err *e)
{
	return plan_text(rq, ROUTES, http_header(rq, "If-None-Match"), e);
}

int
h_plan_loads(struct req *rq, struct err *e)
{
	return plan_text(rq, LOADS, http_header(rq, "If-None-Match"), e);
}

int
h_model_export(struct req *rq, struct err *e)
{
	enum export_format fmt;
	char *text = NULL;
	size_t len = 0;
	int r, stage;

	if ((r = query_export(http_query(rq, "format"), http_query(rq,
	    "stage"), &fmt, &stage, e)) != 0)
		return r;
	if ((r = service_export_model(rq->svc, fmt, stage, &text, &len,
	    e)) != 0)
		return r;
	reply_text(rq, "text/plain; charset=utf-8", text, len);
	return 0;
}
