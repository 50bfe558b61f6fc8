/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The sweep routes: start, list, read, cancel, delete, CSV downloads. */

#include <errno.h>
#include <stdio.h>
#include <stddef.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "handlers.h"
#include "../daemon/base/err.h"
#include "../daemon/service.h"
#include "../daemon/sweeps.h"
#include "../storage/db.h"
#include "codec_sweep.h"
#include "http.h"
#include "reply.h"

int
h_sweep_id(struct req *rq, int64_t *idp, struct err *e)
{
	char *end;
	long long x;

	errno = 0;
	x = strtoll(rq->param, &end, 10);
	if (rq->param[0] < '0' || rq->param[0] > '9' || *end != '\0' ||
	    errno != 0 || x <= 0)
		return err_set(e, ERR_NOTFOUND, "id", "no sweep \"%s\"",
		    rq->param);
	*idp = x;
	return 0;
}

int
h_sweep_start(struct req *rq, struct err *e)
{
	struct sweep_req sr;
	int64_t id = 0;
	long total = 0;
	char *params, href[64];
	int r;
	double tl = service_conf(rq->svc)->whatif_time_limit_s;

	if ((r = codec_sweep_decode(rq->body, rq->body_len, &sr, e)) != 0)
		return r;
	if (sr.time_limit_s > tl)
		return err_set(e, ERR_INVALID, "time_limit_s", "at most %g s "
		    "(whatif_time_limit_s)", tl);
	if (sr.time_limit_s > 0)
		tl = sr.time_limit_s;
	params = codec_sweep_params(&sr);
	r = sweeps_start(service_sweeps(rq->svc), sr.kind, sr.scale, tl,
	    params, &id, &total, e);
	free(params);
	if (r != 0)
		return r;
	snprintf(href, sizeof(href), "/v1/sweeps/%lld", (long long)id);
	return reply_packf(rq, 202, "{s:I, s:s, s:I, s:s}", "id",
	    (long long)id, "state", "running", "total", (long long)total,
	    "href", href);
}

int
h_sweeps_list(struct req *rq, struct err *e)
{
	struct db_sweep *s = NULL;
	struct db *db;
	size_t n = 0, len = 0;
	char *text;
	int r;

	db = service_db_lock(rq->svc);
	r = db_sweep_list(db, &s, &n, e);
	service_db_unlock(rq->svc);
	if (r != 0)
		return r;
	text = codec_sweeps_encode(s, n, &len);
	db_sweeps_free(s, n);
	return reply_encoded(rq, text, len, "the sweeps", e);
}

/* Reads sweep id and (rsp not NULL) its results. */
static int
load(struct req *rq, int64_t id, struct db_sweep **sp,
    struct db_sweep_result **rsp, size_t *np, struct err *e)
{
	struct db *db;
	int r;

	*sp = NULL;
	if (rsp != NULL) {
		*rsp = NULL;
		*np = 0;
	}
	db = service_db_lock(rq->svc);
	r = db_sweep_get(db, id, sp, e);
	if (r == 0 && rsp != NULL)
		r = db_sweep_results(db, id, rsp, np, e);
	service_db_unlock(rq->svc);
	if (r == ERR_NOTFOUND)
		err_set(e, r, "id", "no sweep %lld", (long long)id);
	return r;
}

/* Replies with sweep id as GET /v1/sweeps/{id} has it. */
static int
reply_sweep(struct req *rq, int64_t id, struct err *e)
{
	struct db_sweep *s;
	struct db_sweep_result *rs;
	size_t n, len = 0;
	long done = 0, total = 0;
	double elapsed = 0;
	bool running;
	char *text;
	int r;

	/* Progress first: a sweep that ends meanwhile reads as stored. */
	running = sweeps_progress(service_sweeps(rq->svc), id, &done, &total,
	    &elapsed);
	if ((r = load(rq, id, &s, &rs, &n, e)) != 0)
		return r;
	running = running && strcmp(s->state, "running") == 0;
	text = codec_sweep_encode(s, rs, n, running, done, elapsed, &len);
	db_sweep_results_free(rs, n);
	db_sweep_free(s);
	return reply_encoded(rq, text, len, "the sweep", e);
}

int
h_sweep_get(struct req *rq, struct err *e)
{
	int64_t id;
	int r;

	if ((r = h_sweep_id(rq, &id, e)) != 0)
		return r;
	return reply_sweep(rq, id, e);
}

int
h_sweep_cancel(struct req *rq, struct err *e)
{
	struct db_sweep *s;
	struct db_sweep_result *rs;
	size_t n;
	int64_t id;
	int r;

	if ((r = h_sweep_id(rq, &id, e)) != 0 ||
	    (r = load(rq, id, &s, &rs, &n, e)) != 0)
		return r;
	db_sweep_results_free(rs, n);
	db_sweep_free(s);
	if ((r = sweeps_cancel(service_sweeps(rq->svc), id, e)) != 0)
		return r;
	return reply_sweep(rq, id, e);
}

int
h_sweep_delete(struct req *rq, struct err *e)
{
	struct db *db;
	int64_t id;
	long done, total;
	double el;
	int r;

	if ((r = h_sweep_id(rq, &id, e)) != 0)
		return r;
	if (sweeps_progress(service_sweeps(rq->svc), id, &done, &total, &el))
		return err_set(e, ERR_CONFLICT, "id", "sweep %lld is running; "
		    "cancel it first", (long long)id);
	db = service_db_lock(rq->svc);
	r = db_sweep_delete(db, id, e);
	service_db_unlock(rq->svc);
	if (r == ERR_NOTFOUND)
		err_set(e, r, "id", "no sweep %lld", (long long)id);
	if (r != 0)
		return r;
	return reply_packf(rq, 200, "{s:I, s:b}", "id", (long long)id,
	    "deleted", 1);
}

int
h_sweep_results_csv(struct req *rq, struct err *e)
{
	struct db_sweep *s;
	struct db_sweep_result *rs;
	size_t n, len = 0;
	int64_t id;
	char *text;
	int r;

	if ((r = h_sweep_id(rq, &id, e)) != 0 ||
	    (r = load(rq, id, &s, &rs, &n, e)) != 0)
		return r;
	text = codec_sweep_results_csv(rs, n, &len);
	db_sweep_results_free(rs, n);
	db_sweep_free(s);
	reply_text(rq, "text/csv; charset=utf-8; header=present", text, len);
	return 0;
}

int
h_sweep_links_csv(struct req *rq, struct err *e)
{
	struct db_sweep *s;
	size_t len = 0;
	int64_t id;
	char *text;
	int r;

	if ((r = h_sweep_id(rq, &id, e)) != 0 ||
	    (r = load(rq, id, &s, NULL, NULL, e)) != 0)
		return r;
	text = codec_sweep_links_csv(s, &len);
	db_sweep_free(s);
	reply_text(rq, "text/csv; charset=utf-8; header=present", text, len);
	return 0;
}
