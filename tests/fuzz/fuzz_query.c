/* SPDX-License-Identifier: GPL-3.0-or-later */
/* libFuzzer target: request paths, query values and Accept-Encoding
   (routes.c, query.c, compress.c). */

/*
 * DESIGN
 * What reaches the readers is what libmicrohttpd hands over: NUL-terminated
 * strings (the path and query values already percent-decoded).  The input
 * is split at '\n' into fields, in this order:
 *
 *   method, path, Content-Type, wait, after, from, format, stage,
 *   matrix name, limit, page cursor (after), Accept-Encoding
 *
 * A field the input does not reach is absent (NULL), as is a field whose
 * first byte is 0x01, so "absent" and "empty" are both reachable.  Each
 * field is its own allocation of exactly its bytes, so an over-read
 * shows.  Besides the sanitizers: routes_match() fills param only with a
 * NUL-terminated segment that fits and has no '/', and a 405 comes with
 * an Allow list.
 */

#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "../../api/codec_model.h"
#include "../../api/compress.h"
#include "../../api/http.h"
#include "../../api/query.h"
#include "../../api/routes.h"
#include "../../daemon/base/err.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

#define CHECK(cond)	do {						\
	if (!(cond)) {							\
		fprintf(stderr, "fuzz_query: broken promise: %s (%s:%d)\n", \
		    #cond, __FILE__, __LINE__);				\
		abort();						\
	}								\
} while (0)

enum { F_METHOD, F_PATH, F_CTYPE, F_WAIT, F_AFTER, F_FROM, F_FORMAT,
    F_STAGE, F_MATRIX, F_LIMIT, F_CURSOR, F_ACCEPT_ENC, F_N };

int
LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
	const struct route *ro = NULL;
	char *f[F_N] = { NULL };
	char param[REQ_PARAM_MAX], allow[64];
	struct err e = { 0 };
	enum export_format fmt;
	const char *nl;
	double wait_s;
	int64_t after, rev;
	size_t pos = 0, n, k, limit, idx;
	enum compress_coding c;
	bool has_after;
	int stage, r;

	for (k = 0; k < F_N && pos <= size; k++) {
		nl = pos < size ? memchr(data + pos, '\n', size - pos) : NULL;
		n = (nl != NULL ? (size_t)(nl - (const char *)data) : size) -
		    pos;
		if (n == 0 || data[pos] != 0x01) {
			f[k] = malloc(n + 1);
			memcpy(f[k], data + pos, n);
			f[k][n] = '\0';
		}
		if (nl == NULL)
			break;
		pos += n + 1;
	}

	if (f[F_METHOD] != NULL && f[F_PATH] != NULL) {
		r = routes_match(f[F_METHOD], f[F_PATH], &ro, param,
		    sizeof(param), allow, sizeof(allow), &e);
		CHECK((r == 0) == (ro != NULL));
		CHECK(strlen(param) < sizeof(param));
		CHECK(strchr(param, '/') == NULL);
		CHECK(r != ERR_METHOD || allow[0] != '\0');
		if (r == 0) {
			err_clear(&e);
			(void)routes_check_ctype(ro, f[F_CTYPE], &e);
		}
	}
	err_clear(&e);
	r = query_poll(f[F_WAIT], f[F_AFTER], 300, &wait_s, &after,
	    &has_after, &e);
	CHECK(r != 0 || f[F_WAIT] != NULL || wait_s == 0);
	CHECK(r != 0 || wait_s == 0 || (wait_s > 0 && wait_s <= 300));
	CHECK(r != 0 || !has_after || after >= 0);
	err_clear(&e);
	r = query_from(f[F_FROM], &rev, &e);
	CHECK(r != 0 || rev >= 1);
	err_clear(&e);
	r = query_export(f[F_FORMAT], f[F_STAGE], &fmt, &stage, &e);
	CHECK(r != 0 || (stage >= -1 && stage < PLAN_STAGES_MAX));
	(void)codec_matrix_name_ok(f[F_MATRIX]);
	err_clear(&e);
	r = query_page(f[F_LIMIT], f[F_CURSOR], &limit, &has_after, &rev,
	    &idx, &e);
	CHECK(r != 0 || (f[F_LIMIT] == NULL) == (limit == 0));
	CHECK(r != 0 || limit <= QUERY_LIMIT_MAX);
	CHECK(r != 0 || !has_after || rev >= 1);
	CHECK(r == 0 || !has_after);
	c = compress_choose(f[F_ACCEPT_ENC], SIZE_MAX);
	CHECK(c == COMPRESS_IDENTITY || c == COMPRESS_GZIP ||
	    c == COMPRESS_DEFLATE);
	CHECK(f[F_ACCEPT_ENC] != NULL || c == COMPRESS_IDENTITY);

	for (k = 0; k < F_N; k++)
		free(f[k]);
	return 0;
}
