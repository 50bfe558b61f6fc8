/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Unit tests for the model snapshot file (api/codec_snapshot.c). */

/*
 * The expected values are read off the literal snapshot texts below (a
 * three-node line A-B-C and a matrix with one entry naming a node the
 * topology lacks), not derived from the code; the refusals' where paths
 * follow docs/api.md's convention (the JSON path of the member).
 */

#include <stdbool.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "../../tap.h"
#include "../../../api/codec_snapshot.h"
#include "../../../daemon/base/err.h"
#include "../../../daemon/base/xalloc.h"
#include "../../../daemon/engine/model.h"

#define TOPO	"{\"nodes\":[{\"id\":\"A\"},{\"id\":\"B\"},{\"id\":\"C\"}]," \
		"\"links\":[{\"id\":\"L1\",\"a\":\"A\",\"b\":\"B\"," \
		"\"capacity_bps\":1e10,\"te_metric\":1,\"srlgs\":[7]}," \
		"{\"id\":\"L2\",\"a\":\"B\",\"b\":\"C\",\"capacity_bps\":1e10," \
		"\"te_metric\":2,\"state\":\"down\"}]}"
#define POLICY	"{\"objective\":\"balance\",\"headroom\":0.9,\"matrix\":\"m\"}"
#define MATRIX	"{\"name\":\"m\",\"demands\":[{\"src\":\"A\",\"dst\":\"C\"," \
		"\"rate_bps\":1e9},{\"src\":\"A\",\"dst\":\"X\"," \
		"\"rate_bps\":5e8}]}"
#define PLAN	"{\"revision\":4,\"model_revision\":9,\"status\":\"partial\"," \
		"\"formulation\":\"path\",\"max_utilization\":0.5," \
		"\"carried_bps\":0,\"unserved_bps\":1e9,\"total_cost\":0," \
		"\"solve_ms\":1.5}"

/* A snapshot text with member key replaced by value (NULL: left out). */
static char *
text_with(const char *key, const char *value)
{
	static const char *const keys[] = { "format", "version",
		"model_revision", "plan_revision", "topology", "policy",
		"matrix", "plan", NULL };
	const char *vals[] = { "\"weft-snapshot\"", "1", "9", "4", TOPO,
		POLICY, MATRIX, PLAN };
	char *t = xmalloc(8192);
	size_t i, n = 0;

	n += (size_t)snprintf(t + n, 8192 - n, "{");
	for (i = 0; keys[i] != NULL; i++) {
		const char *v = key != NULL && strcmp(key, keys[i]) == 0 ?
		    value : vals[i];

		if (v == NULL)
			continue;
		n += (size_t)snprintf(t + n, 8192 - n, "%s\"%s\":%s",
		    n > 1 ? "," : "", keys[i], v);
	}
	if (key != NULL && strcmp(key, "extra") == 0)
		n += (size_t)snprintf(t + n, 8192 - n, ",\"extra\":1");
	snprintf(t + n, 8192 - n, "}");
	return t;
}

static void
test_decode(void)
{
	struct snapshot s;
	struct err e = { 0 };
	char *t = text_with(NULL, NULL);
	const struct model *m;

	TEST_START("decodes a snapshot: model, revisions, plan figures");
	ASSERT_INT_EQ(codec_snapshot_decode(t, strlen(t), &s, &e), 0);
	m = s.model;
	ASSERT_TRUE(m != NULL);
	if (m != NULL) {
		ASSERT_INT_EQ((int)m->n_nodes, 3);
		ASSERT_INT_EQ((int)m->n_links, 2);
		ASSERT_TRUE(m->links[0].up && !m->links[1].up);
		ASSERT_INT_EQ((int)m->links[0].n_srlgs, 1);
		ASSERT_DBL_NEAR(m->links[1].te_metric, 2, 0);
		ASSERT_INT_EQ((int)m->policy.objective, (int)OBJ_BALANCE);
		ASSERT_DBL_NEAR(m->policy.headroom, 0.9, 0);
		ASSERT_INT_EQ((int)m->revision, 9);
	}
	ASSERT_INT_EQ((int)s.model_revision, 9);
	ASSERT_INT_EQ((int)s.plan_revision, 4);
	ASSERT_STR_EQ(s.plan_status, "partial");
	ASSERT_STR_EQ(s.formulation, "path");
	ASSERT_DBL_NEAR(s.max_util, 0.5, 0);
	ASSERT_DBL_NEAR(s.unserved_bps, 1e9, 0);
	TEST_DONE();

	TEST_START("places the matrix as the daemon does: X is unplaced");
	if (m != NULL) {
		ASSERT_INT_EQ((int)m->n_demands, 1);
		ASSERT_INT_EQ((int)m->demands[0].src, 0);
		ASSERT_INT_EQ((int)m->demands[0].dst, 2);
		ASSERT_DBL_NEAR(m->demands[0].rate_bps, 1e9, 0);
		ASSERT_INT_EQ((int)m->n_unplaced, 1);
		ASSERT_DBL_NEAR(m->unplaced_bps, 5e8, 0);
	}
	TEST_DONE();
	codec_snapshot_clear(&s);
	free(t);
}

