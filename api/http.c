/* SPDX-License-Identifier: GPL-3.0-or-later */
/* libmicrohttpd glue: start and stop the server, run each request's life. */

/*
 * DESIGN
 * libmicrohttpd runs a pool of conf->threads threads (epoll where
 * available); each connection stays on one thread, so a struct req is
 * never touched by two threads.  libmicrohttpd calls on_request() several
 * times per request:
 *   1. first, with the headers: the req is made, the route matched, the
 *      bearer token checked against the route's role (auth.c), the
 *      Content-Type and Content-Length checked.  A failure here is kept in
 *      req->early and replied to at step 3, unless the client waits for
 *      "100 Continue", in which case it is replied to at once and the body
 *      is never sent.
 *   2. with each piece of the body: kept up to the route's limit; past the
 *      limit (or after an early failure) counted and dropped, so a client
 *      still reads its 413; past DISCARD_MAX the connection is closed.
 *   3. last, with no data: the handler runs (or the early error is
 *      replied) and the reply is queued.
 * send_reply() records every request to a write route (operate or
 * admin), accepted or refused, in the audit log before queueing the
 * reply; the model revision comes from the service
 * (service_write_revision_take(), around the handler on this thread).
 * on_completed() counts and logs the request line and frees the req.
 * Reply bodies are handed to libmicrohttpd without copying: owned text is
 * freed by its free callback, a borrowed plan text drops its plan
 * reference there.  A streamed body (http_stream_new) is read through a
 * libmicrohttpd content reader: when the stream has nothing to send, the
 * reader suspends the connection and returns 0, and http_stream_wake()
 * resumes it; the woken flag, under the stream's lock, keeps a wake that
 * comes while the stream is being read from being lost.
 * A reply marked compressible gets Vary: Accept-Encoding and, when the
 * client accepts it, a content coding (api/compress.h): a whole body is
 * compressed once before it is queued, a streamed one piece by piece in
 * the content reader; the entity tag then names the coding ("12-gzip"),
 * since the coded bytes are another representation (RFC 9110, 8.8.3).
 */

#include <sys/socket.h>
#include <sys/types.h>

#include <errno.h>
#include <netdb.h>
#include <pthread.h>
#include <stdarg.h>
#include <stdatomic.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>
#include <time.h>

#include <microhttpd.h>

#include "http.h"
#include "auth.h"
#include "compress.h"
#include "../daemon/base/clock.h"
#include "../daemon/base/err.h"
#include "../daemon/base/hostport.h"
#include "../daemon/base/log.h"
#include "../daemon/base/xalloc.h"
#include "../daemon/service.h"
#include "metrics.h"
#include "reply.h"
#include "routes.h"

/* Body bytes read and dropped before the connection is simply closed. */
#define DISCARD_MAX	((size_t)64 * 1024 * 1024)

/* A deferred request's state (req->defer), under http->defer_mu. */
enum {
	DEFER_NONE = 0,
	DEFER_WAITING = 1,	/* handed off, connection not yet suspended */
	DEFER_SUSPENDED = 2,	/* connection suspended */
	DEFER_DONE = 3,		/* reply set: send it */
};

struct http_stream {
	pthread_mutex_t mu;
	struct MHD_Connection *conn;	/* borrowed */
	http_fill_fn *fill;
	http_done_fn *done;
	void *ctx;
	struct compress *z;	/* owned: the content coding, or NULL */
	bool woken;		/* under mu: wake since the last fill */
	bool suspended;		/* under mu: suspended by the reader */
};

struct http {
	pthread_mutex_t defer_mu;
	struct MHD_Daemon *mhd;
	struct service *svc;	/* borrowed */
	size_t max_body;	/* bytes */
	unsigned boot;		/* start time, makes request ids unique */
	atomic_ullong n_req;	/* requests so far */
	atomic_int active;	/* requests not yet completed */
	struct auth *auth;	/* owned: the token checker */
	char *tls_cert;		/* owned: PEM text, NULL without TLS */
	char *tls_key;		/* owned: PEM text, wiped when freed */
};

/* How long http_stop() lets requests in flight finish, ms. */
#define STOP_GRACE_MS	2000

