/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Unit tests of the model: building, id lookup, copies, matrices. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "../../tap.h"
#include "../../../daemon/engine/model.h"
#include "../../../daemon/base/err.h"
#include "../../../daemon/base/xalloc.h"

/* A, B, C with links ab and bc. */
static struct model *
three(void)
{
	struct model *m = model_new();

	model_add_node(m, "A", "Alpha", NULL, "nodes[0]", NULL);
	model_add_node(m, "B", NULL, NULL, "nodes[1]", NULL);
	model_add_node(m, "C", NULL, NULL, "nodes[2]", NULL);
	model_add_link(m, "ab", "A", "B", 1e9, 10, true, "links[0]", NULL);
	model_add_link(m, "bc", "B", "C", 1e10, 1, false, "links[1]", NULL);
	return m;
}

static void
test_nodes(void)
{
	struct model *m;
	struct err e;
	size_t idx = 99;
	char longid[MODEL_ID_MAX + 2];

	TEST_START("adds nodes and finds them by id");
	m = model_new();
	ASSERT_INT_EQ(model_add_node(m, "A", "Alpha", &idx, "nodes[0]", NULL),
	    0);
	ASSERT_INT_EQ(idx, 0);
	ASSERT_INT_EQ(model_add_node(m, "B", NULL, &idx, "nodes[1]", NULL), 0);
	ASSERT_INT_EQ(idx, 1);
	ASSERT_INT_EQ(model_find_node(m, "A"), 0);
	ASSERT_INT_EQ(model_find_node(m, "B"), 1);
	ASSERT_INT_EQ(model_find_node(m, "Z"), -1);
	ASSERT_STR_EQ(m->nodes[0].name, "Alpha");
	ASSERT_TRUE(m->nodes[1].name == NULL);
	TEST_DONE();

	TEST_START("rejects a duplicate node id as invalid, naming the field");
	err_clear(&e);
	ASSERT_INT_EQ(model_add_node(m, "A", NULL, NULL, "nodes[2]", &e),
	    ERR_INVALID);
	ASSERT_STR_EQ(e.where, "nodes[2].id");
	ASSERT_INT_EQ(m->n_nodes, 2);
	TEST_DONE();

	TEST_START("rejects empty, over-long and control-character ids");
	err_clear(&e);
	ASSERT_INT_EQ(model_add_node(m, "", NULL, NULL, "nodes[2]", &e),
	    ERR_INVALID);
	ASSERT_STR_EQ(e.where, "nodes[2].id");
	memset(longid, 'x', sizeof(longid) - 1);
	longid[sizeof(longid) - 1] = '\0';
	ASSERT_INT_EQ(model_add_node(m, longid, NULL, NULL, "n", NULL),
	    ERR_INVALID);
	longid[MODEL_ID_MAX] = '\0';
	ASSERT_INT_EQ(model_add_node(m, longid, NULL, NULL, "n", NULL), 0);
	ASSERT_INT_EQ(model_add_node(m, "a\nb", NULL, NULL, "n", NULL),
	    ERR_INVALID);
	ASSERT_INT_EQ(m->n_nodes, 3);
	TEST_DONE();
	model_free(m);
}

static void
test_many_nodes(void)
{
	struct model *m = model_new();
	char id[32];
	int i, bad = 0;

	TEST_START("finds each of 5000 nodes after the index has grown");
	for (i = 0; i < 5000; i++) {
		snprintf(id, sizeof(id), "node-%d", i);
		if (model_add_node(m, id, NULL, NULL, "n", NULL) != 0)
			bad++;
	}
	for (i = 0; i < 5000; i++) {
		snprintf(id, sizeof(id), "node-%d", i);
		if (model_find_node(m, id) != i)
			bad++;
	}
	ASSERT_INT_EQ(bad, 0);
	ASSERT_INT_EQ(model_find_node(m, "node-5000"), -1);
	TEST_DONE();
	model_free(m);
}