static void
test_refusals(void)
{
	static const struct {
		const char *name, *key, *value, *where;
	} bad[] = {
		{ "rejects another version", "version", "2", "version" },
		{ "rejects another format", "format", "\"x\"", "format" },
		{ "rejects an unknown member", "extra", "1", "extra" },
		{ "requires the matrix member", "matrix", NULL, "matrix" },
		{ "rejects a matrix not the policy's", "matrix",
		    "{\"name\":\"n\",\"demands\":[]}", "matrix.name" },
		{ "rejects a matrix when the policy names none", "policy",
		    "{\"objective\":\"cost\",\"headroom\":1,\"matrix\":null}",
		    "matrix" },
		{ "rejects a link to an unknown node, with its path",
		    "topology", "{\"nodes\":[{\"id\":\"A\"}],\"links\":[{"
		    "\"id\":\"L\",\"a\":\"A\",\"b\":\"Q\",\"capacity_bps\":1,"
		    "\"te_metric\":1}]}", "topology.links[0].b" },
		{ "rejects a revision 0", "model_revision", "0",
		    "model_revision" },
		{ "rejects a failed plan", "plan", "{\"revision\":4,"
		    "\"model_revision\":9,\"status\":\"failed\","
		    "\"formulation\":\"path\",\"max_utilization\":0,"
		    "\"carried_bps\":0,\"unserved_bps\":0,\"total_cost\":0}",
		    "plan.status" },
		{ "rejects a plan of another revision", "plan_revision", "5",
		    "plan.revision" },
		{ "rejects a plan of another model revision",
		    "model_revision", "8", "plan.model_revision" },
		{ "requires the plan's max_utilization", "plan",
		    "{\"revision\":4,\"model_revision\":9,\"status\":"
		    "\"optimal\",\"formulation\":\"path\",\"carried_bps\":0,"
		    "\"unserved_bps\":0,\"total_cost\":0}",
		    "plan.max_utilization" },
	};
	struct snapshot s;
	struct err e;
	size_t i;
	char *t;

	for (i = 0; i < sizeof(bad) / sizeof(bad[0]); i++) {
		TEST_START(bad[i].name);
		t = text_with(bad[i].key, bad[i].value);
		memset(&e, 0, sizeof(e));
		ASSERT_INT_EQ(codec_snapshot_decode(t, strlen(t), &s, &e),
		    ERR_INVALID);
		ASSERT_STR_EQ(e.where, bad[i].where);
		ASSERT_TRUE(s.model == NULL);
		free(t);
		TEST_DONE();
	}
	TEST_START("rejects text that is not JSON at line:column");
	memset(&e, 0, sizeof(e));
	ASSERT_INT_EQ(codec_snapshot_decode("{\"format\":", 11, &s, &e),
	    ERR_INVALID);
	ASSERT_TRUE(strchr(e.where, ':') != NULL);
	TEST_DONE();
}

static void
test_round_trip(void)
{
	struct snapshot s, s2;
	struct err e = { 0 };
	char *t = text_with(NULL, NULL), *t2;
	size_t len = 0;

	TEST_START("an encoded snapshot decodes to the same model");
	ASSERT_INT_EQ(codec_snapshot_decode(t, strlen(t), &s, &e), 0);
	t2 = s.model != NULL ? codec_snapshot_encode(s.model, PLAN, 9, 4,
	    &len) : NULL;
	ASSERT_TRUE(t2 != NULL && len == strlen(t2));
	memset(&e, 0, sizeof(e));
	ASSERT_INT_EQ(t2 != NULL ? codec_snapshot_decode(t2, len, &s2, &e) :
	    -1, 0);
	if (t2 != NULL && s2.model != NULL) {
		ASSERT_INT_EQ((int)s2.model->n_links, 2);
		ASSERT_TRUE(!s2.model->links[1].up);
		ASSERT_STR_EQ(s2.model->links[1].id, "L2");
		/* The encoder writes the demands as planned: X is gone. */
		ASSERT_INT_EQ((int)s2.model->n_demands, 1);
		ASSERT_INT_EQ((int)s2.model->n_unplaced, 0);
		ASSERT_DBL_NEAR(s2.model->demands[0].rate_bps, 1e9, 0);
		ASSERT_STR_EQ(s2.model->policy.matrix, "m");
		ASSERT_DBL_NEAR(s2.total_cost, 0, 0);
		codec_snapshot_clear(&s2);
	}
	free(t2);
	codec_snapshot_clear(&s);
	free(t);
	TEST_DONE();

	/* The decoder refuses a matrix when the policy names none. */
	TEST_START("a policy with no matrix encodes matrix as null");
	t = xmalloc(8192);
	snprintf(t, 8192, "{\"format\":\"weft-snapshot\",\"version\":1,"
	    "\"model_revision\":9,\"plan_revision\":4,\"topology\":%s,"
	    "\"policy\":{\"objective\":\"cost\",\"headroom\":1,"
	    "\"matrix\":null},\"matrix\":null,\"plan\":%s}", TOPO, PLAN);
	memset(&e, 0, sizeof(e));
	ASSERT_INT_EQ(codec_snapshot_decode(t, strlen(t), &s, &e), 0);
	t2 = s.model != NULL ? codec_snapshot_encode(s.model, PLAN, 9, 4,
	    &len) : NULL;
	ASSERT_INT_EQ(s.model != NULL ? (int)s.model->n_demands : -1, 0);
	codec_snapshot_clear(&s);
	memset(&e, 0, sizeof(e));
	ASSERT_INT_EQ(t2 != NULL ? codec_snapshot_decode(t2, len, &s, &e) :
	    -1, 0);
	ASSERT_STR_EQ(e.where, "");
	free(t2);
	codec_snapshot_clear(&s);
	free(t);
	TEST_DONE();
}

int
main(void)
{
	test_decode();
	test_refusals();
	test_round_trip();
	return tap_finish();
}
