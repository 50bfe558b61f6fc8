/* SPDX-License-Identifier: GPL-3.0-or-later */
/* libFuzzer target: the JSON request decoders (api/codec_*.c). */

/*
 * DESIGN
 * The first byte of the input picks the decoder, the rest is the request
 * body exactly as a handler hands it over (not NUL-terminated):
 *
 *   'T'  codec_topology_decode     PUT /v1/topology
 *   'M'  codec_matrix_decode       PUT /v1/matrices/{name}
 *   'P'  codec_policy_decode       PUT /v1/policy
 *   'L'  codec_link_patch_decode   PATCH /v1/links/{id}
 *   'W'  codec_whatif_decode       POST /v1/whatif (then scenario_apply
 *                                  against a small live model)
 *   'S'  codec_sweep_decode        POST /v1/sweeps
 *
 * Any other first byte picks decoders[byte % N], so no input is wasted.
 * Besides the sanitizers, two promises are checked: a decoder returns a
 * result exactly when it returns 0, and what the topology, matrix and
 * policy encoders write reads back through the decoder (codec_model.h:
 * "the shape codec_topology_decode reads").  A broken promise aborts.
 */

#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "../../api/codec_model.h"
#include "../../api/codec_sweep.h"
#include "../../api/codec_whatif.h"
#include "../../daemon/base/err.h"
#include "../../daemon/base/log.h"
#include "../../daemon/engine/model.h"
#include "../../daemon/engine/scenario.h"
#include "../../storage/db.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

#define CHECK(cond)	do {						\
	if (!(cond)) {							\
		fprintf(stderr, "fuzz_json: broken promise: %s (%s:%d)\n", \
		    #cond, __FILE__, __LINE__);				\
		abort();						\
	}								\
} while (0)

static void
topology(const char *t, size_t n)
{
	struct model *m = NULL, *m2 = NULL;
	struct err e = { 0 };
	char *out;
	size_t len, i;
	int r;

	r = codec_topology_decode(t, n, &m, &e);
	CHECK((r == 0) == (m != NULL));
	if (r != 0)
		return;
	out = codec_topology_encode(m, &len);
	CHECK(out != NULL);
	err_clear(&e);
	r = codec_topology_decode(out, len, &m2, &e);
	if (r != 0)
		fprintf(stderr, "re-read: %s: %s\n", e.where, e.msg);
	CHECK(r == 0);
	CHECK(m2->n_nodes == m->n_nodes && m2->n_links == m->n_links);
	for (i = 0; i < m->n_links; i++) {
		CHECK(strcmp(m2->links[i].id, m->links[i].id) == 0);
		CHECK(m2->links[i].capacity_bps == m->links[i].capacity_bps);
		CHECK(m2->links[i].n_srlgs == m->links[i].n_srlgs);
	}
	free(out);
	model_free(m2);
	model_free(m);
}

static void
matrix(const char *t, size_t n)
{
	struct matrix *mx = NULL, *mx2 = NULL;
	struct err e = { 0 };
	char *out;
	size_t len;
	int r;

	r = codec_matrix_decode(t, n, "fuzz", &mx, &e);
	CHECK((r == 0) == (mx != NULL));
	if (r != 0)
		return;
	out = codec_matrix_encode(mx, &len);
	CHECK(out != NULL);
	err_clear(&e);
	CHECK(codec_matrix_decode(out, len, "fuzz", &mx2, &e) == 0);
	CHECK(mx2->n == mx->n);
	free(out);
	matrix_free(mx2);
	matrix_free(mx);
}

static void
policy(const char *t, size_t n)
{
	struct policy p, p2;
	struct err e = { 0 };
	char *out;
	size_t len;

	memset(&p, 0, sizeof(p));
	if (codec_policy_decode(t, n, &p, &e) != 0)
		return;
	out = codec_policy_encode(&p, &len);
	CHECK(out != NULL);
	memset(&p2, 0, sizeof(p2));
	err_clear(&e);
	CHECK(codec_policy_decode(out, len, &p2, &e) == 0);
	CHECK(p2.headroom == p.headroom && p2.objective == p.objective);
	free(out);
	policy_clear(&p2);
	policy_clear(&p);
}

static void
link_patch(const char *t, size_t n)
{
	struct link_patch lp;
	struct err e = { 0 };

	(void)codec_link_patch_decode(t, n, &lp, &e);
}

/* The live model a what-if is applied to: a triangle with a tail. */
static struct model *
live_model(void)
{
	static const uint32_t g1[] = { 1, 2 }, g2[] = { 2 };
	struct model *m = model_new();
	struct err e = { 0 };

	CHECK(model_add_node(m, "A", "Alder", NULL, "n", &e) == 0);
	CHECK(model_add_node(m, "B", NULL, NULL, "n", &e) == 0);
	CHECK(model_add_node(m, "C", NULL, NULL, "n", &e) == 0);
	CHECK(model_add_node(m, "D", NULL, NULL, "n", &e) == 0);
	CHECK(model_add_link(m, "L1", "A", "B", 1e10, 1, true, "l", &e) == 0);
	CHECK(model_add_link(m, "L2", "B", "C", 1e10, 2, true, "l", &e) == 0);
	CHECK(model_add_link(m, "L3", "A", "C", 4e9, 5, true, "l", &e) == 0);
	CHECK(model_add_link(m, "L4", "C", "D", 1e9, 1, false, "l", &e) == 0);
	CHECK(model_set_link_srlgs(m, 0, g1, 2, "l", &e) == 0);
	CHECK(model_set_link_srlgs(m, 2, g2, 1, "l", &e) == 0);
	CHECK(model_add_demand(m, "A", "C", 3e9, 0, "d", &e) == 0);
	CHECK(model_add_demand(m, "B", "D", 5e8, 3, "d", &e) == 0);
	return m;
}

static void
whatif(const char *t, size_t n)
{
	static struct model *live;
	struct whatif_req rq;
	struct model *out = NULL;
	struct err e = { 0 };
	size_t *failed = NULL, n_failed = 0;
	int r;

	if (live == NULL)
		live = live_model();
	if (codec_whatif_decode(t, n, &live->policy, &rq, &e) == 0) {
		err_clear(&e);
		r = scenario_apply(live, rq.sc, &out, &failed, &n_failed, &e);
		CHECK((r == 0) == (out != NULL));
		model_free(out);
		free(failed);
	}
	codec_whatif_req_clear(&rq);
}

static void
sweep(const char *t, size_t n)
{
	struct sweep_req rq;
	struct err e = { 0 };
	char *params;

	if (codec_sweep_decode(t, n, &rq, &e) != 0)
		return;
	params = codec_sweep_params(&rq);
	CHECK(params != NULL);
	free(params);
}

static const struct {
	uint8_t tag;
	void (*fn)(const char *, size_t);
} decoders[] = {
	{ 'T', topology },
	{ 'M', matrix },
	{ 'P', policy },
	{ 'L', link_patch },
	{ 'W', whatif },
	{ 'S', sweep },
};

#define N_DECODERS	(sizeof(decoders) / sizeof(decoders[0]))

int
LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
	size_t i, k;

	if (size == 0)
		return 0;
	log_set_level(LOG_LVL_ERR);
	k = data[0] % N_DECODERS;
	for (i = 0; i < N_DECODERS; i++)
		if (decoders[i].tag == data[0])
			k = i;
	decoders[k].fn((const char *)data + 1, size - 1);
	return 0;
}