static void
test_links(void)
{
	struct model *m = three();
	struct err e;

	TEST_START("adds links between node ids and finds them");
	ASSERT_INT_EQ(m->n_links, 2);
	ASSERT_INT_EQ(m->links[0].a, 0);
	ASSERT_INT_EQ(m->links[0].b, 1);
	ASSERT_DBL_NEAR(m->links[1].capacity_bps, 1e10, 0);
	ASSERT_TRUE(!m->links[1].up);
	ASSERT_INT_EQ(model_find_link(m, "bc"), 1);
	ASSERT_INT_EQ(model_find_link(m, "ca"), -1);
	TEST_DONE();

	TEST_START("rejects a link to an unknown node under <where>.b");
	err_clear(&e);
	ASSERT_INT_EQ(model_add_link(m, "cx", "C", "X", 1e9, 1, true,
	    "links[3]", &e), ERR_INVALID);
	ASSERT_STR_EQ(e.where, "links[3].b");
	TEST_DONE();

	TEST_START("rejects a link with equal ends, bad capacity or metric");
	err_clear(&e);
	ASSERT_INT_EQ(model_add_link(m, "aa", "A", "A", 1e9, 1, true, "l",
	    &e), ERR_INVALID);
	ASSERT_STR_EQ(e.where, "l.b");
	err_clear(&e);
	ASSERT_INT_EQ(model_add_link(m, "ca", "C", "A", NAN, 1, true, "l",
	    &e), ERR_INVALID);
	ASSERT_STR_EQ(e.where, "l.capacity_bps");
	ASSERT_INT_EQ(model_add_link(m, "ca", "C", "A", 0, 1, true, "l",
	    NULL), ERR_INVALID);
	ASSERT_INT_EQ(model_add_link(m, "ca", "C", "A", 2e15, 1, true, "l",
	    NULL), ERR_INVALID);
	err_clear(&e);
	ASSERT_INT_EQ(model_add_link(m, "ca", "C", "A", 1e9, 0, true, "l",
	    &e), ERR_INVALID);
	ASSERT_STR_EQ(e.where, "l.te_metric");
	ASSERT_INT_EQ(model_add_link(m, "ca", "C", "A", 1e9, INFINITY, true,
	    "l", NULL), ERR_INVALID);
	ASSERT_INT_EQ(m->n_links, 2);
	TEST_DONE();

	TEST_START("rejects a duplicate link id as invalid");
	err_clear(&e);
	ASSERT_INT_EQ(model_add_link(m, "ab", "C", "A", 1e9, 1, true,
	    "links[2]", &e), ERR_INVALID);
	ASSERT_STR_EQ(e.where, "links[2].id");
	TEST_DONE();

	TEST_START("parallel links between the same nodes are kept apart");
	ASSERT_INT_EQ(model_add_link(m, "ab2", "A", "B", 1e9, 1, true, "l",
	    NULL), 0);
	ASSERT_INT_EQ(model_find_link(m, "ab2"), 2);
	TEST_DONE();
	model_free(m);
}

