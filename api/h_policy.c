/* SPDX-License-Identifier: GPL-3.0-or-later */
/* GET/PUT /v1/policy: the objective, headroom and matrix planned. */
#include <stddef.h>
#include <stdint.h>
#include <string.h>

#include "handlers.h"
#include "../daemon/base/err.h"
#include "../daemon/engine/model.h"
#include "../daemon/service.h"
#include "codec_model.h"
#include "http.h"
#include "reply.h"

int
h_policy_get(struct req *rq, struct err *e)
{
	struct model *m = NULL;
	char *text;
	size_t len = 0;
	int r;

	r = ERR_INTERNAL;
	if ((r = service_get_topology(rq->svc, &m, e)) != 0)
		goto out;
	text = codec_policy_encode(&m->policy, &len);
	r = reply_encoded(rq, text, len, "the policy", e);
out:
	model_free(m);
	return r;
}

int
h_policy_put(struct req *rq, struct err *e)
{
	struct policy p;
	int64_t rev;
	int r;

	r = ERR_INTERNAL;
	memset(&p, 0, sizeof(p));
	if ((r = codec_policy_decode(rq->body, rq->body_len, &p, e)) != 0)
		return r;
	if ((r = service_put_policy(rq->svc, &p, &rev, e)) != 0)
		goto out;
	reply_packf(rq, 200, "{s:I}", "model_revision", (long long)rev);
	r = 0;
out:
	policy_clear(&p);
	return r;
}
