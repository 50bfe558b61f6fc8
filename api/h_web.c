/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The network map page: the files of api/web/, compiled in, served as is. */

/*
 * DESIGN
 * At build time api/web_embed.sh turns every file of api/web/ into a byte
 * array of build/gen/web_files.c, so the daemon reads no file at run time
 * and the page always matches the API of the daemon that serves it.  The
 * page is plain HTML, CSS and JavaScript that fetches nothing but this
 * daemon's own /v1/ routes.  GET / answers with index.html itself (a
 * reply carries no Location header, so no redirect); GET /ui/{file} with
 * one file, its Content-Type taken from the name's extension.  The ETag is
 * a 64-bit FNV-1a hash of the bytes, so a new build that changes a file
 * changes its tag.  The arrays are constant: any thread may read them.
 */

#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "handlers.h"
#include "../daemon/base/err.h"
#include "../daemon/base/xalloc.h"
#include "http.h"
#include "reply.h"

/* Defined in build/gen/web_files.c (api/web_embed.sh); NULL-terminated. */
extern const char *const web_names[];
extern const unsigned char *const web_data[];
extern const size_t web_sizes[];
extern const size_t web_n;

static const struct {
	const char *ext;
	const char *ctype;
} ctypes[] = {
	{ ".html", "text/html; charset=utf-8" },
	{ ".js", "text/javascript; charset=utf-8" },
	{ ".css", "text/css; charset=utf-8" },
	{ ".svg", "image/svg+xml" },
	{ ".png", "image/png" },
	{ ".txt", "text/plain; charset=utf-8" },
};

/* The Content-Type for file name (by its extension). */
static const char *
ctype_of(const char *name)
{
	const char *dot = strrchr(name, '.');
	size_t i;

	for (i = 0; dot != NULL && i < sizeof(ctypes) / sizeof(ctypes[0]);
	    i++)
		if (strcmp(dot, ctypes[i].ext) == 0)
			return ctypes[i].ctype;
	return "application/octet-stream";
}

/* Replies with the compiled-in file name, or returns ERR_NOTFOUND. */
static int
serve(struct req *rq, const char *name, struct err *e)
{
	const unsigned char *p;
	uint64_t h = 14695981039346656037ULL;	/* FNV-1a 64 offset basis */
	size_t i, k, len;
	char *copy;

	for (i = 0; i < web_n; i++)
		if (strcmp(web_names[i], name) == 0)
			break;
	if (i == web_n)
		return err_set(e, ERR_NOTFOUND, "path", "the page has no "
		    "file \"%s\"", name);
	p = web_data[i];
	len = web_sizes[i];
	for (k = 0; k < len; k++) {
		h ^= p[k];
		h *= 1099511628211ULL;		/* FNV-1a 64 prime */
	}
	/* reply_text() takes the text over and frees it. */
	copy = xmalloc(len + 1);
	memcpy(copy, p, len);
	copy[len] = '\0';
	reply_text(rq, ctype_of(name), copy, len);
	snprintf(rq->etag, sizeof(rq->etag), "\"%016llx\"",
	    (unsigned long long)h);
	return 0;
}

int
h_web_index(struct req *rq, struct err *e)
{
	return serve(rq, "index.html", e);
}

int
h_web_file(struct req *rq, struct err *e)
{
	return serve(rq, rq->param, e);
}
