/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Unit tests of the API codecs: strict decoding, encoding, plan rendering. */

/*
 * Expected values come from the inputs written here by hand: each bad
 * input names the member a person would have to fix, and the test checks
 * that exactly that path comes back in err.where.  Plan rendering is
 * checked on a plan built by hand, whose JSON is written out below.
 */

#include <stdlib.h>
#include <string.h>

#include "../../tap.h"
#include "../../../api/codec_model.h"
#include "../../../api/codec_plan.h"
#include "../../../daemon/base/err.h"
#include "../../../daemon/base/xalloc.h"
#include "../../../daemon/engine/model.h"
#include "../../../daemon/engine/plan.h"
#include "../../../storage/db.h"

#define TOPO_OK	"{\"nodes\":[{\"id\":\"A\",\"name\":\"Alder\",\"lat\":1.5," \
	"\"lon\":-2.25},{\"id\":\"B\"},{\"id\":\"C\"}],\"links\":[{\"id\":" \
	"\"L1\",\"a\":\"A\",\"b\":\"B\",\"capacity_bps\":1e10,\"te_metric\":" \
	"10},{\"id\":\"L2\",\"a\":\"B\",\"b\":\"C\",\"capacity_bps\":" \
	"2500000000,\"te_metric\":1.5,\"state\":\"down\"}]}"

/* Decodes a topology from s; returns the code, detail in *e. */
static int
topo(const char *s, struct err *e)
{
	struct model *m = NULL;
	int r;

	err_clear(e);
	r = codec_topology_decode(s, strlen(s), &m, e);
	if ((r == 0) != (m != NULL))
		return 99;	/* a result must come back exactly on success */
	model_free(m);
	return r;
}

static int
matrix(const char *s, struct err *e)
{
	struct matrix *mx = NULL;
	int r;

	err_clear(e);
	r = codec_matrix_decode(s, strlen(s), "tm1", &mx, e);
	if ((r == 0) != (mx != NULL))
		return 99;
	matrix_free(mx);
	return r;
}

static int
policy(const char *s, struct err *e)
{
	struct policy p;
	int r;

	memset(&p, 0, sizeof(p));
	err_clear(e);
	r = codec_policy_decode(s, strlen(s), &p, e);
	if (r == 0)
		policy_clear(&p);
	return r;
}

static int
patch(const char *s, struct err *e)
{
	struct link_patch lp;

	err_clear(e);
	return codec_link_patch_decode(s, strlen(s), &lp, e);
}

/* One bad input: decoder fn on text must fail with code at where. */
struct bad {
	const char *name;
	int (*fn)(const char *, struct err *);
	const char *text;
	int code;
	const char *where;
};

/*
 * For text that is not JSON, where is "line:col" as jansson reports it:
 * 1-based, at the last character it read, which is the end of the bad
 * token.  The columns below are counted by hand on each text.
 */
