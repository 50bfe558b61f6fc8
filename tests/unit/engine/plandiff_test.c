/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Unit tests of the plan diff (plandiff.c) on hand-made plans. */

/*
 * Every expected number is derived by hand beside its case from the
 * definition in plandiff.h: per demand, moved = 1/2 sum over the union of
 * its old and new paths (by link-id sequence) of |old rate - new rate|.
 * The network is the four-site one of the integration tests:
 *
 *     A --ab-- B --bd-- D,   A --ac-- C --cd-- D   (all 10G)
 */

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "../../tap.h"
#include "../../../daemon/engine/plandiff.h"
#include "../../../daemon/engine/plan.h"
#include "../../../daemon/base/err.h"
#include "../../../daemon/base/xalloc.h"

/* Builds the four-site network; reversed lists nodes and links backwards. */
static struct model *
net(bool reversed)
{
	static const char *const nodes[] = { "A", "B", "C", "D" };
	static const char *const links[][3] = { { "ab", "A", "B" },
	    { "bd", "B", "D" }, { "ac", "A", "C" }, { "cd", "C", "D" } };
	struct model *m = model_new();
	size_t i, j;

	for (i = 0; i < 4; i++) {
		j = reversed ? 3 - i : i;
		if (model_add_node(m, nodes[j], NULL, NULL, "n", NULL) != 0)
			abort();
	}
	for (i = 0; i < 4; i++) {
		j = reversed ? 3 - i : i;
		/* Reversed also swaps each link's ends. */
		if (model_add_link(m, links[j][0], links[j][reversed ? 2 : 1],
		    links[j][reversed ? 1 : 2], 1e10, 1, true, "l", NULL) != 0)
			abort();
	}
	return m;
}

static void
demand(struct model *m, const char *s, const char *t, double rate, int prio)
{
	if (model_add_demand(m, s, t, rate, prio, "d", NULL) != 0)
		abort();
}

static struct plan *
plan_for(const struct model *m)
{
	struct plan *p = xcalloc(1, sizeof(*p));

	p->n_routes = m->n_demands;
	p->routes = xcalloc(m->n_demands + 1, sizeof(*p->routes));
	p->n_arcs = 2 * m->n_links;
	p->arcs = xcalloc(p->n_arcs, sizeof(*p->arcs));
	return p;
}

/* Adds a path of rate over the links of text ("ab bd") to route k. */
static void
path(const struct model *m, struct plan *p, size_t k, double rate,
    const char *text)
{
	struct plan_route *rt = &p->routes[k];
	struct plan_path *pp;
	char buf[64], *tok, *save = NULL;
	size_t at = m->demands[k].src;
	const struct link *l;
	long li;

	rt->paths = xreallocarray(rt->paths, rt->n_paths + 1,
	    sizeof(*rt->paths));
	pp = &rt->paths[rt->n_paths++];
	memset(pp, 0, sizeof(*pp));
	pp->arcs = xcalloc(8, sizeof(*pp->arcs));
	pp->rate_bps = rate;
	snprintf(buf, sizeof(buf), "%s", text);
	for (tok = strtok_r(buf, " ", &save); tok != NULL;
	    tok = strtok_r(NULL, " ", &save)) {
		if ((li = model_find_link(m, tok)) < 0)
			abort();
		l = &m->links[li];
		pp->arcs[pp->n_arcs++] = 2 * (size_t)li + (l->a == at ? 0 : 1);
		at = l->a == at ? l->b : l->a;
	}
	rt->carried_bps += rate;
	rt->unserved_bps = m->demands[k].rate_bps - rt->carried_bps;
}

static struct plandiff *
diff(const struct model *om, const struct plan *op, const struct model *nm,
    const struct plan *np)
{
	struct plandiff *d = NULL;
	struct err e;

	err_clear(&e);
	if (plandiff_compute(om, op, nm, np, &d, &e) != 0)
		printf("# plandiff_compute: %s: %s\n", e.where, e.msg);
	return d;
}

/*
 * The integration network's link-down case.  Old (cost optimum): A-B-D
 * 10G, A-C-D 5G.  New (ab down): A-C-D 10G, 5G unserved.  Union of paths:
 * ab-bd |10 - 0| + ac-cd |5 - 10| = 15, moved 7.5G; share 7.5 / max(15,
 * 10) = 0.5.
 */
