/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The plan routes (summary, streamed routes and loads) and the LP export. */

/*
 * DESIGN
 * The summary borrows the published plan's pre-rendered text; the routes
 * and loads are streamed from the published plan (api/plan_list.h),
 * filtered and paged as the query asks.  Either way the reply holds the
 * reference from service_plan_ref() until libmicrohttpd frees the
 * response, so a newer plan may be published (and this one released by
 * the service) while the bytes are still being sent.  A page cursor names
 * its plan revision and is served from that plan while the service keeps
 * it (SERVICE_PLANS_KEPT), so the pages of one walk are consistent; a
 * cursor of a plan no longer kept gets 409.  The plan texts carry the
 * plan revision as their entity tag, with the content coding appended
 * when the reply is compressed ("12-gzip": another representation), and
 * answer a matching If-None-Match with 304 (RFC 9110, 13.1.2); the coding
 * is chosen before that comparison (http_coding()).
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
#include "compress.h"
#include "plan_list.h"
#include "../daemon/base/err.h"
#include "../daemon/base/xalloc.h"
#include "../daemon/engine/engine.h"
#include "../daemon/service.h"
#include "http.h"
#include "query.h"
#include "reply.h"


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

/* The entity tag of plan revision rev sent with coding c. */
static void
plan_etag(int64_t rev, enum compress_coding c, char *etag, size_t n)
{
	const char *w = compress_word(c);

	if (w != NULL)
		snprintf(etag, n, "\"%lld-%s\"", (long long)rev, w);
	else
		snprintf(etag, n, "\"%lld\"", (long long)rev);
}

/*
 * Replies with the published plan's summary, or 304 when inm (the
 * request's If-None-Match, NULL if none) matches its entity tag; accept
 * is the request's Accept-Encoding (NULL if none).
 */
static int
plan_text(struct req *rq, const char *inm, const char *accept,
    struct err *e)
{
	struct published *pub;
	enum compress_coding c;
	char etag[32];

	if ((pub = service_plan_ref(rq->svc)) == NULL)
		return err_set(e, ERR_BUSY, "", "no plan has been published "
		    "yet; retry shortly");
	c = compress_choose(accept, pub->summary_len);
	rq->coding = (int)c;
	rq->coding_set = true;
	plan_etag(pub->revision, c, etag, sizeof(etag));
	if (none_match(inm, etag)) {
		service_plan_unref(pub);
		reply_not_modified(rq, etag);
		return 0;
	}
	reply_plan(rq, pub, pub->summary_json, pub->summary_len);
	return 0;
}

/* A long poll in waiting. */
struct poll {
	struct req *rq;
	char *inm;		/* owned copy of If-None-Match, or NULL */
	char *accept;		/* owned copy of Accept-Encoding, NULL */
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
	if ((r = plan_text(rq, pl->inm, pl->accept, &e)) != 0)
		reply_error(rq, r, &e);
	free(pl->inm);
	free(pl->accept);
	free(pl);
	http_complete(rq);
}

int
h_plan_summary(struct req *rq, struct err *e)
{
	const char *inm = http_header(rq, "If-None-Match");
	const char *accept = http_header(rq, "Accept-Encoding");
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
		return plan_text(rq, inm, accept, e);
	if (!has_after) {
		/* Without after: a plan newer than the current one. */
		pub = service_plan_ref(rq->svc);
		after = pub != NULL ? pub->revision : 0;
		service_plan_unref(pub);
	}
	pl = xcalloc(1, sizeof(*pl));
	pl->rq = rq;
	pl->inm = inm != NULL ? xstrdup(inm) : NULL;
	pl->accept = accept != NULL ? xstrdup(accept) : NULL;
	/* Deferred before it is queued: a plan may come at once. */
	http_defer(rq);
	r = service_plan_wait(rq->svc, after, wait_s * 1e3, poll_done, pl,
	    &queued, e);
	if (r == 0 && queued)
		return 0;
	http_undefer(rq);
	free(pl->inm);
	free(pl->accept);
	free(pl);
	if (r != 0)
		return r;
	return plan_text(rq, inm, accept, e);
}

/*
 * Resolves query parameter key (a node id, or a link id when link) to an
 * index of m in *idxp; -1 when absent.  An empty value is ERR_INVALID, an
 * id not in m ERR_NOTFOUND (as GET /v1/plan/forwarding answers).
 */
