/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The topology routes: GET/PUT /v1/topology, GET/PATCH /v1/links/{id}. */
#include <stddef.h>
#include <stdint.h>
#include <stdlib.h>

#include "handlers.h"
#include "../daemon/base/err.h"
#include "../daemon/engine/model.h"
#include "../daemon/service.h"
#include "codec_model.h"
#include "http.h"
#include "reply.h"

int
h_topology_get(struct req *rq, struct err *e)
{
	struct model *m = NULL;
	char *text;
	size_t len = 0;
	int r;

	r = ERR_INTERNAL;
	if ((r = service_get_topology(rq->svc, &m, e)) != 0)
		goto out;
	text = codec_topology_encode(m, &len);
	r = reply_encoded(rq, text, len, "the topology", e);
out:
	model_free(m);
	return r;
}

int
h_topology_put(struct req *rq, struct err *e)
{
	struct model *m = NULL;
	int64_t rev;
	int r;

	r = ERR_INTERNAL;
	if ((r = codec_topology_decode(rq->body, rq->body_len, &m, e)) != 0 ||
	    (r = service_put_topology(rq->svc, m, &rev, e)) != 0)
		goto out;
	reply_packf(rq, 200, "{s:I, s:I, s:I}", "model_revision",
	    (long long)rev, "nodes", (long long)m->n_nodes, "links",
	    (long long)m->n_links);
	r = 0;
out:
	model_free(m);
	return r;
}

int
h_link_get(struct req *rq, struct err *e)
{
	struct model *m = NULL;
	char *text;
	size_t len = 0;
	long i;
	int r;

	r = ERR_INTERNAL;
	if ((r = service_get_topology(rq->svc, &m, e)) != 0)
		goto out;
	if ((i = model_find_link(m, rq->param)) < 0) {
		r = err_set(e, ERR_NOTFOUND, "id", "no link \"%s\"",
		    rq->param);
		goto out;
	}
	text = codec_link_encode(m, (size_t)i, &len);
	r = reply_encoded(rq, text, len, "link", e);
out:
	model_free(m);
	return r;
}

int
h_link_patch(struct req *rq, struct err *e)
{
	struct link_patch lp;
	int64_t rev;
	int r;

	if ((r = codec_link_patch_decode(rq->body, rq->body_len, &lp,
	    e)) != 0 ||
	    (r = service_patch_link(rq->svc, rq->param, &lp, &rev, e)) != 0)
		return r;
	reply_packf(rq, 200, "{s:I, s:s}", "model_revision", (long long)rev,
	    "id", rq->param);
	return 0;
}