const char *
http_query(struct req *rq, const char *key)
{
	return MHD_lookup_connection_value(rq->conn, MHD_GET_ARGUMENT_KIND,
	    key);
}

const char *
http_header(struct req *rq, const char *key)
{
	return MHD_lookup_connection_value(rq->conn, MHD_HEADER_KIND, key);
}

enum compress_coding
http_coding(struct req *rq, size_t len)
{
	enum compress_coding c;

	c = compress_choose(http_header(rq,
	    MHD_HTTP_HEADER_ACCEPT_ENCODING), len);
	rq->coding = (int)c;
	rq->coding_set = true;
	return c;
}

/* http_query_check()'s walk over the query parameters. */
struct qcheck {
	const char *const *allowed;	/* at most 32 names */
	uint32_t seen;		/* bit i: allowed[i] was met */
	struct err *e;
	int r;
};

static enum MHD_Result
qcheck_one(void *cls, enum MHD_ValueKind kind, const char *key,
    const char *value)
{
	struct qcheck *qc = cls;
	size_t i;

	(void)kind;
	for (i = 0; i < 32 && qc->allowed[i] != NULL; i++)
		if (strcmp(qc->allowed[i], key) == 0)
			break;
	if (i == 32 || qc->allowed[i] == NULL)
		qc->r = err_set(qc->e, ERR_INVALID, key, "unknown query "
		    "parameter \"%.64s\"", key);
	else if (value == NULL)
		qc->r = err_set(qc->e, ERR_INVALID, key, "the query "
		    "parameter %s needs a value", key);
	else if (qc->seen & (UINT32_C(1) << i))
		/* A repeated parameter would be read as its first value. */
		qc->r = err_set(qc->e, ERR_INVALID, key, "the query "
		    "parameter %s is given more than once", key);
	qc->seen |= UINT32_C(1) << (i & 31);
	return qc->r == 0 ? MHD_YES : MHD_NO;
}

int
http_query_check(struct req *rq, const char *const *allowed, struct err *e)
{
	struct qcheck qc = { allowed, 0, e, 0 };

	(void)MHD_get_connection_values(rq->conn, MHD_GET_ARGUMENT_KIND,
	    qcheck_one, &qc);
	return qc.r;
}

/* Frees rq and everything it owns. */
static void
req_free(struct req *rq)
{
	if (rq == NULL)
		return;
	reply_clear(rq);
	free(rq->body);
	free(rq->path);
	free(rq);
}

/*
 * Step 1: makes the req, matches the route, checks the headers.  Errors
 * land in rq->early.
 */
static struct req *
req_new(struct http *h, struct MHD_Connection *conn, const char *url,
    const char *method)
{
	struct req *rq;
	const char *cl, *ctype;
	unsigned long long n;
	char *end;
	int r;

	rq = xcalloc(1, sizeof(*rq));
	atomic_fetch_add(&h->active, 1);
	rq->http = h;
	rq->start_ms = clock_ms();
	rq->svc = h->svc;
	rq->conn = conn;
	snprintf(rq->method, sizeof(rq->method), "%s", method);
	rq->path = xstrdup(url);
	snprintf(rq->id, sizeof(rq->id), "%08x-%llu", h->boot,
	    (unsigned long long)atomic_fetch_add(&h->n_req, 1) + 1);

	r = routes_match(rq->method, rq->path, &rq->route, rq->param,
	    sizeof(rq->param), rq->allow, sizeof(rq->allow), &rq->early_e);
	if (r != 0) {
		rq->early = r;
		return rq;
	}
	/* Before anything else about the request: a refused client learns
	   nothing of limits or media types. */
	r = auth_check(h->auth, rq->route->role,
	    http_header(rq, MHD_HTTP_HEADER_AUTHORIZATION), &rq->who,
	    &rq->early_e);
	if (r != 0) {
		rq->early = r;
		return rq;
	}
	rq->body_max = rq->route->body == BODY_NONE ? 0 :
	    rq->route->body_max == ROUTE_BODY_CONF ? h->max_body :
	    rq->route->body_max;
	cl = http_header(rq, MHD_HTTP_HEADER_CONTENT_LENGTH);
	if (cl != NULL) {
		n = strtoull(cl, &end, 10);
		if (end != cl && *end == '\0' && n > rq->body_max) {
			rq->early = err_set(&rq->early_e, ERR_TOOBIG, "body",
			    rq->body_max == 0 ? "this route takes no body" :
			    "body of %llu bytes exceeds the limit of %zu", n,
			    rq->body_max);
			return rq;
		}
	}
	ctype = http_header(rq, MHD_HTTP_HEADER_CONTENT_TYPE);
	if ((r = routes_check_ctype(rq->route, ctype, &rq->early_e)) != 0)
		rq->early = r;
	return rq;
}

