/* SPDX-License-Identifier: GPL-3.0-or-later */
/* JSON <-> what-if: the scenario request and the answer. */
#ifndef WEFT_API_CODEC_WHATIF_H
#define WEFT_API_CODEC_WHATIF_H

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#include "../daemon/engine/model.h"

struct err;
struct plan;
struct scenario;

#define CODEC_IDS_MAX		100000	/* ids in one scenario list */
#define CODEC_UNSERVED_MAX	1000	/* unserved demands listed */
#define CODEC_RISING_MAX	10	/* rising link directions listed */

struct whatif_req {
	struct scenario *sc;	/* owned */
	char *matrix;		/* owned; NULL: the policy's */
	struct policy policy;	/* live policy with the request's members */
	double time_limit_s;	/* 0: not given */
};

/*
 * Decodes a POST /v1/whatif body (docs/api.md) against the live policy.
 * Returns 0 with *rq filled (codec_whatif_req_clear() it), or ERR_INVALID
 * / ERR_TOOBIG naming the member.  Ids are checked for form only; the
 * scenario checks them against the model.
 */
int codec_whatif_decode(const char *text, size_t len,
    const struct policy *live, struct whatif_req *rq, struct err *e);
void codec_whatif_req_clear(struct whatif_req *rq);

/*
 * The answer: the scenario plan q of model sm (links failed[] taken
 * down), compared with the live plan p of model lm (revision rev).
 */
char *codec_whatif_encode(const struct model *lm, const struct plan *p,
    int64_t rev, const struct model *sm, const struct plan *q,
    const size_t *failed, size_t n_failed, size_t *lenp);

#endif /* WEFT_API_CODEC_WHATIF_H */