static const struct bad bads[] = {
	{ "rejects an empty body", topo, "", ERR_INVALID, "" },
	{ "rejects broken JSON with line:col", topo,
	    "{\"nodes\": [\n  {\"id\": \"A\",}]}", ERR_INVALID, "2:14" },	/* the '}' */
	{ "rejects a NaN literal", topo,
	    "{\"nodes\":[],\"links\":[{\"capacity_bps\":NaN}]}", ERR_INVALID,
	    "1:40" },	/* NaN at 38..40 */
	{ "rejects a number that overflows a double", topo,
	    "{\"nodes\":[],\"links\":[{\"capacity_bps\":1e400}]}",
	    ERR_INVALID, "1:42" },	/* 1e400 at 38..42 */
	{ "rejects duplicate object keys", topo,
	    "{\"nodes\":[],\"nodes\":[],\"links\":[]}", ERR_INVALID, "1:19" },
	    /* the second "nodes" at 13..19 */
	{ "rejects a top-level array", topo, "[1,2]", ERR_INVALID, "" },
	{ "rejects an unknown top-level field", topo,
	    "{\"nodes\":[],\"links\":[],\"srlgs\":[]}", ERR_INVALID, "srlgs" },
	{ "rejects missing links", topo, "{\"nodes\":[]}", ERR_INVALID,
	    "links" },
	{ "rejects nodes that are not an array", topo,
	    "{\"nodes\":{},\"links\":[]}", ERR_INVALID, "nodes" },
	{ "rejects a node that is not an object", topo,
	    "{\"nodes\":[{\"id\":\"A\"},\"B\"],\"links\":[]}", ERR_INVALID,
	    "nodes[1]" },
	{ "rejects a numeric node id", topo,
	    "{\"nodes\":[{\"id\":7}],\"links\":[]}", ERR_INVALID,
	    "nodes[0].id" },
	{ "rejects an unknown node field", topo,
	    "{\"nodes\":[{\"id\":\"A\",\"colour\":\"red\"}],\"links\":[]}",
	    ERR_INVALID, "nodes[0].colour" },
	{ "rejects a duplicate node id", topo,
	    "{\"nodes\":[{\"id\":\"A\"},{\"id\":\"A\"}],\"links\":[]}",
	    ERR_INVALID, "nodes[1].id" },
	{ "rejects an empty node id", topo,
	    "{\"nodes\":[{\"id\":\"\"}],\"links\":[]}", ERR_INVALID,
	    "nodes[0].id" },
	{ "rejects a node id with a slash", topo,
	    "{\"nodes\":[{\"id\":\"a/b\"}],\"links\":[]}", ERR_INVALID,
	    "nodes[0].id" },
	{ "rejects a node id with a control character", topo,
	    "{\"nodes\":[{\"id\":\"a\\u0001\"}],\"links\":[]}", ERR_INVALID,
	    "nodes[0].id" },
	{ "rejects a NUL inside a string", topo,
	    "{\"nodes\":[{\"id\":\"a\\u0000b\"}],\"links\":[]}", ERR_INVALID,
	    "1:26" },	/* the string "a\u0000b" ends at 26 */
	{ "rejects lat without lon", topo,
	    "{\"nodes\":[{\"id\":\"A\",\"lat\":10}],\"links\":[]}",
	    ERR_INVALID, "nodes[0].lon" },
	{ "rejects a latitude beyond 90", topo,
	    "{\"nodes\":[{\"id\":\"A\",\"lat\":91,\"lon\":0}],\"links\":[]}",
	    ERR_INVALID, "nodes[0].lat" },
	{ "rejects a link to an unknown node", topo,
	    "{\"nodes\":[{\"id\":\"A\"},{\"id\":\"B\"}],\"links\":[{\"id\":"
	    "\"L1\",\"a\":\"A\",\"b\":\"Z\",\"capacity_bps\":1,"
	    "\"te_metric\":1}]}", ERR_INVALID, "links[0].b" },
	{ "rejects a self-loop link", topo,
	    "{\"nodes\":[{\"id\":\"A\"},{\"id\":\"B\"}],\"links\":[{\"id\":"
	    "\"L1\",\"a\":\"A\",\"b\":\"A\",\"capacity_bps\":1,"
	    "\"te_metric\":1}]}", ERR_INVALID, "links[0].b" },
	{ "rejects a duplicate link id", topo,
	    "{\"nodes\":[{\"id\":\"A\"},{\"id\":\"B\"}],\"links\":[{\"id\":"
	    "\"L1\",\"a\":\"A\",\"b\":\"B\",\"capacity_bps\":1,"
	    "\"te_metric\":1},{\"id\":\"L1\",\"a\":\"B\",\"b\":\"A\","
	    "\"capacity_bps\":1,\"te_metric\":1}]}", ERR_INVALID,
	    "links[1].id" },
	{ "rejects a negative capacity", topo,
	    "{\"nodes\":[{\"id\":\"A\"},{\"id\":\"B\"}],\"links\":[{\"id\":"
	    "\"L1\",\"a\":\"A\",\"b\":\"B\",\"capacity_bps\":-1,"
	    "\"te_metric\":1}]}", ERR_INVALID, "links[0].capacity_bps" },
	{ "rejects a zero capacity", topo,
	    "{\"nodes\":[{\"id\":\"A\"},{\"id\":\"B\"}],\"links\":[{\"id\":"
	    "\"L1\",\"a\":\"A\",\"b\":\"B\",\"capacity_bps\":0,"
	    "\"te_metric\":1}]}", ERR_INVALID, "links[0].capacity_bps" },
	{ "rejects a capacity above MODEL_RATE_MAX", topo,
	    "{\"nodes\":[{\"id\":\"A\"},{\"id\":\"B\"}],\"links\":[{\"id\":"
	    "\"L1\",\"a\":\"A\",\"b\":\"B\",\"capacity_bps\":1.1e15,"
	    "\"te_metric\":1}]}", ERR_INVALID, "links[0].capacity_bps" },
	{ "rejects a capacity given as a string", topo,
	    "{\"nodes\":[{\"id\":\"A\"},{\"id\":\"B\"}],\"links\":[{\"id\":"
	    "\"L1\",\"a\":\"A\",\"b\":\"B\",\"capacity_bps\":\"10G\","
	    "\"te_metric\":1}]}", ERR_INVALID, "links[0].capacity_bps" },
	{ "rejects a TE metric above MODEL_METRIC_MAX", topo,
	    "{\"nodes\":[{\"id\":\"A\"},{\"id\":\"B\"}],\"links\":[{\"id\":"
	    "\"L1\",\"a\":\"A\",\"b\":\"B\",\"capacity_bps\":1,"
	    "\"te_metric\":2e9}]}", ERR_INVALID, "links[0].te_metric" },
	{ "rejects a missing TE metric", topo,
	    "{\"nodes\":[{\"id\":\"A\"},{\"id\":\"B\"}],\"links\":[{\"id\":"
	    "\"L1\",\"a\":\"A\",\"b\":\"B\",\"capacity_bps\":1}]}",
	    ERR_INVALID, "links[0].te_metric" },
	{ "rejects an unknown link state", topo,
	    "{\"nodes\":[{\"id\":\"A\"},{\"id\":\"B\"}],\"links\":[{\"id\":"
	    "\"L1\",\"a\":\"A\",\"b\":\"B\",\"capacity_bps\":1,"
	    "\"te_metric\":1,\"state\":\"sideways\"}]}", ERR_INVALID,
	    "links[0].state" },
	{ "rejects a negative demand rate", matrix,
	    "{\"demands\":[{\"src\":\"A\",\"dst\":\"B\",\"rate_bps\":-1}]}",
	    ERR_INVALID, "demands[0].rate_bps" },
	{ "rejects a demand from a node to itself", matrix,
	    "{\"demands\":[{\"src\":\"A\",\"dst\":\"B\",\"rate_bps\":1},"
	    "{\"src\":\"A\",\"dst\":\"A\",\"rate_bps\":1}]}", ERR_INVALID,
	    "demands[1].dst" },
	{ "rejects priority 8", matrix,
	    "{\"demands\":[{\"src\":\"A\",\"dst\":\"B\",\"rate_bps\":1,"
	    "\"priority\":8}]}", ERR_INVALID, "demands[0].priority" },
	{ "rejects a fractional priority", matrix,
	    "{\"demands\":[{\"src\":\"A\",\"dst\":\"B\",\"rate_bps\":1,"
	    "\"priority\":1.5}]}", ERR_INVALID, "demands[0].priority" },
	{ "rejects a missing rate", matrix,
	    "{\"demands\":[{\"src\":\"A\",\"dst\":\"B\"}]}", ERR_INVALID,
	    "demands[0].rate_bps" },
	{ "rejects a name that differs from the path's", matrix,
	    "{\"name\":\"other\",\"demands\":[]}", ERR_INVALID, "name" },
	{ "rejects an unknown demand field", matrix,
	    "{\"demands\":[{\"src\":\"A\",\"dst\":\"B\",\"rate_bps\":1,"
	    "\"class\":\"gold\"}]}", ERR_INVALID, "demands[0].class" },
	{ "rejects an unknown objective", policy,
	    "{\"objective\":\"fast\",\"headroom\":1,\"matrix\":null}",
	    ERR_INVALID, "objective" },
	{ "rejects headroom 0", policy,
	    "{\"objective\":\"cost\",\"headroom\":0,\"matrix\":null}",
	    ERR_INVALID, "headroom" },
	{ "rejects headroom above 1", policy,
	    "{\"objective\":\"cost\",\"headroom\":1.01,\"matrix\":null}",
	    ERR_INVALID, "headroom" },
	{ "rejects a bad matrix name in a policy", policy,
	    "{\"objective\":\"cost\",\"headroom\":1,\"matrix\":\"a b\"}",
	    ERR_INVALID, "matrix" },
	{ "rejects a policy without matrix", policy,
	    "{\"objective\":\"cost\",\"headroom\":1}", ERR_INVALID, "matrix" },
	{ "rejects a negative balance tolerance", policy,
	    "{\"objective\":\"balance\",\"headroom\":1,\"matrix\":null,"
	    "\"balance_tolerance\":-1e-7}", ERR_INVALID, "balance_tolerance" },
	{ "rejects an empty link patch", patch, "{}", ERR_INVALID, "" },
	{ "rejects a patch with a bad state", patch, "{\"state\":true}",
	    ERR_INVALID, "state" },
	{ "rejects a patch with a negative capacity", patch,
	    "{\"capacity_bps\":-5}", ERR_INVALID, "capacity_bps" },
	{ "rejects an unknown patch field", patch, "{\"state\":\"up\","
	    "\"latency_us\":5}", ERR_INVALID, "latency_us" },
};