/* Step 2: keeps or drops a piece of the body.  Returns false to close. */
static bool
take_body(struct req *rq, const char *data, size_t n)
{
	size_t cap, need;

	rq->body_seen += n;
	if (rq->early == 0 && n > rq->body_max - rq->body_len) {
		rq->early = err_set(&rq->early_e, ERR_TOOBIG, "body",
		    rq->body_max == 0 ? "this route takes no body" :
		    "body exceeds the limit of %zu bytes", rq->body_max);
		free(rq->body);
		rq->body = NULL;
		rq->body_len = 0;
		rq->body_cap = 0;
	}
	if (rq->early != 0)
		return rq->body_seen <= DISCARD_MAX;
	/* Grow by doubling, never past the limit (plus the NUL). */
	need = rq->body_len + n + 1;
	if (need > rq->body_cap) {
		cap = rq->body_cap == 0 ? 4096 : rq->body_cap;
		while (cap < need)
			cap *= 2;
		if (cap > rq->body_max + 1)
			cap = rq->body_max + 1;
		rq->body = xreallocarray(rq->body, 1, cap);
		rq->body_cap = cap;
	}
	memcpy(rq->body + rq->body_len, data, n);
	rq->body_len += n;
	rq->body[rq->body_len] = '\0';
	return true;
}

static void
unref_plan(void *cls)
{
	service_plan_unref(cls);
}

struct http_stream *
http_stream_new(struct req *rq, http_fill_fn *fill, http_done_fn *done,
    void *ctx)
{
	struct http_stream *s = xcalloc(1, sizeof(*s));

	pthread_mutex_init(&s->mu, NULL);
	s->conn = rq->conn;
	s->fill = fill;
	s->done = done;
	s->ctx = ctx;
	return s;
}

void
http_stream_free(struct http_stream *s)
{
	if (s == NULL)
		return;
	s->done(s->ctx);
	compress_free(s->z);
	pthread_mutex_destroy(&s->mu);
	free(s);
}

void
http_stream_wake(struct http_stream *s)
{
	pthread_mutex_lock(&s->mu);
	s->woken = true;
	if (s->suspended) {
		s->suspended = false;
		MHD_resume_connection(s->conn);
	}
	pthread_mutex_unlock(&s->mu);
}

/* libmicrohttpd's content reader for a stream. */
static ssize_t
stream_read(void *cls, uint64_t pos, char *buf, size_t max)
{
	struct http_stream *s = cls;
	long n;

	(void)pos;
	for (;;) {
		pthread_mutex_lock(&s->mu);
		s->woken = false;
		pthread_mutex_unlock(&s->mu);
		n = s->z != NULL ? compress_fill(s->z, s->fill, s->ctx, buf,
		    max) : s->fill(s->ctx, buf, max);
		if (n > 0)
			return (ssize_t)n;
		if (n < 0)
			return MHD_CONTENT_READER_END_OF_STREAM;
		pthread_mutex_lock(&s->mu);
		if (s->woken) {
			/* Woken while filling: look again. */
			pthread_mutex_unlock(&s->mu);
			continue;
		}
		s->suspended = true;
		MHD_suspend_connection(s->conn);
		pthread_mutex_unlock(&s->mu);
		return 0;
	}
}

static void
stream_free(void *cls)
{
	http_stream_free(cls);
}

/*
 * Records a write (a route that needs operate or admin), accepted or
 * refused, in the audit log, before its reply goes out.
 */
