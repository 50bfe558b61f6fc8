/* SPDX-License-Identifier: GPL-3.0-or-later */
/* JSON replies, plan replies and the one error reply of the HTTP layer. */

/*
 * DESIGN
 * Handlers (on HTTP threads) set their request's reply here; http.c reads
 * the fields back and builds the libmicrohttpd response.  The reply body
 * is owned by the request (rq->out) unless it borrows a published plan's
 * pre-rendered summary, in which case the request holds a plan reference
 * (rq->out_plan) until the response is freed.  reply_error() is the only
 * way a failure reaches a client: one code-to-status table, one body
 * shape, and no internal detail in 5xx bodies (the log has it, under the
 * request id).  JSON and text replies are marked compressible (http.c
 * gives them the coding the client accepts); event streams are not, as
 * their events must not wait in a compressor.
 */

#include <stdarg.h>
#include <stdatomic.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <jansson.h>

#include "reply.h"
#include "../daemon/base/err.h"
#include "../daemon/base/log.h"
#include "../daemon/service.h"
#include "http.h"

#define RETRY_AFTER_S	1	/* what 503 replies suggest */

static const struct {
	int code;
	int status;
} statuses[] = {
	{ ERR_INVALID, 400 },
	{ ERR_UNAUTHORIZED, 401 },
	{ ERR_FORBIDDEN, 403 },
	{ ERR_NOTFOUND, 404 },
	{ ERR_METHOD, 405 },
	{ ERR_CONFLICT, 409 },
	{ ERR_TOOBIG, 413 },
	{ ERR_MEDIATYPE, 415 },
	{ ERR_BUSY, 503 },
	{ ERR_TIMEOUT, 503 },
};

/* Replies sent per error code, indexed by -code (0: unknown codes). */
static atomic_ulong error_counts[16];

void
reply_clear(struct req *rq)
{
	if (rq == NULL)
		return;
	if (rq->out_plan != NULL)
		service_plan_unref(rq->out_plan);
	else
		free(rq->out);
	http_stream_free(rq->out_stream);
	rq->out_stream = NULL;
	rq->out = NULL;
	rq->out_len = 0;
	rq->out_plan = NULL;
	rq->status = 0;
	rq->ctype = NULL;
	rq->retry_after_s = 0;
	rq->etag[0] = '\0';
	rq->no_store = false;
	rq->compressible = false;
}

void
reply_json(struct req *rq, int status, char *text, size_t len)
{
	reply_clear(rq);
	rq->status = status;
	rq->ctype = "application/json";
	rq->out = text;
	rq->out_len = len;
	rq->compressible = true;
}

int
reply_encoded(struct req *rq, char *text, size_t len, const char *what,
    struct err *e)
{
	if (text == NULL)
		return err_set(e, ERR_INTERNAL, NULL, "cannot encode %s", what);
	reply_json(rq, 200, text, len);
	return 0;
}

void
reply_text(struct req *rq, const char *ctype, char *text, size_t len)
{
	reply_clear(rq);
	rq->status = 200;
	rq->ctype = ctype;
	rq->out = text;
	rq->out_len = len;
	rq->compressible = true;
}

void
reply_plan(struct req *rq, struct published *pub, const char *text,
    size_t len)
{
	reply_clear(rq);
	rq->status = 200;
	rq->ctype = "application/json";
	rq->out_plan = pub;
	/* Not written through: out_plan set means out is borrowed. */
	rq->out = (char *)text;
	rq->out_len = len;
	rq->compressible = true;
	snprintf(rq->etag, sizeof(rq->etag), "\"%lld\"",
	    (long long)pub->revision);
}

void
reply_not_modified(struct req *rq, const char *etag)
{
	reply_clear(rq);
	rq->status = 304;
	/* Vary as the 200 would have it (RFC 9110, 15.4.5). */
	rq->compressible = true;
	snprintf(rq->etag, sizeof(rq->etag), "%s", etag);
}

void
reply_stream(struct req *rq, const char *ctype, struct http_stream *s)
{
	reply_clear(rq);
	rq->status = 200;
	rq->ctype = ctype;
	rq->out_stream = s;
	rq->no_store = true;
}

void
reply_list(struct req *rq, struct http_stream *s, int64_t revision)
{
	reply_clear(rq);
	rq->status = 200;
	rq->ctype = "application/json";
	rq->out_stream = s;
	rq->compressible = true;
	snprintf(rq->etag, sizeof(rq->etag), "\"%lld\"",
	    (long long)revision);
}

/* Dumps j compactly with full precision; returns NULL on failure. */
static char *
dump(json_t *j, size_t *lenp)
{
	char *s;

	s = json_dumps(j, JSON_COMPACT | JSON_REAL_PRECISION(17));
	*lenp = s != NULL ? strlen(s) : 0;
	return s;
}