static void
test_demands(void)
{
	struct model *m = three();
	struct err e;

	TEST_START("adds demands by node id, duplicates kept separate");
	ASSERT_INT_EQ(model_add_demand(m, "A", "C", 5e8, 0, "d", NULL), 0);
	ASSERT_INT_EQ(model_add_demand(m, "A", "C", 1e8, 0, "d", NULL), 0);
	ASSERT_INT_EQ(model_add_demand(m, "C", "B", 0, 7, "d", NULL), 0);
	ASSERT_INT_EQ(m->n_demands, 3);
	ASSERT_INT_EQ(m->demands[2].src, 2);
	ASSERT_INT_EQ(m->demands[2].dst, 1);
	ASSERT_INT_EQ(m->demands[2].priority, 7);
	TEST_DONE();

	TEST_START("rejects bad demands with the field in where");
	err_clear(&e);
	ASSERT_INT_EQ(model_add_demand(m, "Q", "C", 1, 0, "demands[3]", &e),
	    ERR_INVALID);
	ASSERT_STR_EQ(e.where, "demands[3].src");
	err_clear(&e);
	ASSERT_INT_EQ(model_add_demand(m, "C", "C", 1, 0, "demands[3]", &e),
	    ERR_INVALID);
	ASSERT_STR_EQ(e.where, "demands[3].dst");
	err_clear(&e);
	ASSERT_INT_EQ(model_add_demand(m, "A", "C", -1, 0, "demands[3]", &e),
	    ERR_INVALID);
	ASSERT_STR_EQ(e.where, "demands[3].rate_bps");
	ASSERT_INT_EQ(model_add_demand(m, "A", "C", NAN, 0, "d", NULL),
	    ERR_INVALID);
	ASSERT_INT_EQ(model_add_demand(m, "A", "C", 2e15, 0, "d", NULL),
	    ERR_INVALID);
	err_clear(&e);
	ASSERT_INT_EQ(model_add_demand(m, "A", "C", 1, 8, "demands[3]", &e),
	    ERR_INVALID);
	ASSERT_STR_EQ(e.where, "demands[3].priority");
	ASSERT_INT_EQ(model_add_demand(m, "A", "C", 1, -1, "d", NULL),
	    ERR_INVALID);
	ASSERT_INT_EQ(m->n_demands, 3);
	TEST_DONE();

	TEST_START("clearing demands keeps topology and policy");
	m->policy.headroom = 0.8;
	model_clear_demands(m);
	ASSERT_INT_EQ(m->n_demands, 0);
	ASSERT_INT_EQ(m->n_nodes, 3);
	ASSERT_INT_EQ(m->n_links, 2);
	ASSERT_DBL_NEAR(m->policy.headroom, 0.8, 0);
	TEST_DONE();
	model_free(m);
}

static void
test_copy(void)
{
	struct model *m = three(), *c;

	model_add_demand(m, "A", "C", 5e8, 2, "d", NULL);
	m->policy.matrix = xstrdup("peak");
	m->policy.objective = OBJ_BALANCE;
	m->revision = 42;

	TEST_START("copies a model deeply, with a working index");
	c = model_copy(m);
	ASSERT_INT_EQ(c->n_nodes, 3);
	ASSERT_INT_EQ(c->n_links, 2);
	ASSERT_INT_EQ(c->n_demands, 1);
	ASSERT_TRUE(c->nodes[0].id != m->nodes[0].id);
	ASSERT_STR_EQ(c->nodes[0].name, "Alpha");
	ASSERT_STR_EQ(c->policy.matrix, "peak");
	ASSERT_TRUE(c->policy.matrix != m->policy.matrix);
	ASSERT_INT_EQ(c->policy.objective, OBJ_BALANCE);
	ASSERT_INT_EQ(c->revision, 42);
	ASSERT_INT_EQ(model_find_node(c, "C"), 2);
	ASSERT_INT_EQ(model_find_link(c, "bc"), 1);
	/* Adding to the copy leaves the original alone. */
	ASSERT_INT_EQ(model_add_node(c, "D", NULL, NULL, "n", NULL), 0);
	ASSERT_INT_EQ(model_find_node(c, "D"), 3);
	ASSERT_INT_EQ(model_find_node(m, "D"), -1);
	ASSERT_INT_EQ(m->n_nodes, 3);
	TEST_DONE();
	model_free(c);
	model_free(m);
}

static void
test_direct_fill(void)
{
	struct model *m = model_new();

	TEST_START("finds ids in arrays filled directly, then extends them");
	m->nodes = xcalloc(2, sizeof(*m->nodes));
	m->cap_nodes = m->n_nodes = 2;
	m->nodes[0].id = xstrdup("P");
	m->nodes[1].id = xstrdup("Q");
	ASSERT_INT_EQ(model_find_node(m, "Q"), 1);
	ASSERT_INT_EQ(model_find_node(m, "R"), -1);
	/* The add functions rebuild the stale index first. */
	ASSERT_INT_EQ(model_add_node(m, "P", NULL, NULL, "n", NULL),
	    ERR_INVALID);
	ASSERT_INT_EQ(model_add_node(m, "R", NULL, NULL, "n", NULL), 0);
	ASSERT_INT_EQ(model_add_link(m, "pq", "P", "Q", 1, 1, true, "l",
	    NULL), 0);
	ASSERT_INT_EQ(model_find_node(m, "R"), 2);
	ASSERT_INT_EQ(model_find_node(m, "Q"), 1);
	TEST_DONE();
	model_free(m);
}