static void
audit(struct MHD_Connection *conn, struct req *rq)
{
	const union MHD_ConnectionInfo *ci;
	struct db_audit a;
	struct err e = { 0 };
	char client[64] = "";
	enum auth_role need;

	if (rq->route == NULL)
		return;
	need = rq->route->role == AUTH_UNSET ? AUTH_ADMIN : rq->route->role;
	if (need < AUTH_OPERATE)
		return;
	ci = MHD_get_connection_info(conn,
	    MHD_CONNECTION_INFO_CLIENT_ADDRESS);
	if (ci != NULL && ci->client_addr != NULL &&
	    getnameinfo(ci->client_addr, ci->client_addr->sa_family ==
	    AF_INET6 ? sizeof(struct sockaddr_in6) :
	    sizeof(struct sockaddr_in), client, sizeof(client), NULL, 0,
	    NI_NUMERICHOST) != 0)
		client[0] = '\0';
	memset(&a, 0, sizeof(a));
	a.who = rq->who.who;
	a.token_id = rq->who.token_id;
	a.client = client;
	a.method = rq->method;
	a.path = rq->path;
	a.status = rq->status;
	a.model_revision = rq->model_revision;
	a.request_id = rq->id;
	if (service_audit(rq->svc, &a, &e) != 0)
		log_err("write not recorded in the audit log id=%s "
		    "status=%d msg=\"%s\"", rq->id, rq->status, e.msg);
}

/* The WWW-Authenticate challenge of a 401 or 403 (RFC 6750, 3). */
static const char *
challenge(const struct req *rq)
{
	if (rq->status == 403)
		return "Bearer realm=\"weft\", error=\"insufficient_scope\"";
	if (rq->who.bad_token)
		return "Bearer realm=\"weft\", error=\"invalid_token\"";
	return "Bearer realm=\"weft\"";
}

/*
 * Gives rq's reply the content coding the client accepts, if it is
 * compressible: a whole body is replaced by its compressed bytes (a
 * borrowed plan text is released), a stream gets a compressor, and the
 * entity tag names the coding.  Returns the coding applied.
 */
static enum compress_coding
encode(struct req *rq)
{
	enum compress_coding c;
	char *z, etag[sizeof(rq->etag)];
	size_t zlen, n;

	if (!rq->compressible || rq->status == 304 || rq->status == 204)
		return COMPRESS_IDENTITY;
	c = rq->coding_set ? (enum compress_coding)rq->coding :
	    compress_choose(http_header(rq, MHD_HTTP_HEADER_ACCEPT_ENCODING),
	    rq->out_stream != NULL ? SIZE_MAX : rq->out_len);
	if (c == COMPRESS_IDENTITY)
		return c;
	if (rq->out_stream != NULL) {
		rq->out_stream->z = compress_new(c);
	} else {
		if (compress_buffer(c, rq->out, rq->out_len, &z, &zlen) != 0) {
			log_err("cannot compress a reply id=%s coding=%s",
			    rq->id, compress_word(c));
			return COMPRESS_IDENTITY;
		}
		if (rq->out_plan != NULL) {
			service_plan_unref(rq->out_plan);
			rq->out_plan = NULL;
		} else {
			free(rq->out);
		}
		rq->out = z;
		rq->out_len = zlen;
	}
	n = strlen(rq->etag);
	if (n >= 2 && rq->etag[n - 1] == '"') {
		snprintf(etag, sizeof(etag), "%.*s-%s\"", (int)(n - 1),
		    rq->etag, compress_word(c));
		memcpy(rq->etag, etag, sizeof(etag));
	}
	return c;
}