static void
test_bad_inputs(void)
{
	struct err e;
	size_t i;
	int r;

	for (i = 0; i < sizeof(bads) / sizeof(bads[0]); i++) {
		TEST_START(bads[i].name);
		r = bads[i].fn(bads[i].text, &e);
		ASSERT_INT_EQ(r, bads[i].code);
		ASSERT_INT_EQ(e.code, bads[i].code);
		ASSERT_STR_EQ(e.where, bads[i].where);
		ASSERT_TRUE(e.msg[0] != '\0');
		TEST_DONE();
	}
}

/* Returns a new text of n copies of unit between pre and post. */
static char *
repeat(const char *pre, const char *unit, const char *sep, size_t n,
    const char *post)
{
	size_t lu = strlen(unit), ls = strlen(sep), lp = strlen(pre), i;
	char *s, *p;

	s = xmalloc(lp + n * (lu + ls) + strlen(post) + 1);
	memcpy(s, pre, lp);
	p = s + lp;
	for (i = 0; i < n; i++) {
		if (i > 0) {
			memcpy(p, sep, ls);
			p += ls;
		}
		memcpy(p, unit, lu);
		p += lu;
	}
	strcpy(p, post);
	return s;
}

static void
test_limits(void)
{
	struct err e;
	char *s, id[MODEL_ID_MAX + 2];

	TEST_START("rejects nesting deeper than CODEC_DEPTH_MAX");
	s = repeat("{\"nodes\":", "[", "", CODEC_DEPTH_MAX, "");
	ASSERT_INT_EQ(topo(s, &e), ERR_INVALID);
	/* The 17th bracket: '{' at column 1, then 9 chars, '['s from 10. */
	ASSERT_STR_EQ(e.where, "1:25");
	free(s);
	TEST_DONE();

	TEST_START("accepts nesting up to CODEC_DEPTH_MAX in strings");
	s = repeat("{\"nodes\":[{\"id\":\"", "[[[[", "", 10,
	    "\"}],\"links\":[]}");
	ASSERT_INT_EQ(topo(s, &e), 0);
	free(s);
	TEST_DONE();

	TEST_START("rejects more nodes than CODEC_NODES_MAX with too_big");
	s = repeat("{\"nodes\":[", "{}", ",", CODEC_NODES_MAX + 1,
	    "],\"links\":[]}");
	ASSERT_INT_EQ(topo(s, &e), ERR_TOOBIG);
	ASSERT_STR_EQ(e.where, "nodes");
	free(s);
	TEST_DONE();

	TEST_START("accepts an id of MODEL_ID_MAX bytes, rejects one more");
	memset(id, 'x', MODEL_ID_MAX);
	id[MODEL_ID_MAX] = '\0';
	s = xasprintf("{\"nodes\":[{\"id\":\"%s\"}],\"links\":[]}", id);
	ASSERT_INT_EQ(topo(s, &e), 0);
	free(s);
	id[MODEL_ID_MAX] = 'x';
	id[MODEL_ID_MAX + 1] = '\0';
	s = xasprintf("{\"nodes\":[{\"id\":\"%s\"}],\"links\":[]}", id);
	ASSERT_INT_EQ(topo(s, &e), ERR_INVALID);
	ASSERT_STR_EQ(e.where, "nodes[0].id");
	free(s);
	TEST_DONE();

	TEST_START("reads only len bytes of a body that is not NUL-terminated");
	s = xstrdup("{\"demands\":[]}GARBAGE");
	{
		struct matrix *mx = NULL;

		err_clear(&e);
		ASSERT_INT_EQ(codec_matrix_decode(s, 14, "m", &mx, &e), 0);
		ASSERT_TRUE(mx != NULL && mx->n == 0);
		matrix_free(mx);
		ASSERT_INT_EQ(codec_matrix_decode(s, strlen(s), "m", &mx, &e),
		    ERR_INVALID);
	}
	free(s);
	TEST_DONE();

	TEST_START("checks matrix names");
	ASSERT_TRUE(codec_matrix_name_ok("peak-2024.v1_a"));
	ASSERT_TRUE(!codec_matrix_name_ok(""));
	ASSERT_TRUE(!codec_matrix_name_ok("a/b"));
	ASSERT_TRUE(!codec_matrix_name_ok("a b"));
	ASSERT_TRUE(!codec_matrix_name_ok(NULL));
	memset(id, 'm', 65);
	id[65] = '\0';
	ASSERT_TRUE(!codec_matrix_name_ok(id));
	id[64] = '\0';
	ASSERT_TRUE(codec_matrix_name_ok(id));
	TEST_DONE();
}