static void
test_matrix(void)
{
	struct model *m = three();
	struct matrix *mx, *back;
	struct err e;

	TEST_START("checks matrix entries without a topology");
	mx = matrix_new("busy-hour");
	matrix_add(mx, "A", "C", 1e9, 0);
	matrix_add(mx, "B", "A", 2e9, 3);
	ASSERT_INT_EQ(matrix_check(mx, NULL), 0);
	matrix_add(mx, "C", "C", 1, 0);
	err_clear(&e);
	ASSERT_INT_EQ(matrix_check(mx, &e), ERR_INVALID);
	ASSERT_STR_EQ(e.where, "demands[2].dst");
	matrix_free(mx);
	mx = matrix_new(NULL);
	matrix_add(mx, "A", "C", 1e9, 9);
	err_clear(&e);
	ASSERT_INT_EQ(matrix_check(mx, &e), ERR_INVALID);
	ASSERT_STR_EQ(e.where, "demands[0].priority");
	matrix_free(mx);
	mx = matrix_new(NULL);
	matrix_add(mx, "", "C", 1e9, 0);
	err_clear(&e);
	ASSERT_INT_EQ(matrix_check(mx, &e), ERR_INVALID);
	ASSERT_STR_EQ(e.where, "demands[0].src");
	matrix_free(mx);
	TEST_DONE();

	TEST_START("sets a matrix on a model and reads it back");
	mx = matrix_new("busy-hour");
	matrix_add(mx, "A", "C", 1e9, 0);
	matrix_add(mx, "B", "A", 2e9, 3);
	ASSERT_INT_EQ(model_set_matrix(m, mx, NULL), 0);
	ASSERT_INT_EQ(m->n_demands, 2);
	ASSERT_INT_EQ(m->demands[1].src, 1);
	ASSERT_INT_EQ(m->demands[1].dst, 0);
	back = model_get_matrix(m, "again");
	ASSERT_STR_EQ(back->name, "again");
	ASSERT_INT_EQ(back->n, 2);
	ASSERT_STR_EQ(back->entries[1].src, "B");
	ASSERT_STR_EQ(back->entries[1].dst, "A");
	ASSERT_DBL_NEAR(back->entries[1].rate_bps, 2e9, 0);
	ASSERT_INT_EQ(back->entries[1].priority, 3);
	matrix_free(back);
	TEST_DONE();

	TEST_START("an unknown node in a matrix leaves the demands empty");
	matrix_add(mx, "A", "Nowhere", 1, 0);
	err_clear(&e);
	ASSERT_INT_EQ(model_set_matrix(m, mx, &e), ERR_INVALID);
	ASSERT_STR_EQ(e.where, "demands[2].dst");
	ASSERT_INT_EQ(m->n_demands, 0);
	TEST_DONE();
	matrix_free(mx);
	matrix_free(NULL);
	model_free(m);
}

static void
test_policy(void)
{
	struct policy p;

	TEST_START("the default policy is cost, headroom 1, tolerance 1e-7");
	policy_default(&p);
	ASSERT_INT_EQ(p.objective, OBJ_COST);
	ASSERT_DBL_NEAR(p.headroom, 1, 0);
	ASSERT_DBL_NEAR(p.balance_tol, 1e-7, 0);
	ASSERT_TRUE(p.matrix == NULL);
	p.matrix = xstrdup("x");
	policy_clear(&p);
	ASSERT_TRUE(p.matrix == NULL);
	model_free(NULL);
	TEST_DONE();
}

int
main(void)
{
	test_nodes();
	test_many_nodes();
	test_links();
	test_demands();
	test_copy();
	test_direct_fill();
	test_matrix();
	test_policy();
	return tap_finish();
}
