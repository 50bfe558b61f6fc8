/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Content codings of replies: Accept-Encoding, gzip and deflate (zlib). */

/*
 * DESIGN
 * Negotiation follows RFC 9110, 12.5.3: q-values are read as thousandths
 * (qvalue = "0" ["." 0*3DIGIT] / "1" ["." 0*3"0"], 12.4.2), coding names
 * compare case-insensitively, "x-gzip" counts as "gzip" (8.4.1.3), "*"
 * stands for every coding not named, and identity is acceptable unless
 * refused.  A stream's compressor pulls the producer's bytes into its own
 * input buffer and deflates them straight into libmicrohttpd's buffer, so
 * at most IN_BYTES of uncompressed text and zlib's window are held per
 * reply, whatever the body's size.
 */

#include <stdint.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>

#include <zlib.h>

#include "compress.h"
#include "../daemon/base/err.h"
#include "../daemon/base/xalloc.h"

/* zlib's level: 6, its default, costs about twice the time of 4 on JSON
   for a few percent; plan lists are large, so lean to speed. */
#define LEVEL		4
#define IN_BYTES	16384	/* producer bytes taken at a time */

struct compress {
	z_stream zs;
	bool src_end;		/* the producer said COMPRESS_END */
	bool done;		/* deflate() returned Z_STREAM_END */
	bool failed;		/* deflate() failed: end the body */
	char in[IN_BYTES];	/* the producer's bytes not yet deflated */
};

static bool
tchar(int c)
{
	return (c >= 'a' && c <= 'z') || (c >= 'A' && c <= 'Z') ||
	    (c >= '0' && c <= '9') || (c != '\0' && strchr("!#$%&'*+-.^_`|~",
	    c) != NULL);
}

static const char *
ows(const char *p)
{
	while (*p == ' ' || *p == '\t')
		p++;
	return p;
}

/* Reads a qvalue at *pp into thousandths; -1 when it does not parse. */
static int
qvalue(const char **pp)
{
	const char *p = *pp;
	int q, i, scale = 100;

	if (*p != '0' && *p != '1')
		return -1;
	q = (*p++ - '0') * 1000;
	if (*p == '.') {
		p++;
		for (i = 0; i < 3 && *p >= '0' && *p <= '9'; i++, p++) {
			q += (*p - '0') * scale;
			scale /= 10;
		}
	}
	if (q > 1000 || (*p >= '0' && *p <= '9'))
		return -1;
	*pp = p;
	return q;
}

enum { N_GZIP, N_DEFLATE, N_IDENTITY, N_STAR, N_OTHER };

static int
name_of(const char *s, size_t n)
{
	static const struct {
		const char *word;
		int which;
	} names[] = {
		{ "gzip", N_GZIP }, { "x-gzip", N_GZIP },
		{ "deflate", N_DEFLATE }, { "identity", N_IDENTITY },
		{ "*", N_STAR },
	};
	size_t i;

	for (i = 0; i < sizeof(names) / sizeof(names[0]); i++)
		if (strlen(names[i].word) == n &&
		    strncasecmp(names[i].word, s, n) == 0)
			return names[i].which;
	return N_OTHER;
}

enum compress_coding
compress_choose(const char *accept, size_t len)
{
	int q[N_OTHER] = { -1, -1, -1, -1 };
	int which, w, gz, df, id, best_q;
	const char *p = accept, *name;
	size_t n;
	enum compress_coding best;

	if (accept == NULL)
		return COMPRESS_IDENTITY;
	for (;;) {
		while (*p == ' ' || *p == '\t' || *p == ',')
			p++;
		if (*p == '\0')
			break;
		name = p;
		while (tchar((unsigned char)*p))
			p++;
		n = (size_t)(p - name);
		w = 1000;
		p = ows(p);
		if (*p == ';') {
			p = ows(p + 1);
			if ((*p == 'q' || *p == 'Q') && p[1] == '=') {
				p += 2;
				w = qvalue(&p);
				p = ows(p);
			} else {
				w = -1;
			}
		}
		if (n == 0 || w < 0 || (*p != ',' && *p != '\0')) {
			/* Not a member we can read: skip to the next. */
			while (*p != ',' && *p != '\0')
				p++;
			continue;
		}
		which = name_of(name, n);
		if (which != N_OTHER && q[which] < 0)
			q[which] = w;
	}
	gz = q[N_GZIP] >= 0 ? q[N_GZIP] : q[N_STAR] >= 0 ? q[N_STAR] : 0;
	df = q[N_DEFLATE] >= 0 ? q[N_DEFLATE] : q[N_STAR] >= 0 ?
	    q[N_STAR] : 0;
	id = q[N_IDENTITY] >= 0 ? q[N_IDENTITY] : q[N_STAR] >= 0 ?
	    q[N_STAR] : 1000;
	best = gz >= df ? COMPRESS_GZIP : COMPRESS_DEFLATE;
	best_q = gz >= df ? gz : df;
	if (best_q == 0 || id > best_q)
		return COMPRESS_IDENTITY;
	if (len < COMPRESS_MIN_BYTES && id > 0)
		return COMPRESS_IDENTITY;
	return best;
}

