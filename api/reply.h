/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Setting a reply: JSON bodies, plan texts and the one error reply. */
#ifndef WEFT_API_REPLY_H
#define WEFT_API_REPLY_H

/*
 * DESIGN
 * A handler leaves exactly one reply in its struct req; http.c sends it.
 * Success replies are JSON (or plain text for the model export).  Every
 * failure leaves through reply_error(), which maps the error code to an
 * HTTP status with one table and writes the one error shape
 * {"error":{"code":..,"message":..,"where":..}}.  Setting a reply twice
 * replaces the first one (its memory is freed).  Handler threads only.
 */

#include <stddef.h>
#include <stdint.h>

struct err;
struct http_stream;
struct published;
struct req;

/*
 * Replies with error r: status from the table (ERR_INVALID 400,
 * ERR_UNAUTHORIZED 401, ERR_FORBIDDEN 403 (http.c adds their
 * WWW-Authenticate), ERR_NOTFOUND 404, ERR_METHOD 405 with Allow from
 * rq->allow, ERR_CONFLICT 409, ERR_TOOBIG 413, ERR_MEDIATYPE 415,
 * ERR_BUSY and ERR_TIMEOUT 503 with Retry-After, anything else 500).
 * code is err_word(r); message and where come from e (may be NULL).  A
 * 5xx reply says only "internal error" and the request id; the detail is
 * logged.
 */
void reply_error(struct req *rq, int r, const struct err *e);

/* Replies status with JSON text (taken over: freed with the request). */
void reply_json(struct req *rq, int status, char *text, size_t len);

/*
 * Replies 200 with the JSON text of len bytes that a codec_*_encode()
 * call returned (taken over, as by reply_json()) and returns 0.  When text
 * is NULL, the encoder failed: sets no reply and returns ERR_INTERNAL with
 * "cannot encode <what>" in e, for the caller to return.
 */
int reply_encoded(struct req *rq, char *text, size_t len, const char *what,
    struct err *e);

/*
 * Replies status with a JSON object built by jansson's json_pack format
 * fmt (for example "{s:I, s:s}"; "I" takes a long long).  Returns 0, or
 * replies 500 and returns ERR_INTERNAL when the format or a value is bad.
 */
int reply_packf(struct req *rq, int status, const char *fmt, ...);

/* Replies 200 with text of Content-Type ctype (static), taken over. */
void reply_text(struct req *rq, const char *ctype, char *text, size_t len);

/*
 * Replies 200 with len bytes at text, which live inside pub: the reply
 * takes over the caller's reference on pub and drops it when the response
 * is freed.  Sets ETag to the plan revision.
 */
void reply_plan(struct req *rq, struct published *pub, const char *text,
    size_t len);

/*
 * Replies 304 Not Modified with ETag etag (a quoted entity tag, at most
 * 31 bytes) and no body.
 */
void reply_not_modified(struct req *rq, const char *etag);

/*
 * Replies 200 with Content-Type ctype (static) and a body streamed from
 * s (api/http.h), which the reply takes over; Cache-Control: no-store and
 * never compressed (an event stream).
 */
void reply_stream(struct req *rq, const char *ctype, struct http_stream *s);

/*
 * Replies 200 with a JSON body streamed from s (a plan list: never "nothing
 * now"), which the reply takes over; ETag is plan revision revision and
 * the body may be compressed piece by piece (api/compress.h).
 */
void reply_list(struct req *rq, struct http_stream *s, int64_t revision);

/* Frees whatever reply rq holds (the completion path; NULL ok). */
void reply_clear(struct req *rq);

#endif /* WEFT_API_REPLY_H */