int
reply_packf(struct req *rq, int status, const char *fmt, ...)
{
	json_error_t je;
	json_t *j;
	va_list ap;
	char *s;
	size_t len;
	struct err e = { 0 };

	va_start(ap, fmt);
	j = json_vpack_ex(&je, 0, fmt, ap);
	va_end(ap);
	if (j == NULL || (s = dump(j, &len)) == NULL) {
		json_decref(j);
		err_set(&e, ERR_INTERNAL, NULL, "reply_packf: %s",
		    j == NULL ? je.text : "dump failed");
		reply_error(rq, ERR_INTERNAL, &e);
		return ERR_INTERNAL;
	}
	json_decref(j);
	reply_json(rq, status, s, len);
	return 0;
}

/*
 * Copies s into buf (size n), replacing control characters and bytes that
 * are not part of well-formed UTF-8 with '?': messages may quote input, and
 * a truncated quote may end inside a character.
 */
static const char *
clean(const char *s, char *buf, size_t n)
{
	const unsigned char *p = (const unsigned char *)s;
	size_t i = 0, k, want;

	while (*p != '\0' && i + 1 < n) {
		if (*p < 0x80) {
			buf[i++] = *p < 0x20 || *p == 0x7f ? '?' : (char)*p;
			p++;
			continue;
		}
		want = (*p & 0xe0) == 0xc0 ? 1 : (*p & 0xf0) == 0xe0 ? 2 :
		    (*p & 0xf8) == 0xf0 ? 3 : 0;
		for (k = 1; k <= want && (p[k] & 0xc0) == 0x80; k++)
			;
		if (want == 0 || k <= want || *p == 0xc0 || *p == 0xc1 ||
		    *p > 0xf4 || (*p == 0xe0 && p[1] < 0xa0) ||
		    (*p == 0xed && p[1] >= 0xa0) ||
		    (*p == 0xf0 && p[1] < 0x90) ||
		    (*p == 0xf4 && p[1] >= 0x90) || i + want + 1 >= n) {
			buf[i++] = '?';
			p++;
			continue;
		}
		memcpy(buf + i, p, want + 1);
		i += want + 1;
		p += want + 1;
	}
	buf[i] = '\0';
	return buf;
}

static int
status_of(int code)
{
	size_t i;

	for (i = 0; i < sizeof(statuses) / sizeof(statuses[0]); i++)
		if (statuses[i].code == code)
			return statuses[i].status;
	return 500;
}

void
reply_error(struct req *rq, int r, const struct err *e)
{
	const char *msg, *where;
	char internal[96], msgbuf[ERR_MSG_MAX], wherebuf[ERR_WHERE_MAX];
	json_t *j;
	char *s;
	size_t len;
	unsigned idx;

	idx = r < 0 && -r < 16 ? (unsigned)-r : 0;
	atomic_fetch_add(&error_counts[idx], 1);
	msg = clean(e != NULL && e->msg[0] != '\0' ? e->msg : err_str(r),
	    msgbuf, sizeof(msgbuf));
	where = clean(e != NULL ? e->where : "", wherebuf, sizeof(wherebuf));
	reply_clear(rq);
	rq->status = status_of(r);
	if (rq->status >= 500 && r != ERR_BUSY && r != ERR_TIMEOUT) {
		log_err("request failed id=%s code=%s where=\"%s\" msg=\"%s\"",
		    rq->id, err_word(r), where, msg);
		snprintf(internal, sizeof(internal),
		    "internal error (request %s)", rq->id);
		msg = internal;
		where = "";
	} else {
		log_debug("request rejected id=%s code=%s where=\"%s\" "
		    "msg=\"%s\"", rq->id, err_word(r), where, msg);
	}
	if (rq->status == 503)
		rq->retry_after_s = RETRY_AFTER_S;
	if (rq->status != 405)
		rq->allow[0] = '\0';
	j = json_pack("{s:{s:s, s:s, s:s}}", "error", "code", err_word(r),
	    "message", msg, "where", where);
	s = j != NULL ? dump(j, &len) : NULL;
	json_decref(j);
	if (s == NULL) {
		/* Out of memory, or a message that is not UTF-8. */
		s = strdup("{\"error\":{\"code\":\"internal\",\"message\":"
		    "\"internal error\",\"where\":\"\"}}");
		if (s == NULL)
			abort();
		len = strlen(s);
		rq->status = 500;
	}
	rq->ctype = "application/json";
	rq->out = s;
	rq->out_len = len;
	rq->compressible = true;
	rq->coding_set = false;
}