static void
test_link_down(void)
{
	struct model *m = net(false);
	struct plan *o, *n;
	struct plandiff *d;

	demand(m, "A", "D", 15e9, 0);
	o = plan_for(m);
	path(m, o, 0, 10e9, "ab bd");
	path(m, o, 0, 5e9, "ac cd");
	n = plan_for(m);
	path(m, n, 0, 10e9, "ac cd");

	TEST_START("link down: 7.5G moved, half of the old carried traffic");
	d = diff(m, o, m, n);
	ASSERT_TRUE(d != NULL);
	if (d != NULL) {
		ASSERT_INT_EQ(d->n_compared, 1);
		ASSERT_INT_EQ(d->n_changed, 1);
		ASSERT_INT_EQ(d->n_demands, 1);
		ASSERT_INT_EQ(d->demands[0].kind, PLANDIFF_CHANGED);
		ASSERT_INT_EQ(d->demands[0].old_k, 0);
		ASSERT_INT_EQ(d->demands[0].new_k, 0);
		ASSERT_DBL_NEAR(d->demands[0].moved_bps, 7.5e9, 1e-15);
		ASSERT_DBL_NEAR(d->moved_bps, 7.5e9, 1e-15);
		ASSERT_DBL_NEAR(d->old_carried_bps, 15e9, 1e-15);
		ASSERT_DBL_NEAR(d->new_carried_bps, 10e9, 1e-15);
		ASSERT_DBL_NEAR(d->moved_share, 0.5, 1e-15);
	}
	plandiff_free(d);
	TEST_DONE();

	TEST_START("a plan compared with itself moved nothing");
	d = diff(m, o, m, o);
	ASSERT_TRUE(d != NULL);
	if (d != NULL) {
		ASSERT_INT_EQ(d->n_compared, 1);
		ASSERT_INT_EQ(d->n_changed, 0);
		ASSERT_INT_EQ(d->n_demands, 0);
		ASSERT_DBL_NEAR(d->moved_bps, 0, 0);
		ASSERT_DBL_NEAR(d->moved_share, 0, 0);
	}
	plandiff_free(d);
	TEST_DONE();
	plan_free(o);
	plan_free(n);
	model_free(m);
}

/*
 * Rebalancing with the carried rate unchanged.  Old: A-B-D 10G, A-C-D 5G
 * (cost optimum); new: 7.5G each (balance optimum).  |10 - 7.5| + |5 -
 * 7.5| = 5, moved 2.5G: exactly the traffic that changed paths.  The new
 * model lists nodes and links in reverse order with each link's ends
 * swapped, so every index differs: paths must still match by link id.
 */
static void
test_rebalance_other_model(void)
{
	struct model *om = net(false), *nm = net(true);
	struct plan *o, *n, *same;
	struct plandiff *d;

	demand(om, "A", "D", 15e9, 0);
	demand(nm, "A", "D", 15e9, 0);
	o = plan_for(om);
	path(om, o, 0, 10e9, "ab bd");
	path(om, o, 0, 5e9, "ac cd");
	n = plan_for(nm);
	path(nm, n, 0, 7.5e9, "ac cd");
	path(nm, n, 0, 7.5e9, "ab bd");
	same = plan_for(nm);
	path(nm, same, 0, 5e9, "ac cd");
	path(nm, same, 0, 10e9, "ab bd");

	TEST_START("rebalancing 10/5 to 7.5/7.5 moves 2.5G across models");
	d = diff(om, o, nm, n);
	ASSERT_TRUE(d != NULL);
	if (d != NULL) {
		ASSERT_INT_EQ(d->n_changed, 1);
		ASSERT_DBL_NEAR(d->moved_bps, 2.5e9, 1e-15);
		ASSERT_DBL_NEAR(d->moved_share, 2.5 / 15, 1e-15);
	}
	plandiff_free(d);
	TEST_DONE();

	TEST_START("the same routing in a renumbered model moved nothing");
	d = diff(om, o, nm, same);
	ASSERT_TRUE(d != NULL);
	if (d != NULL) {
		ASSERT_INT_EQ(d->n_changed, 0);
		ASSERT_DBL_NEAR(d->moved_bps, 0, 0);
	}
	plandiff_free(d);
	TEST_DONE();
	plan_free(o);
	plan_free(n);
	plan_free(same);
	model_free(om);
	model_free(nm);
}

/*
 * Matching by (src, dst, priority, occurrence).  Old demands: [0] A->D
 * p0 1G over ab-bd, [1] A->D p0 2G over ac-cd, [2] C->B p1 1G over ac-ab,
 * [3] A->D p3 1G over ab-bd.  New demands: [0] B->C p1 (added), [1] A->D
 * p0 1G over ac-cd, [2] A->D p0 2G over ac-cd, [3] A->D p2 1G over ab-bd.
 * Occurrence 0 of (A, D, 0) is old [0] and new [1]: ab-bd 1G -> ac-cd
 * 1G, moved (1 + 1) / 2 = 1G.  Occurrence 1 is old [1] and new [2]: the
 * same, unchanged.  C->B p1 is removed, B->C p1 added; A->D p3 removed
 * and A->D p2 added (priority is part of the key).  Totals: 2 compared,
 * 1 changed, 2 added, 2 removed, moved 1G (added and removed traffic
 * does not count), carried 5G on both sides, share 1 / 5 = 0.2.  The
 * list runs in the new model's order (added [0], changed [1], added [3]),
 * then the removed ones in the old model's order ([2], [3]).
 */
