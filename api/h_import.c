/* SPDX-License-Identifier: GPL-3.0-or-later */
/* POST /v1/import: replace topology and one matrix from an SNDlib/CSV file. */
#include <stddef.h>
#include <stdint.h>
#include <string.h>

#include "handlers.h"
#include "../daemon/base/err.h"
#include "../daemon/engine/csvnet.h"
#include "../daemon/engine/model.h"
#include "../daemon/engine/sndlib.h"
#include "../daemon/service.h"
#include "codec_model.h"
#include "http.h"
#include "reply.h"

typedef int parse_fn(const char *, size_t, struct model **, struct err *);

static const struct {
	const char *name;	/* ?format= value */
	parse_fn *parse;
} formats[] = {
	{ "sndlib", sndlib_parse },
	{ "csv", csvnet_parse },
};

int
h_import(struct req *rq, struct err *e)
{
	struct model *m = NULL;
	const char *format, *matrix;
	parse_fn *parse = NULL;
	int64_t rev;
	size_t i;
	int r;

	r = ERR_INTERNAL;
	format = http_query(rq, "format");
	matrix = http_query(rq, "matrix");
	for (i = 0; format != NULL && i < sizeof(formats) / sizeof(formats[0]);
	    i++)
		if (strcmp(format, formats[i].name) == 0)
			parse = formats[i].parse;
	if (parse == NULL) {
		r = err_set(e, ERR_INVALID, "format", "the query parameter "
		    "format must be \"sndlib\" or \"csv\"");
		goto out;
	}
	if (!codec_matrix_name_ok(matrix)) {
		r = err_set(e, ERR_INVALID, "matrix", "the query parameter "
		    "matrix must be a matrix name: 1 to %d characters of "
		    "A-Z a-z 0-9 . _ -", CODEC_MATRIX_NAME_MAX);
		goto out;
	}
	if ((r = parse(rq->body != NULL ? rq->body : "", rq->body_len, &m,
	    e)) != 0 ||
	    (r = service_put_network(rq->svc, m, matrix, &rev, e)) != 0)
		goto out;
	reply_packf(rq, 200, "{s:I, s:s, s:I, s:I, s:I}", "model_revision",
	    (long long)rev, "matrix", matrix, "nodes", (long long)m->n_nodes,
	    "links", (long long)m->n_links, "demands",
	    (long long)m->n_demands);
	r = 0;
out:
	model_free(m);
	return r;
}