/* Step 3: turns rq's reply into a response and queues it. */
static enum MHD_Result
send_reply(struct MHD_Connection *conn, struct req *rq)
{
	struct MHD_Response *resp;
	enum MHD_Result ret;
	enum compress_coding coding;
	char num[32];
	bool streamed;

	if (rq->status == 0) {
		struct err e = { 0 };

		err_set(&e, ERR_INTERNAL, NULL, "handler set no reply");
		reply_error(rq, ERR_INTERNAL, &e);
	}
	audit(conn, rq);
	coding = encode(rq);
	streamed = rq->out_stream != NULL;
	if (streamed) {
		/* Event streams send little at a time; lists a lot. */
		resp = MHD_create_response_from_callback(MHD_SIZE_UNKNOWN,
		    rq->no_store ? 4096 : 32768, stream_read, rq->out_stream,
		    stream_free);
		if (resp != NULL)
			rq->out_stream = NULL;
	} else if (rq->out_plan != NULL) {
		resp = MHD_create_response_from_buffer_with_free_callback_cls(
		    rq->out_len, rq->out, unref_plan, rq->out_plan);
		if (resp != NULL)
			rq->out_plan = NULL;
	} else {
		resp = MHD_create_response_from_buffer_with_free_callback(
		    rq->out_len, rq->out, free);
	}
	if (resp == NULL) {
		log_err("cannot create a response id=%s", rq->id);
		return MHD_NO;
	}
	rq->out = NULL;		/* libmicrohttpd's now */
	/* A 304 sends no representation metadata (RFC 9110, 15.4.5). */
	if (rq->status != 304)
		MHD_add_response_header(resp, MHD_HTTP_HEADER_CONTENT_TYPE,
		    rq->ctype != NULL ? rq->ctype : "application/json");
	MHD_add_response_header(resp, "X-Request-Id", rq->id);
	if (rq->allow[0] != '\0')
		MHD_add_response_header(resp, MHD_HTTP_HEADER_ALLOW,
		    rq->allow);
	if (rq->etag[0] != '\0')
		MHD_add_response_header(resp, MHD_HTTP_HEADER_ETAG, rq->etag);
	if (rq->status == 401 || rq->status == 403)
		MHD_add_response_header(resp,
		    MHD_HTTP_HEADER_WWW_AUTHENTICATE, challenge(rq));
	if (rq->retry_after_s > 0) {
		snprintf(num, sizeof(num), "%d", rq->retry_after_s);
		MHD_add_response_header(resp, MHD_HTTP_HEADER_RETRY_AFTER,
		    num);
	}
	if (rq->status >= 400 || rq->no_store)
		MHD_add_response_header(resp, MHD_HTTP_HEADER_CACHE_CONTROL,
		    "no-store");
	if (rq->compressible)
		MHD_add_response_header(resp, MHD_HTTP_HEADER_VARY,
		    MHD_HTTP_HEADER_ACCEPT_ENCODING);
	if (coding != COMPRESS_IDENTITY)
		MHD_add_response_header(resp,
		    MHD_HTTP_HEADER_CONTENT_ENCODING, compress_word(coding));
	ret = MHD_queue_response(conn, (unsigned)rq->status, resp);
	MHD_destroy_response(resp);
	return ret;
}

void
http_defer(struct req *rq)
{
	struct http *h = rq->http;

	pthread_mutex_lock(&h->defer_mu);
	rq->defer = DEFER_WAITING;
	pthread_mutex_unlock(&h->defer_mu);
}

void
http_undefer(struct req *rq)
{
	struct http *h = rq->http;

	pthread_mutex_lock(&h->defer_mu);
	rq->defer = DEFER_NONE;
	pthread_mutex_unlock(&h->defer_mu);
}

void
http_complete(struct req *rq)
{
	struct http *h = rq->http;
	int was;

	pthread_mutex_lock(&h->defer_mu);
	was = rq->defer;
	rq->defer = DEFER_DONE;
	if (was == DEFER_SUSPENDED)
		MHD_resume_connection(rq->conn);
	pthread_mutex_unlock(&h->defer_mu);
}

/*
 * Whether the handler deferred rq.  Read under defer_mu: once deferred,
 * the thread that completes rq may be writing rq->defer already.
 */
static bool
deferred(struct http *h, struct req *rq)
{
	bool d;

	pthread_mutex_lock(&h->defer_mu);
	d = rq->defer != DEFER_NONE;
	pthread_mutex_unlock(&h->defer_mu);
	return d;
}

/*
 * After the handler deferred: suspends the connection, unless the reply
 * is already there.
 */