static void
test_matching(void)
{
	struct model *om = net(false), *nm = net(false);
	struct plan *o, *n;
	struct plandiff *d;
	size_t i;
	static const struct {
		enum plandiff_kind kind;
		long old_k, new_k;
		size_t occ;
	} want[] = {
		{ PLANDIFF_ADDED, -1, 0, 0 },
		{ PLANDIFF_CHANGED, 0, 1, 0 },
		{ PLANDIFF_ADDED, -1, 3, 0 },
		{ PLANDIFF_REMOVED, 2, -1, 0 },
		{ PLANDIFF_REMOVED, 3, -1, 0 },
	};

	demand(om, "A", "D", 1e9, 0);
	demand(om, "A", "D", 2e9, 0);
	demand(om, "C", "B", 1e9, 1);
	demand(om, "A", "D", 1e9, 3);
	o = plan_for(om);
	path(om, o, 0, 1e9, "ab bd");
	path(om, o, 1, 2e9, "ac cd");
	path(om, o, 2, 1e9, "ac ab");
	path(om, o, 3, 1e9, "ab bd");
	demand(nm, "B", "C", 1e9, 1);
	demand(nm, "A", "D", 1e9, 0);
	demand(nm, "A", "D", 2e9, 0);
	demand(nm, "A", "D", 1e9, 2);
	n = plan_for(nm);
	path(nm, n, 0, 1e9, "ab ac");
	path(nm, n, 1, 1e9, "ac cd");
	path(nm, n, 2, 2e9, "ac cd");
	path(nm, n, 3, 1e9, "ab bd");

	TEST_START("matches repeated demands by occurrence, not by index");
	d = diff(om, o, nm, n);
	ASSERT_TRUE(d != NULL);
	if (d != NULL) {
		ASSERT_INT_EQ(d->n_compared, 2);
		ASSERT_INT_EQ(d->n_changed, 1);
		ASSERT_INT_EQ(d->n_added, 2);
		ASSERT_INT_EQ(d->n_removed, 2);
		ASSERT_DBL_NEAR(d->moved_bps, 1e9, 1e-15);
		ASSERT_DBL_NEAR(d->old_carried_bps, 5e9, 1e-15);
		ASSERT_DBL_NEAR(d->new_carried_bps, 5e9, 1e-15);
		ASSERT_DBL_NEAR(d->moved_share, 0.2, 1e-15);
		ASSERT_INT_EQ(d->n_demands, 5);
		for (i = 0; i < 5 && d->n_demands == 5; i++) {
			ASSERT_INT_EQ(d->demands[i].kind, want[i].kind);
			ASSERT_INT_EQ(d->demands[i].old_k, want[i].old_k);
			ASSERT_INT_EQ(d->demands[i].new_k, want[i].new_k);
			ASSERT_INT_EQ(d->demands[i].occurrence, want[i].occ);
		}
		ASSERT_DBL_NEAR(d->demands[1].moved_bps, 1e9, 1e-15);
	}
	plandiff_free(d);
	TEST_DONE();

	TEST_START("a second occurrence is told apart from the first");
	/* Swap the two A->D p0 routes of the new plan: both now differ. */
	{
		struct plan_route t = n->routes[1];

		n->routes[1] = n->routes[2];
		n->routes[2] = t;
	}
	/*
	 * Old occ 0: ab-bd 1G; new occ 0 (demand [1], 1G): ac-cd 2G.  moved
	 * (1 + 2) / 2 = 1.5G.  Old occ 1: ac-cd 2G; new occ 1: ac-cd 1G:
	 * moved 1 / 2 = 0.5G.  Total 2G.
	 */
	d = diff(om, o, nm, n);
	ASSERT_TRUE(d != NULL);
	if (d != NULL) {
		ASSERT_INT_EQ(d->n_changed, 2);
		ASSERT_DBL_NEAR(d->moved_bps, 2e9, 1e-15);
	}
	plandiff_free(d);
	TEST_DONE();

	TEST_START("refuses a plan that does not fit its model");
	n->n_routes--;
	{
		struct plandiff *bad = NULL;
		struct err e;

		err_clear(&e);
		ASSERT_INT_EQ(plandiff_compute(om, o, nm, n, &bad, &e),
		    ERR_INVALID);
		ASSERT_TRUE(bad == NULL);
		ASSERT_STR_EQ(e.where, "to");
	}
	n->n_routes++;
	TEST_DONE();
	plan_free(o);
	plan_free(n);
	model_free(om);
	model_free(nm);
}

int
main(void)
{
	test_link_down();
	test_rebalance_other_model();
	test_matching();
	return tap_finish();
}