const char *
compress_word(enum compress_coding c)
{
	switch (c) {
	case COMPRESS_GZIP:
		return "gzip";
	case COMPRESS_DEFLATE:
		return "deflate";
	case COMPRESS_IDENTITY:
		break;
	}
	return NULL;
}

/* deflateInit2()'s window bits: +16 asks zlib for the gzip wrapper. */
static int
window_bits(enum compress_coding c)
{
	return c == COMPRESS_GZIP ? 15 + 16 : 15;
}

int
compress_buffer(enum compress_coding c, const char *in, size_t len,
    char **outp, size_t *outlenp)
{
	z_stream zs;
	char *out = NULL;
	size_t cap;
	int r, zr;

	r = ERR_INTERNAL;
	*outp = NULL;
	*outlenp = 0;
	memset(&zs, 0, sizeof(zs));
	if (c == COMPRESS_IDENTITY || len > UINT32_MAX / 2 ||
	    deflateInit2(&zs, LEVEL, Z_DEFLATED, window_bits(c), 8,
	    Z_DEFAULT_STRATEGY) != Z_OK)
		return ERR_INTERNAL;
	/* deflateBound() is enough for one Z_FINISH call; the gzip header
	   and trailer add 18 bytes over the zlib wrapper's 6. */
	cap = deflateBound(&zs, (uLong)len) + 32;
	out = xmalloc(cap);
	zs.next_in = (Bytef *)(uintptr_t)in;
	zs.avail_in = (uInt)len;
	zs.next_out = (Bytef *)out;
	zs.avail_out = (uInt)cap;
	zr = deflate(&zs, Z_FINISH);
	if (zr != Z_STREAM_END)
		goto out;
	*outlenp = cap - zs.avail_out;
	*outp = out;
	out = NULL;
	r = 0;
out:
	deflateEnd(&zs);
	free(out);
	return r;
}

struct compress *
compress_new(enum compress_coding c)
{
	struct compress *z = xcalloc(1, sizeof(*z));

	if (c == COMPRESS_IDENTITY || deflateInit2(&z->zs, LEVEL, Z_DEFLATED,
	    window_bits(c), 8, Z_DEFAULT_STRATEGY) != Z_OK) {
		/* Only out of memory: end the body at once. */
		z->failed = true;
		z->done = true;
	}
	return z;
}

long
compress_fill(struct compress *z, compress_src_fn *fill, void *ctx, char *buf,
    size_t max)
{
	size_t room = max > UINT32_MAX ? UINT32_MAX : max;
	long n;
	int zr;

	if (z->done || room == 0)
		return z->done ? COMPRESS_END : 0;
	z->zs.next_out = (Bytef *)buf;
	z->zs.avail_out = (uInt)room;
	while (z->zs.avail_out > 0 && !z->done) {
		if (z->zs.avail_in == 0 && !z->src_end) {
			n = fill(ctx, z->in, sizeof(z->in));
			if (n < 0) {
				z->src_end = true;
			} else if (n == 0) {
				/* Nothing now: send what is compressed. */
				zr = deflate(&z->zs, Z_SYNC_FLUSH);
				if (zr != Z_OK && zr != Z_BUF_ERROR)
					z->failed = z->done = true;
				break;
			} else {
				z->zs.next_in = (Bytef *)z->in;
				z->zs.avail_in = (uInt)n;
			}
		}
		zr = deflate(&z->zs, z->src_end ? Z_FINISH : Z_NO_FLUSH);
		if (zr == Z_STREAM_END)
			z->done = true;
		else if (zr != Z_OK && zr != Z_BUF_ERROR)
			z->failed = z->done = true;
	}
	n = (long)(room - z->zs.avail_out);
	if (n > 0)
		return n;
	return z->done ? COMPRESS_END : 0;
}

void
compress_free(struct compress *z)
{
	if (z == NULL)
		return;
	deflateEnd(&z->zs);
	free(z);
}