static void
test_good_inputs(void)
{
	struct model *m = NULL, *m2 = NULL;
	struct matrix *mx = NULL;
	struct policy p;
	struct link_patch lp;
	struct err e = { 0 };
	char *s;
	size_t len;

	TEST_START("decodes a topology with all fields");
	ASSERT_INT_EQ(codec_topology_decode(TOPO_OK, strlen(TOPO_OK), &m, &e),
	    0);
	if (m != NULL) {
		ASSERT_INT_EQ(m->n_nodes, 3);
		ASSERT_INT_EQ(m->n_links, 2);
		ASSERT_STR_EQ(m->nodes[0].name, "Alder");
		ASSERT_TRUE(m->nodes[0].has_coords);
		ASSERT_DBL_NEAR(m->nodes[0].lat, 1.5, 0);
		ASSERT_DBL_NEAR(m->nodes[0].lon, -2.25, 0);
		ASSERT_TRUE(!m->nodes[1].has_coords);
		ASSERT_INT_EQ(m->links[1].a, 1);
		ASSERT_INT_EQ(m->links[1].b, 2);
		ASSERT_DBL_NEAR(m->links[0].capacity_bps, 1e10, 0);
		ASSERT_DBL_NEAR(m->links[1].te_metric, 1.5, 0);
		ASSERT_TRUE(m->links[0].up);
		ASSERT_TRUE(!m->links[1].up);
	}
	TEST_DONE();

	TEST_START("encodes a topology that decodes to the same model");
	s = m != NULL ? codec_topology_encode(m, &len) : NULL;
	ASSERT_TRUE(s != NULL);
	if (s != NULL) {
		ASSERT_INT_EQ(len, strlen(s));
		ASSERT_INT_EQ(codec_topology_decode(s, len, &m2, &e), 0);
		ASSERT_TRUE(m2 != NULL && m2->n_links == 2 &&
		    m2->links[1].capacity_bps == 2.5e9 && !m2->links[1].up &&
		    m2->nodes[0].lon == -2.25);
		ASSERT_TRUE(strstr(s, "\"capacity_bps\":10000000000.0") !=
		    NULL);
	}
	free(s);
	TEST_DONE();

	TEST_START("encodes one link");
	s = m != NULL ? codec_link_encode(m, 1, &len) : NULL;
	ASSERT_STR_EQ(s, "{\"id\":\"L2\",\"a\":\"B\",\"b\":\"C\","
	    "\"capacity_bps\":2500000000.0,\"te_metric\":1.5,"
	    "\"state\":\"down\",\"srlgs\":[]}");
	free(s);
	TEST_DONE();

	TEST_START("decodes a matrix with default priority");
	s = "{\"name\":\"tm1\",\"demands\":[{\"src\":\"A\",\"dst\":\"C\","
	    "\"rate_bps\":1e9},{\"src\":\"C\",\"dst\":\"A\",\"rate_bps\":0,"
	    "\"priority\":7}]}";
	ASSERT_INT_EQ(codec_matrix_decode(s, strlen(s), "tm1", &mx, &e), 0);
	if (mx != NULL) {
		ASSERT_INT_EQ(mx->n, 2);
		ASSERT_STR_EQ(mx->entries[0].dst, "C");
		ASSERT_INT_EQ(mx->entries[0].priority, 0);
		ASSERT_INT_EQ(mx->entries[1].priority, 7);
		s = codec_matrix_encode(mx, &len);
		ASSERT_STR_EQ(s, "{\"name\":\"tm1\",\"demands\":[{\"src\":\"A\","
		    "\"dst\":\"C\",\"rate_bps\":1000000000.0,\"priority\":0},"
		    "{\"src\":\"C\",\"dst\":\"A\",\"rate_bps\":0.0,"
		    "\"priority\":7}]}");
		free(s);
	}
	TEST_DONE();

	TEST_START("decodes and encodes a policy");
	memset(&p, 0, sizeof(p));
	s = "{\"objective\":\"balance\",\"headroom\":0.8,\"matrix\":\"peak\","
	    "\"balance_tolerance\":0.001}";
	ASSERT_INT_EQ(codec_policy_decode(s, strlen(s), &p, &e), 0);
	ASSERT_INT_EQ(p.objective, OBJ_BALANCE);
	ASSERT_DBL_NEAR(p.headroom, 0.8, 0);
	ASSERT_STR_EQ(p.matrix, "peak");
	ASSERT_DBL_NEAR(p.balance_tol, 0.001, 0);
	/* Fields not given keep policy_default()'s values. */
	ASSERT_INT_EQ(p.formulation, FORM_PATH);
	ASSERT_DBL_NEAR(p.gap_target, 1e-7, 0);
	ASSERT_TRUE(!p.keep_paths);
	s = codec_policy_encode(&p, &len);
	ASSERT_STR_EQ(s, "{\"objective\":\"balance\",\"headroom\":0.80000000000"
	    "000004,\"matrix\":\"peak\",\"balance_tolerance\":0.001,"
	    "\"formulation\":\"path\",\"gap_target\":9.9999999999999995e-8,"
	    "\"keep_paths\":false,\"keep_paths_tolerance\":0.001}");
	free(s);
	policy_clear(&p);
	TEST_DONE();

	TEST_START("decodes the solver fields of a policy");
	memset(&p, 0, sizeof(p));
	s = "{\"objective\":\"congestion\",\"headroom\":1,\"matrix\":null,"
	    "\"formulation\":\"arc\",\"gap_target\":0.01,"
	    "\"keep_paths\":true,\"keep_paths_tolerance\":0.05}";
	ASSERT_INT_EQ(codec_policy_decode(s, strlen(s), &p, &e), 0);
	ASSERT_INT_EQ(p.objective, OBJ_CONGESTION);
	ASSERT_INT_EQ(p.formulation, FORM_ARC);
	ASSERT_DBL_NEAR(p.gap_target, 0.01, 0);
	ASSERT_TRUE(p.keep_paths);
	ASSERT_DBL_NEAR(p.keep_paths_tol, 0.05, 0);
	policy_clear(&p);
	TEST_DONE();

	TEST_START("rejects bad solver fields of a policy");
	{
		static const struct {
			const char *text, *where;
		} bad[] = {
			{ "{\"objective\":\"fastest\",\"headroom\":1,"
			    "\"matrix\":null}", "objective" },
			{ "{\"objective\":\"cost\",\"headroom\":1,"
			    "\"matrix\":null,\"formulation\":\"tree\"}",
			    "formulation" },
			{ "{\"objective\":\"cost\",\"headroom\":1,"
			    "\"matrix\":null,\"gap_target\":0.9}",
			    "gap_target" },
			{ "{\"objective\":\"cost\",\"headroom\":1,"
			    "\"matrix\":null,\"keep_paths\":1}", "keep_paths" },
			{ "{\"objective\":\"cost\",\"headroom\":1,"
			    "\"matrix\":null,\"keep_paths_tolerance\":-1}",
			    "keep_paths_tolerance" },
		};
		size_t i;

		for (i = 0; i < sizeof(bad) / sizeof(bad[0]); i++) {
			err_clear(&e);
			memset(&p, 0, sizeof(p));
			ASSERT_INT_EQ(codec_policy_decode(bad[i].text,
			    strlen(bad[i].text), &p, &e), ERR_INVALID);
			ASSERT_STR_EQ(e.where, bad[i].where);
		}
	}
	TEST_DONE();

	TEST_START("decodes a link patch");
	s = "{\"state\":\"down\",\"te_metric\":20}";
	ASSERT_INT_EQ(codec_link_patch_decode(s, strlen(s), &lp, &e), 0);
	ASSERT_TRUE(lp.has_up && !lp.up && lp.has_metric && !lp.has_capacity);
	ASSERT_DBL_NEAR(lp.te_metric, 20, 0);
	TEST_DONE();

	TEST_START("encodes the matrix list");
	{
		struct db_name names[2] = {
			{ "a", 3, 1.5e9 }, { "b", 0, 0 },
		};

		s = codec_matrices_encode(names, 2, &len);
		ASSERT_STR_EQ(s, "{\"matrices\":[{\"name\":\"a\",\"demands\":3,"
		    "\"total_bps\":1500000000.0},{\"name\":\"b\",\"demands\":0,"
		    "\"total_bps\":0.0}]}");
		free(s);
	}
	TEST_DONE();

	matrix_free(mx);
	model_free(m);
	model_free(m2);
}

