/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Content codings of replies: Accept-Encoding, gzip and deflate (zlib). */
#ifndef WEFT_API_COMPRESS_H
#define WEFT_API_COMPRESS_H

/*
 * DESIGN
 * http.c asks compress_choose() which content coding a reply gets from the
 * request's Accept-Encoding (RFC 9110, 12.5.3), then either compresses a
 * whole body at once (compress_buffer()) or wraps a streamed body's
 * producer (compress_fill()), so a large reply is compressed piece by
 * piece as libmicrohttpd asks for it and is never held whole.  "gzip" is
 * RFC 1952, "deflate" the zlib format of RFC 1950 (what HTTP's deflate
 * coding means, RFC 9110, 8.4.1.2).  zlib.h is included by compress.c
 * only.  compress_choose() is a pure function (any thread; fuzzed by
 * tests/fuzz/fuzz_query.c); a struct compress belongs to one stream and is
 * used by one thread at a time.
 */

#include <stdbool.h>
#include <stddef.h>

enum compress_coding {
	COMPRESS_IDENTITY = 0,	/* no content coding */
	COMPRESS_GZIP = 1,	/* RFC 1952 */
	COMPRESS_DEFLATE = 2,	/* RFC 1950 (zlib-wrapped deflate) */
};

/* Bodies shorter than this are sent as they are when identity is
   acceptable: compressing them saves nothing worth the work. */
#define COMPRESS_MIN_BYTES	1024

/*
 * Chooses the coding for a reply of len bytes (SIZE_MAX: not known, a
 * stream) from Accept-Encoding value accept (NULL: the header is absent).
 * Absent or empty: identity.  Otherwise each of gzip, deflate and identity
 * gets the q-value of its own member, else of "*", else 0 (identity: 1);
 * the coding with the highest q above 0 wins, gzip before deflate before
 * identity on ties, and identity wins below COMPRESS_MIN_BYTES when its q
 * is above 0.  When nothing is acceptable ("identity;q=0" alone) the reply
 * is sent without a coding, as RFC 9110, 12.5.3 recommends.  Members that
 * do not parse are ignored; a member named twice counts the first time.
 */
enum compress_coding compress_choose(const char *accept, size_t len);

/* The Content-Encoding word of c ("gzip", "deflate"), NULL for identity. */
const char *compress_word(enum compress_coding c);

/*
 * Compresses len bytes at in with coding c (not identity) into a new
 * buffer *outp of *outlenp bytes (free()).  Returns 0, or ERR_INTERNAL
 * (zlib failed) with *outp NULL.
 */
int compress_buffer(enum compress_coding c, const char *in, size_t len,
    char **outp, size_t *outlenp);

struct compress;

/*
 * A streamed body's producer, as http_fill_fn (api/http.h): returns the
 * bytes it wrote into buf (1..max), 0 when it has nothing now, or
 * COMPRESS_END (HTTP_FILL_END) at the end of the body.
 */
typedef long compress_src_fn(void *ctx, char *buf, size_t max);
#define COMPRESS_END	(-1L)

/* A new compressor for one streamed body in coding c (not identity). */
struct compress *compress_new(enum compress_coding c);

/*
 * Fills buf (max bytes) with the compressed continuation of the body that
 * fill(ctx, ...) produces.  Returns the bytes written (>= 1), 0 when
 * the producer has nothing now (what was compressed so far is flushed
 * out first), or COMPRESS_END once the compressed body is complete (or
 * zlib failed: the body then ends early and the client sees a truncated
 * stream, which gzip's and zlib's trailers let it detect).
 */
long compress_fill(struct compress *z, compress_src_fn *fill, void *ctx,
    char *buf, size_t max);

/* Frees z (NULL ok). */
void compress_free(struct compress *z);

#endif /* WEFT_API_COMPRESS_H */