static int
id_param(struct req *rq, const struct model *m, const char *key, bool link,
    long *idxp, struct err *e)
{
	const char *id, *what = link ? "link" : "node";

	*idxp = -1;
	if ((id = http_query(rq, key)) == NULL)
		return 0;
	if (id[0] == '\0')
		return err_set(e, ERR_INVALID, key, "the query parameter %s "
		    "must name a %s", key, what);
	*idxp = link ? model_find_link(m, id) : model_find_node(m, id);
	if (*idxp < 0)
		return err_set(e, ERR_NOTFOUND, key, "no %s \"%.128s\" in the "
		    "planned topology", what, id);
	return 0;
}

/* A streamed list and the plan reference that keeps its plan alive. */
struct list_ctx {
	struct published *pub;	/* reference held */
	struct plan_list *l;	/* owned; borrows pub's model and plan */
};

static long
list_fill(void *ctx, char *buf, size_t max)
{
	struct list_ctx *c = ctx;

	return plan_list_fill(c->l, buf, max);
}

static void
list_done(void *ctx)
{
	struct list_ctx *c = ctx;

	plan_list_free(c->l);
	service_plan_unref(c->pub);
	free(c);
}

/*
 * GET /v1/plan/routes and /v1/plan/loads: the query checked, the plan
 * chosen (the newest, or the cursor's), the filters resolved against its
 * model, then the list streamed (or 304).
 */
static int
plan_list_reply(struct req *rq, enum plan_list_kind kind, struct err *e)
{
	static const char *const routes_params[] = { "src", "dst", "link",
	    "limit", "after", NULL };
	static const char *const loads_params[] = { "node", "link", "limit",
	    "after", NULL };
	struct plan_list_opts o = { .kind = kind, .src = -1, .dst = -1,
	    .link = -1, .node = -1 };
	struct published *pub = NULL;
	struct list_ctx *c;
	struct http_stream *s;
	enum compress_coding coding;
	char etag[32];
	int64_t rev;
	size_t start;
	bool has_after;
	int r;

	r = ERR_INTERNAL;
	if ((r = http_query_check(rq, kind == PLAN_LIST_ROUTES ?
	    routes_params : loads_params, e)) != 0 ||
	    (r = query_page(http_query(rq, "limit"), http_query(rq, "after"),
	    &o.limit, &has_after, &rev, &start, e)) != 0)
		return r;
	if ((pub = service_plan_ref(rq->svc)) == NULL)
		return err_set(e, ERR_BUSY, "", "no plan has been published "
		    "yet; retry shortly");
	if (has_after && rev != pub->revision) {
		service_plan_unref(pub);
		if ((pub = service_plan_ref_rev(rq->svc, rev)) == NULL)
			return err_set(e, ERR_CONFLICT, "after", "the cursor "
			    "belongs to plan revision %lld, which is no longer "
			    "kept (the last %d plans are); start again without "
			    "after", (long long)rev, SERVICE_PLANS_KEPT);
	}
	if (pub->model == NULL) {
		r = err_set(e, ERR_INTERNAL, "", "published plan has no model");
		goto out;
	}
	if (kind == PLAN_LIST_ROUTES) {
		if ((r = id_param(rq, pub->model, "src", false, &o.src,
		    e)) != 0 ||
		    (r = id_param(rq, pub->model, "dst", false, &o.dst,
		    e)) != 0)
			goto out;
	} else if ((r = id_param(rq, pub->model, "node", false, &o.node,
	    e)) != 0) {
		goto out;
	}
	if ((r = id_param(rq, pub->model, "link", true, &o.link, e)) != 0)
		goto out;
	if (has_after && start > plan_list_size(pub->model, pub->plan,
	    kind)) {
		r = err_set(e, ERR_INVALID, "after", "the cursor points past "
		    "the end of plan revision %lld", (long long)rev);
		goto out;
	}
	o.start = start;
	o.paged = o.limit > 0 || has_after;
	coding = http_coding(rq, SIZE_MAX);
	plan_etag(pub->revision, coding, etag, sizeof(etag));
	if (none_match(http_header(rq, "If-None-Match"), etag)) {
		reply_not_modified(rq, etag);
		r = 0;
		goto out;
	}
	c = xcalloc(1, sizeof(*c));
	c->l = plan_list_new(pub->model, pub->plan, pub->revision, &o);
	c->pub = pub;
	pub = NULL;
	s = http_stream_new(rq, list_fill, list_done, c);
	reply_list(rq, s, c->pub->revision);
	r = 0;
out:
	service_plan_unref(pub);
	return r;
}

int
h_plan_routes(struct req *rq, struct err *e)
{
	return plan_list_reply(rq, PLAN_LIST_ROUTES, e);
}

int
h_plan_loads(struct req *rq, struct err *e)
{
	return plan_list_reply(rq, PLAN_LIST_LOADS, e);
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
