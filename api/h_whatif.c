/* SPDX-License-Identifier: GPL-3.0-or-later */
/* POST /v1/whatif: a scenario solved on a worker, the live plan untouched. */

/*
 * DESIGN
 * The handler does everything that can refuse the request on the HTTP
 * thread (decode, matrix lookup, scenario against the live model, model
 * check), so a bad scenario gets its 4xx at once and starts nothing.  It
 * then queues the solve and defers the reply: the connection is
 * suspended, no HTTP thread waits.  The worker encodes the answer and
 * completes the request.
 */

#include <stddef.h>
#include <stdint.h>
#include <stdlib.h>

#include "handlers.h"
#include "../daemon/base/err.h"
#include "../daemon/base/xalloc.h"
#include "../daemon/engine/engine.h"
#include "../daemon/engine/scenario.h"
#include "../daemon/service.h"
#include "../daemon/whatif.h"
#include "codec_whatif.h"
#include "http.h"
#include "reply.h"

/* On the worker: the answer, then the deferred reply goes out. */
static void
done(void *ctx, struct whatif_result *res)
{
	struct req *rq = ctx;
	const struct published *live = res->box->pub;
	struct err e = { 0 };
	size_t len = 0;
	char *text;

	if (res->r != 0) {
		reply_error(rq, res->r, &res->e);
	} else {
		text = codec_whatif_encode(live->model, live->plan,
		    live->revision, res->m, res->p, res->failed,
		    res->n_failed, &len);
		if (reply_encoded(rq, text, len, "the what-if", &e) != 0)
			reply_error(rq, ERR_INTERNAL, &e);
	}
	whatif_result_free(res);
	http_complete(rq);
}

/* The live model with the request's matrix and policy, as a new copy. */
static int
base_model(struct req *rq, const struct model *live, struct whatif_req *wr,
    struct model **mp, struct err *e)
{
	struct matrix *mx = NULL;
	struct model *m;
	char *name;
	int r;

	*mp = NULL;
	if (wr->matrix != NULL &&
	    (r = service_load_matrix(rq->svc, wr->matrix, &mx, e)) != 0) {
		if (r == ERR_NOTFOUND) {
			/* The member, not storage's name for it. */
			err_clear(e);
			err_set(e, r, "matrix", "no matrix \"%s\"",
			    wr->matrix);
		}
		return r;
	}
	m = model_copy(live);
	name = wr->matrix != NULL ? xstrdup(wr->matrix) :
	    live->policy.matrix != NULL ? xstrdup(live->policy.matrix) : NULL;
	policy_clear(&m->policy);
	m->policy = wr->policy;
	m->policy.matrix = name;
	if (mx != NULL)
		model_use_matrix(m, mx);
	matrix_free(mx);
	*mp = m;
	return 0;
}

int
h_whatif(struct req *rq, struct err *e)
{
	const struct service_conf *conf = service_conf(rq->svc);
	struct seed_box *box;
	struct whatif_req wr;
	struct model *base = NULL, *sm = NULL;
	size_t *failed = NULL, n_failed = 0;
	double tl;
	int r;

	if ((box = service_seed_ref(rq->svc)) == NULL)
		return err_set(e, ERR_BUSY, NULL, "no plan has been published "
		    "yet");
	if ((r = codec_whatif_decode(rq->body, rq->body_len,
	    &box->pub->model->policy, &wr, e)) != 0) {
		service_seed_unref(box);
		return r;
	}
	tl = conf->whatif_time_limit_s;
	if (wr.time_limit_s > tl && tl > 0) {
		r = err_set(e, ERR_INVALID, "time_limit_s", "at most %g s "
		    "(whatif_time_limit_s)", tl);
		goto fail;
	}
	if (wr.time_limit_s > 0)
		tl = wr.time_limit_s;
	if ((r = base_model(rq, box->pub->model, &wr, &base, e)) != 0 ||
	    (r = scenario_apply(base, wr.sc, &sm, &failed, &n_failed,
	    e)) != 0 ||
	    (r = engine_check(sm, e)) != 0)
		goto fail;
	model_free(base);
	codec_whatif_req_clear(&wr);
	/*
	 * Deferred before it is queued: the worker may finish first.  The
	 * box, the model and the list go with the job.
	 */
	http_defer(rq);
	if ((r = whatif_submit(rq->svc, box, sm, failed, n_failed, tl, done,
	    rq, e)) != 0)
		http_undefer(rq);
	return r;
fail:
	codec_whatif_req_clear(&wr);
	model_free(base);
	model_free(sm);
	free(failed);
	service_seed_unref(box);
	return r;
}
