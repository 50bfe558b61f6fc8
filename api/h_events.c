/* SPDX-License-Identifier: GPL-3.0-or-later */
/* GET /v1/events: change notifications as a Server-Sent Events stream. */

/*
 * DESIGN
 * One subscriber of the service's events (daemon/events.h) per stream,
 * their number bounded by events_max (503 beyond).  The reply body is a
 * stream (api/http.h): libmicrohttpd asks fill() for bytes on an HTTP
 * thread; when there is nothing to send, fill() returns 0, the connection
 * is suspended and no thread waits for it.  A posted event (or the
 * keep-alive timer) calls wake(), which resumes the connection, and
 * fill() is asked again.  A client that went away is noticed at the next
 * write, at the latest at the next keep-alive.  The text follows the
 * event stream format of the WHATWG HTML standard (9.2): "id", "event"
 * and "data" fields, a blank line after each event, ":" comment lines
 * for keep-alives; Last-Event-ID on a reconnection resumes after that id
 * while the events are still kept.
 */

#include <errno.h>
#include <inttypes.h>
#include <math.h>
#include <stdbool.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "handlers.h"
#include "../daemon/base/err.h"
#include "../daemon/base/xalloc.h"
#include "../daemon/events.h"
#include "../daemon/service.h"
#include "http.h"
#include "reply.h"

#define RETRY_MS	2000	/* reconnection delay the client is told */

struct sse {
	struct events *evs;	/* borrowed: the service's */
	struct events_sub *sub;	/* owned */
	struct http_stream *stream;	/* borrowed: owns this struct */
	bool started;		/* the opening lines are out */
	char pend[512];		/* text being sent */
	size_t pend_len, pend_off;
};

/* Called by the events module, its lock held: only resume. */
static void
wake(void *ctx)
{
	struct sse *c = ctx;

	http_stream_wake(c->stream);
}

static void
done(void *ctx)
{
	struct sse *c = ctx;

	events_unsubscribe(c->evs, c->sub);
	free(c);
}

/* A number for a data line: JSON has no NaN or infinity. */
static void
num(char *buf, size_t n, double x)
{
	if (isfinite(x))
		snprintf(buf, n, "%.17g", x);
	else
		snprintf(buf, n, "null");
}

/* Writes event ev as stream text into c->pend. */
static void
format(struct sse *c, const struct event *ev)
{
	char util[40];
	int n;

	switch (ev->kind) {
	case EVENT_PLAN:
		num(util, sizeof(util), ev->max_util);
		n = snprintf(c->pend, sizeof(c->pend), "id: %" PRIu64 "\n"
		    "event: plan\ndata: {\"revision\":%lld,\"model_revision\":"
		    "%lld,\"status\":\"%s\",\"max_utilization\":%s}\n\n",
		    ev->id, (long long)ev->revision,
		    (long long)ev->model_revision, ev->status, util);
		break;
	case EVENT_MODEL:
		n = snprintf(c->pend, sizeof(c->pend), "id: %" PRIu64 "\n"
		    "event: model\ndata: {\"model_revision\":%lld}\n\n",
		    ev->id, (long long)ev->model_revision);
		break;
	default:
		n = snprintf(c->pend, sizeof(c->pend), "id: %" PRIu64 "\n"
		    "event: sweep\ndata: {\"id\":%lld,\"done\":%ld,"
		    "\"total\":%ld,\"state\":\"%s\"}\n\n", ev->id,
		    (long long)ev->revision, ev->done, ev->total, ev->status);
		break;
	}
	c->pend_len = n > 0 && (size_t)n < sizeof(c->pend) ? (size_t)n : 0;
	c->pend_off = 0;
}

static long
fill(void *ctx, char *buf, size_t max)
{
	struct sse *c = ctx;
	struct event ev;
	size_t n;
	int k;

	if (c->pend_off >= c->pend_len) {
		if (!c->started) {
			c->started = true;
			k = snprintf(c->pend, sizeof(c->pend),
			    ": weft events\nretry: %d\n\n", RETRY_MS);
			c->pend_len = (size_t)k;
			c->pend_off = 0;
		} else {
			switch (events_next(c->evs, c->sub, &ev)) {
			case EVENTS_EVENT:
				format(c, &ev);
				break;
			case EVENTS_KEEPALIVE:
				memcpy(c->pend, ": keep-alive\n\n", 14);
				c->pend_len = 14;
				c->pend_off = 0;
				break;
			case EVENTS_END:
				return HTTP_FILL_END;
			default:
				return 0;
			}
		}
	}
	n = c->pend_len - c->pend_off;
	if (n > max)
		n = max;
	memcpy(buf, c->pend + c->pend_off, n);
	c->pend_off += n;
	return (long)n;
}

int
h_events(struct req *rq, struct err *e)
{
	const char *lei = http_header(rq, "Last-Event-ID");
	unsigned long long last = 0;
	bool has_last = false;
	struct sse *c;
	char *end;
	int r;

	/* An id we did not give (not a decimal number) is ignored. */
	if (lei != NULL && lei[0] >= '0' && lei[0] <= '9') {
		errno = 0;
		last = strtoull(lei, &end, 10);
		has_last = *end == '\0' && errno == 0;
	}
	c = xcalloc(1, sizeof(*c));
	c->evs = service_events(rq->svc);
	c->stream = http_stream_new(rq, fill, done, c);
	if ((r = events_subscribe(c->evs, has_last, (uint64_t)last, wake, c,
	    &c->sub, e)) != 0) {
		http_stream_free(c->stream);
		return r;
	}
	reply_stream(rq, "text/event-stream", c->stream);
	return 0;
}