static enum MHD_Result
suspend(struct http *h, struct MHD_Connection *conn, struct req *rq)
{
	pthread_mutex_lock(&h->defer_mu);
	if (rq->defer == DEFER_DONE) {
		pthread_mutex_unlock(&h->defer_mu);
		rq->sent = true;
		return send_reply(conn, rq);
	}
	rq->defer = DEFER_SUSPENDED;
	MHD_suspend_connection(conn);
	pthread_mutex_unlock(&h->defer_mu);
	return MHD_YES;
}

/*
 * Runs rq's handler on this thread, noting the model revision its write
 * made (for the audit log).
 */
static int
run_handler(struct req *rq, struct err *e)
{
	int r;

	(void)service_write_revision_take();
	r = rq->route->fn(rq, e);
	rq->model_revision = service_write_revision_take();
	return r;
}

static enum MHD_Result
on_request(void *cls, struct MHD_Connection *conn, const char *url,
    const char *method, const char *version, const char *upload_data,
    size_t *upload_data_size, void **con_cls)
{
	struct http *h = cls;
	struct req *rq = *con_cls;
	struct err e = { 0 };
	const char *expect;
	int r;

	(void)version;
	if (rq == NULL) {
		rq = req_new(h, conn, url, method);
		*con_cls = rq;
		expect = http_header(rq, MHD_HTTP_HEADER_EXPECT);
		if (rq->early != 0 && expect != NULL &&
		    strcasecmp(expect, "100-continue") == 0) {
			/* Refuse before the client sends the body. */
			reply_error(rq, rq->early, &rq->early_e);
			return send_reply(conn, rq);
		}
		return MHD_YES;
	}
	if (*upload_data_size != 0) {
		if (rq->status != 0) {
			/* Already replied (step 1): drop the rest. */
			*upload_data_size = 0;
			return MHD_YES;
		}
		if (!take_body(rq, upload_data, *upload_data_size))
			return MHD_NO;
		*upload_data_size = 0;
		return MHD_YES;
	}
	if (rq->defer != DEFER_NONE) {
		/* Resumed: the other thread set the reply. */
		pthread_mutex_lock(&h->defer_mu);
		r = rq->defer == DEFER_DONE && !rq->sent;
		pthread_mutex_unlock(&h->defer_mu);
		if (!r)
			return MHD_YES;
		rq->sent = true;
		return send_reply(conn, rq);
	}
	if (rq->status != 0)
		return MHD_YES;
	if (rq->early != 0) {
		reply_error(rq, rq->early, &rq->early_e);
	} else if ((r = run_handler(rq, &e)) != 0) {
		if (deferred(h, rq)) {
			/* A handler defers only on success. */
			log_err("handler failed after deferring id=%s", rq->id);
			abort();
		}
		if (e.code == 0)
			err_set(&e, r, NULL, "%s", err_str(r));
		reply_error(rq, r, &e);
	} else if (deferred(h, rq)) {
		return suspend(h, conn, rq);
	}
	rq->sent = true;
	return send_reply(conn, rq);
}

/* Copies s into buf for a log line: no control characters, capped. */
static const char *
printable(const char *s, char *buf, size_t n)
{
	size_t i;

	for (i = 0; s[i] != '\0' && i + 1 < n; i++)
		buf[i] = (unsigned char)s[i] < 0x20 || s[i] == 0x7f ||
		    s[i] == ' ' ? '?' : s[i];
	buf[i] = '\0';
	return buf;
}

static void
on_completed(void *cls, struct MHD_Connection *conn, void **con_cls,
    enum MHD_RequestTerminationCode toe)
{
	struct http *h = cls;
	struct req *rq = *con_cls;
	char path[160];

	(void)conn;
	if (rq == NULL)
		return;
	metrics_count_request(rq->route != NULL ? rq->route->pattern : NULL,
	    rq->route != NULL ? rq->route->method : rq->method, rq->status);
	log_info("request method=%s path=%s status=%d bytes=%zu ms=%.3f "
	    "id=%s%s", rq->method, printable(rq->path, path, sizeof(path)),
	    rq->status, rq->out_len,
	    clock_ms() - rq->start_ms, rq->id,
	    toe == MHD_REQUEST_TERMINATED_COMPLETED_OK ? "" :
	    " aborted=yes");
	req_free(rq);
	*con_cls = NULL;
	atomic_fetch_sub(&h->active, 1);
}

