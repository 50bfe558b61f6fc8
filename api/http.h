/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The HTTP server: libmicrohttpd glue, the per-request struct, its helpers. */
#ifndef WEFT_API_HTTP_H
#define WEFT_API_HTTP_H

/*
 * DESIGN
 * http_start() runs libmicrohttpd with its own thread pool; every request
 * is handled on one of those threads from start to end.  One struct req
 * per request owns everything allocated for it (the body, the reply, a
 * plan reference) and is freed in libmicrohttpd's completion callback,
 * after the reply was sent or the connection dropped.  Handlers never see
 * libmicrohttpd: they read the request through struct req and the
 * http_query()/http_header() helpers and leave their reply in the req
 * through api/reply.h; http.c turns that into a libmicrohttpd response.
 * microhttpd.h is included by http.c only.
 */

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#include "../daemon/base/err.h"
#include "auth.h"
#include "compress.h"

struct http;
struct http_stream;
struct published;
struct route;
struct service;

/* Server settings (from the daemon's config). */
struct http_conf {
	const char *listen;	/* "host:port", "[v6addr]:port"; borrowed
				   only during http_start */
	size_t max_body_bytes;	/* largest request body, bytes */
	unsigned max_connections;	/* open connections in total */
	unsigned per_ip_limit;	/* open connections per client address;
				   0: no limit */
	unsigned timeout_s;	/* idle connection timeout, s; 0: none */
	unsigned threads;	/* worker threads, >= 1 */
	enum auth_mode auth_mode;	/* when tokens are enforced */
	enum auth_reads auth_reads;	/* when reads need a token */
	const char *tls_cert;	/* PEM certificate (chain) file, or NULL
				   for plain HTTP; borrowed during
				   http_start */
	const char *tls_key;	/* its PEM private key file, or NULL */
};

#define REQ_ID_MAX	32	/* request id text, with its NUL */
#define REQ_PARAM_MAX	256	/* captured path segment, with its NUL */

/*
 * One request.  Fields marked "reply" are filled by api/reply.c and read
 * by http.c once the handler returns.
 */
struct req {
	char id[REQ_ID_MAX];	/* request id, also sent as X-Request-Id */
	struct service *svc;	/* borrowed: the daemon's service */
	void *conn;		/* borrowed: the libmicrohttpd connection */
	char method[16];	/* request method, truncated if longer */
	char *path;		/* owned copy of the (decoded) URL path */
	const struct route *route;	/* matched route, NULL if none */
	char param[REQ_PARAM_MAX];	/* the path's {name} segment, "" */
	size_t body_max;	/* limit for this route, bytes */
	char *body;		/* owned, NUL-terminated; NULL: no body */
	size_t body_len;	/* bytes received and kept */
	size_t body_cap;	/* bytes allocated at body */
	size_t body_seen;	/* bytes received, kept or not */
	int early;		/* error decided before the body: 0 or code */
	struct err early_e;	/* its detail */
	double start_ms;	/* clock_ms() at arrival */

	struct auth_who who;	/* who sent it (api/auth.h), set with the
				   route */
	int64_t model_revision;	/* made by the handler, 0: none (audit) */

	/* reply */
	int status;		/* HTTP status; 0 while no reply is set */
	const char *ctype;	/* static Content-Type of the reply */
	char *out;		/* owned reply body, or NULL */
	size_t out_len;
	struct published *out_plan;	/* reference held; when set, out
					   points into it (not owned) */
	char allow[64];		/* Allow header, "" if none */
	int retry_after_s;	/* Retry-After header when > 0 */
	char etag[32];		/* ETag header, "" if none */
	struct http_stream *out_stream;	/* owned until sent: a streamed
					   body (http_stream_new) */
	bool no_store;		/* Cache-Control: no-store (events) */
	bool compressible;	/* may get a content coding (api/compress.h);
				   adds Vary: Accept-Encoding */
	bool coding_set;	/* coding already chosen (http_coding()) */
	int coding;		/* enum compress_coding, when coding_set */
	/* deferred replies (http_defer) */
	void *http;		/* borrowed: the server */
	int defer;		/* enum in http.c, under the server's lock */
	bool sent;		/* the reply is queued */
};