/*
 * A hand-made plan on the line A - B - C (L1 = A-B, L2 = B-C, 10 Gbit/s
 * each) with one demand A -> C of 4 Gbit/s carried on A-B-C: arcs 0 (L1
 * a->b) and 2 (L2 a->b) carry 4e9, utilisation 0.4.
 */
static void
test_plan_render(void)
{
	struct model *m = model_new();
	struct plan *p = xcalloc(1, sizeof(*p));
	struct err e = { 0 };
	char *s = NULL, *rt = NULL, *ld = NULL;
	size_t slen, rlen, llen, i;
	int r;

	TEST_START("renders a plan's summary, routes and loads");
	model_add_node(m, "A", NULL, NULL, "n", &e);
	model_add_node(m, "B", NULL, NULL, "n", &e);
	model_add_node(m, "C", NULL, NULL, "n", &e);
	model_add_link(m, "L1", "A", "B", 1e10, 1, true, "l", &e);
	model_add_link(m, "L2", "B", "C", 1e10, 1, true, "l", &e);
	model_add_demand(m, "A", "C", 4e9, 0, "d", &e);
	m->revision = 7;
	p->status = PLAN_OPTIMAL;
	p->objective = OBJ_COST;
	p->max_util = 0.4;
	p->total_cost = 8e9;
	p->demand_bps = p->carried_bps = 4e9;
	p->model_revision = 7;
	p->n_routes = 1;
	p->routes = xcalloc(1, sizeof(*p->routes));
	p->routes[0].carried_bps = 4e9;
	p->routes[0].n_paths = 1;
	p->routes[0].paths = xcalloc(1, sizeof(struct plan_path));
	p->routes[0].paths[0].rate_bps = 4e9;
	p->routes[0].paths[0].n_arcs = 2;
	p->routes[0].paths[0].arcs = xcalloc(2, sizeof(size_t));
	p->routes[0].paths[0].arcs[0] = 0;
	p->routes[0].paths[0].arcs[1] = 2;
	p->n_arcs = 4;
	p->arcs = xcalloc(4, sizeof(*p->arcs));
	for (i = 0; i < 4; i++) {
		p->arcs[i].capacity_bps = 1e10;
		p->arcs[i].headroom_bps = 1e10;
	}
	p->arcs[0].load_bps = p->arcs[2].load_bps = 4e9;
	p->arcs[0].util = p->arcs[2].util = 0.4;
	p->arcs[0].headroom_bps = p->arcs[2].headroom_bps = 6e9;
	p->n_stages = 1;
	snprintf(p->stages[0].name, sizeof(p->stages[0].name), "cost");
	p->stages[0].objective = 0.8;
	p->stages[0].iterations = 3;
	p->stages[0].lp_objective = 0.25;
	p->congestion = 2.5e9;
	p->moved_bps = -1;	/* no previous plan: rendered as null */
	r = codec_plan_render(m, p, 12, &s, &slen, &rt, &rlen, &ld, &llen);
	ASSERT_INT_EQ(r, 0);
	ASSERT_STR_EQ(s, "{\"revision\":12,\"model_revision\":7,\"status\":"
	    "\"optimal\",\"objective\":\"cost\",\"matrix\":null,"
	    "\"max_utilization\":0.40000000000000002,\"total_cost\":"
	    "8000000000.0,\"demand_bps\":4000000000.0,\"carried_bps\":"
	    "4000000000.0,\"unserved_bps\":0.0,\"unserved_by_priority\":"
	    "{\"0\":0.0,\"1\":0.0,\"2\":0.0,\"3\":0.0,\"4\":0.0,\"5\":0.0,"
	    "\"6\":0.0,\"7\":0.0},\"solve_ms\":0.0,\"saturated_links\":[],"
	    "\"stages\":[{\"name\":\"cost\",\"objective\":0.80000000000000004,"
	    "\"lp_objective\":0.25,\"iterations\":3,\"ms\":0.0}],"
	    "\"congestion\":2500000000.0,\"formulation\":\"arc\",\"gap\":0.0,"
	    "\"bound\":0.0,\"iterations\":3,\"cg_rounds\":0,\"columns\":0,"
	    "\"warm\":false,\"moved_bps\":null,"
	    "\"unplaced_demands\":0,\"unplaced_bps\":0.0}");
	ASSERT_STR_EQ(rt, "{\"revision\":12,\"model_revision\":7,\"routes\":"
	    "[{\"src\":\"A\",\"dst\":\"C\",\"priority\":0,\"rate_bps\":"
	    "4000000000.0,\"carried_bps\":4000000000.0,\"unserved_bps\":0.0,"
	    "\"paths\":[{\"rate_bps\":4000000000.0,\"nodes\":[\"A\",\"B\","
	    "\"C\"],\"links\":[\"L1\",\"L2\"]}]}]}");
	ASSERT_TRUE(ld != NULL && strstr(ld, "{\"id\":\"L2\",\"a\":\"B\","
	    "\"b\":\"C\",\"state\":\"up\",\"capacity_bps\":10000000000.0,"
	    "\"te_metric\":1.0,\"a_to_b\":{\"load_bps\":4000000000.0,"
	    "\"utilization\":0.40000000000000002,\"headroom_bps\":"
	    "6000000000.0,\"shadow_price\":0.0,\"saturated\":false},"
	    "\"b_to_a\":{\"load_bps\":0.0,") != NULL);
	ASSERT_INT_EQ(slen, s != NULL ? strlen(s) : 0);
	free(s);
	free(rt);
	free(ld);
	TEST_DONE();

	TEST_START("refuses a plan that does not fit its model");
	p->n_arcs = 2;
	r = codec_plan_render(m, p, 12, &s, &slen, &rt, &rlen, &ld, &llen);
	ASSERT_INT_EQ(r, ERR_INTERNAL);
	ASSERT_TRUE(s == NULL && rt == NULL && ld == NULL);
	p->n_arcs = 4;
	p->routes[0].paths[0].arcs[1] = 9;
	r = codec_plan_render(m, p, 12, &s, &slen, &rt, &rlen, &ld, &llen);
	ASSERT_INT_EQ(r, ERR_INTERNAL);
	p->routes[0].paths[0].arcs[1] = 2;
	TEST_DONE();

	/*
	 * Two demands of 1 and 2 Gbit/s the topology cannot place (as
	 * storage would count them): 2 demands, 3e9 bit/s, one warning.
	 */
	TEST_START("reports unplaced demands with a warning");
	m->policy.matrix = xstrdup("peak");
	m->n_unplaced = 2;
	m->unplaced_bps = 3e9;
	r = codec_plan_render(m, p, 12, &s, &slen, &rt, &rlen, &ld, &llen);
	ASSERT_INT_EQ(r, 0);
	ASSERT_TRUE(s != NULL && strstr(s, "\"unplaced_demands\":2,"
	    "\"unplaced_bps\":3000000000.0,\"warnings\":[\"2 demands of "
	    "matrix \\\"peak\\\" name nodes not in the topology and are not "
	    "planned\"]}") != NULL);
	/* The planned demand is still the only route. */
	ASSERT_TRUE(rt != NULL && strstr(rt, "\"routes\":[{\"src\":\"A\","
	    "\"dst\":\"C\"") != NULL);
	free(s);
	free(rt);
	free(ld);
	m->n_unplaced = 0;
	m->unplaced_bps = 0;
	free(m->policy.matrix);
	m->policy.matrix = NULL;
	TEST_DONE();

	TEST_START("renders a failed solve as status failed");
	r = codec_plan_render(m, NULL, 13, &s, &slen, &rt, &rlen, &ld, &llen);
	ASSERT_INT_EQ(r, 0);
	ASSERT_STR_EQ(s, "{\"revision\":13,\"model_revision\":7,\"status\":"
	    "\"failed\",\"objective\":\"cost\",\"matrix\":null,"
	    "\"unplaced_demands\":0,\"unplaced_bps\":0.0}");
	ASSERT_STR_EQ(rt, "{\"revision\":13,\"model_revision\":7,"
	    "\"routes\":[]}");
	free(s);
	free(rt);
	free(ld);
	TEST_DONE();

	plan_free(p);
	model_free(m);
}

int
main(void)
{
	test_bad_inputs();
	test_limits();
	test_good_inputs();
	test_plan_render();
	return tap_finish();
}