static void
mhd_log(void *cls, const char *fmt, va_list ap)
{
	char buf[512];

	(void)cls;
	vsnprintf(buf, sizeof(buf), fmt, ap);
	log_warn("http: %s", buf);
}

/*
 * Splits "host:port" or "[v6]:port" and resolves it (numeric port, the
 * first address found).  Returns 0 with *aip (freeaddrinfo) or
 * ERR_INVALID.
 */
static int
resolve(const char *listen, struct addrinfo **aip, struct err *e)
{
	struct addrinfo hints;
	char host[256];
	const char *port;
	int gr;

	*aip = NULL;
	if (listen == NULL || listen[0] == '\0')
		return err_set(e, ERR_INVALID, "listen", "no listen address");
	if (hostport_split(listen, host, sizeof(host), &port) != 0)
		return err_set(e, ERR_INVALID, "listen", "\"%s\" is not "
		    "host:port or [address]:port", listen);
	memset(&hints, 0, sizeof(hints));
	hints.ai_family = AF_UNSPEC;
	hints.ai_socktype = SOCK_STREAM;
	hints.ai_flags = AI_PASSIVE | AI_NUMERICSERV;
	if ((gr = getaddrinfo(host, port, &hints, aip)) != 0)
		return err_set(e, ERR_INVALID, "listen", "cannot resolve "
		    "\"%s\": %s", listen, gai_strerror(gr));
	return 0;
}

/* The checker's loader: the service's list of valid tokens. */
static int
load_tokens(void *ctx, struct db_token **tp, size_t *np, struct err *e)
{
	return service_tokens(ctx, tp, np, e);
}

#define PEM_MAX	((size_t)1 << 20)	/* bytes of a TLS certificate or key */

/* Reads the PEM file at path into a new string *textp. */
static int
read_pem(const char *path, char **textp, struct err *e)
{
	char *text;
	size_t n;
	FILE *f;
	int r = ERR_IO;

	*textp = NULL;
	if ((f = fopen(path, "r")) == NULL)
		return err_set(e, ERR_IO, "tls", "cannot open %s: %s", path,
		    strerror(errno));
	text = xmalloc(PEM_MAX + 1);
	n = fread(text, 1, PEM_MAX + 1, f);
	if (ferror(f))
		err_set(e, ERR_IO, "tls", "cannot read %s", path);
	else if (n > PEM_MAX)
		err_set(e, ERR_IO, "tls", "%s is larger than %zu bytes", path,
		    PEM_MAX);
	else if (n == 0)
		err_set(e, ERR_IO, "tls", "%s is empty", path);
	else
		r = 0;
	fclose(f);
	if (r != 0) {
		free(text);
		return r;
	}
	text[n] = '\0';
	*textp = text;
	return 0;
}

/* Frees the PEM texts, wiping the key first. */
static void
free_pems(struct http *h)
{
	if (h->tls_key != NULL)
		explicit_bzero(h->tls_key, strlen(h->tls_key));
	free(h->tls_key);
	free(h->tls_cert);
	h->tls_key = h->tls_cert = NULL;
}

int
http_start(const struct http_conf *c, struct service *svc, struct http **hp,
    struct err *e)
{
	struct MHD_OptionItem tls[3] = {
		{ MHD_OPTION_END, 0, NULL },
		{ MHD_OPTION_END, 0, NULL },
		{ MHD_OPTION_END, 0, NULL },
	};
	struct auth_conf ac;
	struct http *h = NULL;
	struct addrinfo *ai = NULL;
	unsigned flags;
	int r;

