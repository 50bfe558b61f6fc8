/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The traffic matrix routes: list, get, put and delete by name. */
#include <stddef.h>
#include <stdint.h>

#include "handlers.h"
#include "../daemon/base/err.h"
#include "../daemon/engine/model.h"
#include "../daemon/service.h"
#include "codec_model.h"
#include "http.h"
#include "reply.h"

/* Checks the {name} path segment. */
static int
check_name(struct req *rq, struct err *e)
{
	if (!codec_matrix_name_ok(rq->param))
		return err_set(e, ERR_INVALID, "name", "a matrix name is 1 "
		    "to %d characters of A-Z a-z 0-9 . _ -",
		    CODEC_MATRIX_NAME_MAX);
	return 0;
}

int
h_matrices_list(struct req *rq, struct err *e)
{
	struct db_name *names = NULL;
	size_t n = 0, len = 0;
	char *text;
	int r;

	r = ERR_INTERNAL;
	if ((r = service_list_matrices(rq->svc, &names, &n, e)) != 0)
		goto out;
	text = codec_matrices_encode(names, n, &len);
	r = reply_encoded(rq, text, len, "the list", e);
out:
	db_names_free(names, n);
	return r;
}

int
h_matrix_get(struct req *rq, struct err *e)
{
	struct matrix *mx = NULL;
	char *text;
	size_t len = 0;
	int r;

	r = ERR_INTERNAL;
	if ((r = check_name(rq, e)) != 0 ||
	    (r = service_get_matrix(rq->svc, rq->param, &mx, e)) != 0)
		goto out;
	text = codec_matrix_encode(mx, &len);
	r = reply_encoded(rq, text, len, "the matrix", e);
out:
	matrix_free(mx);
	return r;
}

int
h_matrix_put(struct req *rq, struct err *e)
{
	struct matrix *mx = NULL;
	int64_t rev;
	int r;

	r = ERR_INTERNAL;
	if ((r = check_name(rq, e)) != 0 ||
	    (r = codec_matrix_decode(rq->body, rq->body_len, rq->param, &mx,
	    e)) != 0 ||
	    (r = service_put_matrix(rq->svc, rq->param, mx, &rev, e)) != 0)
		goto out;
	reply_packf(rq, 200, "{s:I, s:s, s:I}", "model_revision",
	    (long long)rev, "name", rq->param, "demands", (long long)mx->n);
	r = 0;
out:
	matrix_free(mx);
	return r;
}

int
h_matrix_delete(struct req *rq, struct err *e)
{
	int64_t rev;
	int r;

	if ((r = check_name(rq, e)) != 0 ||
	    (r = service_delete_matrix(rq->svc, rq->param, &rev, e)) != 0)
		return r;
	reply_packf(rq, 200, "{s:I, s:s}", "model_revision", (long long)rev,
	    "name", rq->param);
	return 0;
}