/*
 * Starts the server on c->listen with c->threads worker threads; svc is
 * borrowed until http_stop().  With c->tls_cert and c->tls_key it serves
 * HTTPS only.  Every request is checked against its route's role
 * (api/auth.h) before its body is read; every write is recorded in the
 * audit log before its reply is sent.  Returns 0 and the server in *hp,
 * or ERR_INVALID (bad listen address, with where "listen"; TLS asked of a
 * libmicrohttpd without it, or only one of the two files, where "tls") /
 * ERR_IO (cannot bind; cannot read a TLS file) / the token list's error,
 * with detail in e.  Called once, by main.
 */
int http_start(const struct http_conf *c, struct service *svc,
    struct http **hp, struct err *e);

/* Stops accepting, waits for requests in flight, frees h (NULL ok). */
void http_stop(struct http *h);

/*
 * Returns the decoded value of query parameter key, or NULL if absent.
 * The text is borrowed for the request.  Handler threads only.
 */
const char *http_query(struct req *rq, const char *key);

/* Returns request header key (case-insensitive), or NULL if absent. */
const char *http_header(struct req *rq, const char *key);

/*
 * Checks that every query parameter of rq is named in allowed (a NULL-
 * terminated list), appears once and has a value.  Returns 0, or
 * ERR_INVALID with where the offending parameter's name.
 */
int http_query_check(struct req *rq, const char *const *allowed,
    struct err *e);

/*
 * Chooses, as compress_choose() (api/compress.h), the content coding of
 * rq's reply of len bytes (SIZE_MAX: streamed) from its Accept-Encoding,
 * and fixes it for that reply, so a handler can name the coding in its
 * entity tag before it answers a conditional request.  Handler threads.
 */
enum compress_coding http_coding(struct req *rq, size_t len);

/*
 * A handler that hands its work to another thread calls http_defer(rq)
 * and returns 0 without a reply: the connection is suspended (no HTTP
 * thread waits).  The other thread sets the reply on rq, then calls
 * http_complete(rq) exactly once; the reply is then sent.  Until then rq
 * stays valid and nothing else touches it.
 */
void http_defer(struct req *rq);
void http_complete(struct req *rq);

/* Takes back an http_defer() whose hand-off failed (nothing queued). */
void http_undefer(struct req *rq);

/*
 * Streamed replies (GET /v1/events).  The body is produced piecewise by
 * fill(ctx, buf, max), on an HTTP thread, whenever the connection can
 * take more: it returns the bytes it wrote (1..max), 0 when it has
 * nothing now, or HTTP_FILL_END to end the body.  After a 0 the
 * connection is suspended (no thread waits) until http_stream_wake() is
 * called, from any thread; a wake that comes while fill() runs is not
 * lost.  done(ctx) is called once, when the stream is freed (the
 * response is gone, or it was never sent); after it returns fill() is not
 * called again and the caller must not wake the stream any more.
 */
#define HTTP_FILL_END	COMPRESS_END	/* -1 */
typedef long http_fill_fn(void *ctx, char *buf, size_t max);
typedef void http_done_fn(void *ctx);

/*
 * Makes a stream for rq's connection and returns it; the handler then
 * replies with it (reply_stream()).  The stream is rq's until sent.
 */
struct http_stream *http_stream_new(struct req *rq, http_fill_fn *fill,
    http_done_fn *done, void *ctx);

/* Says fill() may have something now: resumes a suspended stream. */
void http_stream_wake(struct http_stream *s);

/* Frees a stream never handed to libmicrohttpd (NULL ok): calls done. */
void http_stream_free(struct http_stream *s);

#endif /* WEFT_API_HTTP_H */