	r = ERR_INTERNAL;
	*hp = NULL;
	if ((r = resolve(c->listen, &ai, e)) != 0)
		goto out;
	h = xcalloc(1, sizeof(*h));
	h->svc = svc;
	h->max_body = c->max_body_bytes;
	h->boot = (unsigned)time(NULL);
	pthread_mutex_init(&h->defer_mu, NULL);
	flags = MHD_USE_INTERNAL_POLLING_THREAD | MHD_USE_AUTO |
	    MHD_USE_ERROR_LOG | MHD_ALLOW_SUSPEND_RESUME;
	if (ai->ai_family == AF_INET6)
		flags |= MHD_USE_IPv6;
	if ((c->tls_cert != NULL) != (c->tls_key != NULL)) {
		r = err_set(e, ERR_INVALID, "tls", "tls_cert and tls_key go "
		    "together");
		goto out;
	}
	if (c->tls_cert != NULL) {
		if (MHD_is_feature_supported(MHD_FEATURE_TLS) != MHD_YES) {
			r = err_set(e, ERR_INVALID, "tls", "this "
			    "libmicrohttpd was built without TLS");
			goto out;
		}
		if ((r = read_pem(c->tls_cert, &h->tls_cert, e)) != 0 ||
		    (r = read_pem(c->tls_key, &h->tls_key, e)) != 0)
			goto out;
		flags |= MHD_USE_TLS;
		tls[0].option = MHD_OPTION_HTTPS_MEM_CERT;
		tls[0].ptr_value = h->tls_cert;
		tls[1].option = MHD_OPTION_HTTPS_MEM_KEY;
		tls[1].ptr_value = h->tls_key;
	}
	memset(&ac, 0, sizeof(ac));
	ac.mode = c->auth_mode;
	ac.reads = c->auth_reads;
	ac.loopback_only = auth_is_loopback(ai->ai_addr);
	ac.load = load_tokens;
	ac.load_ctx = svc;
	if ((r = auth_new(&ac, &h->auth, e)) != 0)
		goto out;
	/* The logger goes first, so it sees problems with the others. */
	h->mhd = MHD_start_daemon(flags, 0, NULL, NULL, on_request, h,
	    MHD_OPTION_EXTERNAL_LOGGER, mhd_log, h,
	    MHD_OPTION_SOCK_ADDR, ai->ai_addr,
	    MHD_OPTION_THREAD_POOL_SIZE, c->threads > 0 ? c->threads : 1u,
	    MHD_OPTION_CONNECTION_LIMIT, c->max_connections > 0 ?
	    c->max_connections : 64u,
	    MHD_OPTION_PER_IP_CONNECTION_LIMIT, c->per_ip_limit,
	    MHD_OPTION_CONNECTION_TIMEOUT, c->timeout_s,
	    MHD_OPTION_NOTIFY_COMPLETED, on_completed, h,
	    MHD_OPTION_ARRAY, tls,
	    MHD_OPTION_END);
	if (h->mhd == NULL) {
		r = err_set(e, ERR_IO, "listen", "cannot serve HTTP%s on %s",
		    c->tls_cert != NULL ? "S" : "", c->listen);
		goto out;
	}
	log_info("http listening addr=%s threads=%u max_body=%zu tls=%s "
	    "loopback=%s tokens=%zu", c->listen, c->threads,
	    c->max_body_bytes, c->tls_cert != NULL ? "yes" : "no",
	    ac.loopback_only ? "yes" : "no", auth_tokens(h->auth));
	*hp = h;
	h = NULL;
	r = 0;
out:
	if (ai != NULL)
		freeaddrinfo(ai);
	if (h != NULL) {
		auth_free(h->auth);
		free_pems(h);
		pthread_mutex_destroy(&h->defer_mu);
	}
	free(h);
	return r;
}

void
http_stop(struct http *h)
{
	struct timespec ts = { 0, 10 * 1000000L };
	int i;

	if (h == NULL)
		return;
	/*
	 * Replies just released (long polls, what-ifs answered at shutdown,
	 * ended event streams) get a moment to go out: libmicrohttpd closes
	 * whatever is left without sending it.
	 */
	for (i = 0; i < STOP_GRACE_MS / 10 && atomic_load(&h->active) > 0; i++)
		nanosleep(&ts, NULL);
	if (h->mhd != NULL)
		MHD_stop_daemon(h->mhd);
	auth_free(h->auth);
	free_pems(h);
	pthread_mutex_destroy(&h->defer_mu);
	free(h);
}
