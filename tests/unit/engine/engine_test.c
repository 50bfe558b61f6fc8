/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Unit tests of engine_solve on small networks with hand-derived optima. */
#include <sys/stat.h>

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "../../tap.h"
#include "enginetest.h"
#include "../../../daemon/engine/engine.h"
#include "../../../daemon/base/err.h"
#include "../../../daemon/base/xalloc.h"

#define REL	1e-6	/* tolerance on optima, relative */

static struct plan *
solve(const struct model *m)
{
	struct plan *p = NULL;
	struct err e;

	err_clear(&e);
	if (engine_solve(m, NULL, &p, &e) != 0)
		printf("# engine_solve: %s: %s\n", e.where, e.msg);
	return p;
}

/*
 * One 10 Gbit/s link A-B, metric 5, demand A->B of 4 Gbit/s.  The only
 * route is the link: load 4e9 on arc 0 (A->B), utilisation 0.4, cost
 * 5 x 4e9 = 2e10, for either objective.
 */
static void
test_single_link(void)
{
	struct model *m = model_new();
	struct plan *p;
	int obj;

	node(m, "A");
	node(m, "B");
	add_link(m, "ab", "A", "B", 1e10, 5, true);
	demand(m, "A", "B", 4e9, 0);
	for (obj = OBJ_COST; obj <= OBJ_BALANCE; obj++) {
		TEST_START(obj == OBJ_COST ?
		    "a single link carries its demand (cost)" :
		    "a single link carries its demand (balance)");
		m->policy.objective = (enum objective)obj;
		p = solve(m);
		ASSERT_TRUE(p != NULL);
		if (p == NULL) {
			TEST_DONE();
			continue;
		}
		ASSERT_INT_EQ(p->status, PLAN_OPTIMAL);
		ASSERT_STR_EQ(plan_status_str(p->status), "optimal");
		ASSERT_DBL_NEAR(p->arcs[0].load_bps, 4e9, REL);
		ASSERT_DBL_NEAR(p->arcs[1].load_bps, 0, REL);
		ASSERT_DBL_NEAR(p->arcs[0].util, 0.4, REL);
		ASSERT_DBL_NEAR(p->arcs[0].headroom_bps, 6e9, REL);
		ASSERT_DBL_NEAR(p->max_util, 0.4, REL);
		ASSERT_DBL_NEAR(p->total_cost, 2e10, REL);
		ASSERT_INT_EQ(p->routes[0].n_paths, 1);
		ASSERT_INT_EQ(p->routes[0].paths[0].n_arcs, 1);
		ASSERT_INT_EQ(p->routes[0].paths[0].arcs[0], 0);
		ASSERT_DBL_NEAR(p->routes[0].carried_bps, 4e9, REL);
		ASSERT_DBL_NEAR(p->demand_bps, 4e9, 0);
		ASSERT_DBL_NEAR(p->scale_bps, 1e10, 0);
		ASSERT_INT_EQ(p->n_saturated, 0);
		ASSERT_STR_EQ(p->stages[p->n_stages - 1].name, "cost");
		ASSERT_DBL_NEAR(p->stages[p->n_stages - 1].objective, 2e10,
		    REL);
		if (obj == OBJ_BALANCE) {
			ASSERT_INT_EQ(p->n_stages, 3);
			ASSERT_STR_EQ(p->stages[1].name, "balance");
			ASSERT_DBL_NEAR(p->stages[1].objective, 0.4, REL);
		}
		ASSERT_INT_EQ(check_plan(m, p), 0);
		plan_free(p);
		TEST_DONE();
	}
	model_free(m);
}

/*
 * Two disjoint paths A-B-D (metrics 1 + 1) and A-C-D (2 + 2), all links
 * 10 Gbit/s, demand A->D of 6 Gbit/s.  Cost: everything on the cheap
 * path, cost 2 x 6e9 = 1.2e10, max utilisation 0.6.  Balance: the max
 * utilisation is lowest with 3 Gbit/s on each path, U = 0.3; cost then
 * 3e9 x 2 + 3e9 x 4 = 1.8e10 (U may exceed 0.3 by balance_tol = 1e-7,
 * which moves at most 3e9 x 1e-7 to the cheap path: a 1e-7 change).
 */
static void
test_parallel(void)
{
	struct model *m = model_new();
	struct plan *p;

	node(m, "A");
	node(m, "B");
	node(m, "C");
	node(m, "D");
	add_link(m, "ab", "A", "B", 1e10, 1, true);
	add_link(m, "bd", "B", "D", 1e10, 1, true);
	add_link(m, "ac", "A", "C", 1e10, 2, true);
	add_link(m, "cd", "C", "D", 1e10, 2, true);
	demand(m, "A", "D", 6e9, 0);

	TEST_START("cost puts all traffic on the cheaper of two paths");
	p = solve(m);
	ASSERT_TRUE(p != NULL);
	if (p != NULL) {
		ASSERT_INT_EQ(p->status, PLAN_OPTIMAL);
		ASSERT_DBL_NEAR(p->total_cost, 1.2e10, REL);
		ASSERT_DBL_NEAR(p->max_util, 0.6, REL);
		ASSERT_INT_EQ(p->routes[0].n_paths, 1);
		ASSERT_INT_EQ(p->routes[0].paths[0].n_arcs, 2);
		ASSERT_INT_EQ(p->routes[0].paths[0].arcs[0], 0);
		ASSERT_INT_EQ(p->routes[0].paths[0].arcs[1], 2);
		ASSERT_DBL_NEAR(p->arcs[4].load_bps, 0, REL);
		ASSERT_INT_EQ(check_plan(m, p), 0);
	}
	plan_free(p);
	TEST_DONE();

	TEST_START("balance splits evenly over two paths, then minds cost");
	m->policy.objective = OBJ_BALANCE;
	p = solve(m);
	ASSERT_TRUE(p != NULL);
	if (p != NULL) {
		ASSERT_INT_EQ(p->status, PLAN_OPTIMAL);
		ASSERT_DBL_NEAR(p->max_util, 0.3, REL);
		ASSERT_DBL_NEAR(p->total_cost, 1.8e10, REL);
		ASSERT_INT_EQ(p->routes[0].n_paths, 2);
		ASSERT_DBL_NEAR(p->routes[0].paths[0].rate_bps, 3e9, REL);
		ASSERT_DBL_NEAR(p->routes[0].paths[1].rate_bps, 3e9, REL);
		ASSERT_DBL_NEAR(p->arcs[0].load_bps, 3e9, REL);
		ASSERT_DBL_NEAR(p->arcs[4].load_bps, 3e9, REL);
		ASSERT_INT_EQ(check_plan(m, p), 0);
	}
	plan_free(p);
	TEST_DONE();
	model_free(m);
}

/*
 * Triangle: A-B 1 Gbit/s metric 1, A-C and C-B 10 Gbit/s metric 1, demand
 * A->B of 3 Gbit/s.  The direct link (cost 1 per bit/s) fills up with
 * 1 Gbit/s; the other 2 Gbit/s go A-C-B (cost 2 per bit/s).  Cost
 * 1e9 + 2 x 2e9 = 5e9; utilisation 1.0 on A->B, 0.2 on A->C and C->B.
 * Paths largest first: A-C-B (2e9), then A-B (1e9).
 */
static void
test_triangle(void)
{
	struct model *m = model_new();
	struct plan *p;

	node(m, "A");
	node(m, "B");
	node(m, "C");
	add_link(m, "ab", "A", "B", 1e9, 1, true);
	add_link(m, "ac", "A", "C", 1e10, 1, true);
	add_link(m, "cb", "C", "B", 1e10, 1, true);
	demand(m, "A", "B", 3e9, 0);

	TEST_START("capacity forces a split in a triangle");
	p = solve(m);
	ASSERT_TRUE(p != NULL);
	if (p != NULL) {
		ASSERT_INT_EQ(p->status, PLAN_OPTIMAL);
		ASSERT_DBL_NEAR(p->total_cost, 5e9, REL);
		ASSERT_DBL_NEAR(p->max_util, 1.0, REL);
		ASSERT_DBL_NEAR(p->arcs[0].util, 1.0, REL);
		ASSERT_DBL_NEAR(p->arcs[2].util, 0.2, REL);
		ASSERT_DBL_NEAR(p->arcs[4].util, 0.2, REL);
		ASSERT_INT_EQ(p->routes[0].n_paths, 2);
		ASSERT_DBL_NEAR(p->routes[0].paths[0].rate_bps, 2e9, REL);
		ASSERT_INT_EQ(p->routes[0].paths[0].n_arcs, 2);
		ASSERT_DBL_NEAR(p->routes[0].paths[1].rate_bps, 1e9, REL);
		ASSERT_INT_EQ(p->routes[0].paths[1].n_arcs, 1);
		/* All traffic fits: no prices, nothing saturated. */
		ASSERT_INT_EQ(p->n_saturated, 0);
		ASSERT_DBL_NEAR(p->arcs[0].shadow_price, 0, 0);
		ASSERT_INT_EQ(check_plan(m, p), 0);
	}
	plan_free(p);
	TEST_DONE();
	model_free(m);
}

/*
 * Over-subscription: links A-B (20 Gbit/s) and B-C (10 Gbit/s), metric 1;
 * demands A->C 8 Gbit/s priority 0 and A->C 5 Gbit/s priority 1, plus
 * B->C 1 Gbit/s priority 1.  14 Gbit/s want B->C, which has 10: priority
 * 0 gets all 8 Gbit/s, priority 1 shares the remaining 2 Gbit/s (how it
 * splits between its two demands is not unique) and 4 Gbit/s stay
 * unserved.  Only arc B->C (arc 2) limits: one more bit/s of it carries
 * one more bit/s of priority 1, so its shadow price is 1 and link 1 (bc)
 * is the one saturated link; A->B (at most 10 of 20 Gbit/s) is slack.
 * With headroom 0.5, B->C offers 5 Gbit/s: priority 0 gets 5 of its 8,
 * priority 1 nothing (3 + 6 Gbit/s unserved), and an extra bit/s of
 * capacity adds half a bit/s of usable capacity: price 0.5.
 */
static void
test_priorities(void)
{
	struct model *m = model_new();
	struct plan *p;

	node(m, "A");
	node(m, "B");
	node(m, "C");
	add_link(m, "ab", "A", "B", 2e10, 1, true);
	add_link(m, "bc", "B", "C", 1e10, 1, true);
	demand(m, "A", "C", 8e9, 0);
	demand(m, "A", "C", 5e9, 1);
	demand(m, "B", "C", 1e9, 1);

	TEST_START("over-subscription serves priority 0 first, names the "
	    "bottleneck");
	p = solve(m);
	ASSERT_TRUE(p != NULL);
	if (p != NULL) {
		ASSERT_INT_EQ(p->status, PLAN_PARTIAL);
		ASSERT_STR_EQ(plan_status_str(p->status), "partial");
		ASSERT_DBL_NEAR(p->routes[0].carried_bps, 8e9, REL);
		ASSERT_DBL_NEAR(p->routes[0].unserved_bps, 0, REL);
		ASSERT_DBL_NEAR(p->routes[1].carried_bps +
		    p->routes[2].carried_bps, 2e9, REL);
		ASSERT_DBL_NEAR(p->carried_bps, 1e10, REL);
		ASSERT_DBL_NEAR(p->unserved_bps, 4e9, REL);
		ASSERT_DBL_NEAR(p->unserved_by_prio_bps[0], 0, REL);
		ASSERT_DBL_NEAR(p->unserved_by_prio_bps[1], 4e9, REL);
		ASSERT_DBL_NEAR(p->demand_bps, 1.4e10, 0);
		ASSERT_INT_EQ(p->n_saturated, 1);
		if (p->n_saturated == 1)
			ASSERT_INT_EQ(p->saturated_links[0], 1);
		ASSERT_TRUE(p->arcs[2].saturated);
		ASSERT_DBL_NEAR(p->arcs[2].shadow_price, 1, REL);
		ASSERT_TRUE(!p->arcs[0].saturated);
		ASSERT_DBL_NEAR(p->arcs[3].shadow_price, 0, 0);
		ASSERT_DBL_NEAR(p->max_util, 1, REL);
		ASSERT_INT_EQ(p->n_stages, 4);
		ASSERT_STR_EQ(p->stages[0].name, "admit");
		ASSERT_STR_EQ(p->stages[1].name, "admit-p0");
		ASSERT_DBL_NEAR(p->stages[1].objective, 0, REL);
		ASSERT_STR_EQ(p->stages[2].name, "admit-p1");
		ASSERT_DBL_NEAR(p->stages[2].objective, 4e9, REL);
		ASSERT_STR_EQ(p->stages[3].name, "cost");
		ASSERT_INT_EQ(check_plan(m, p), 0);
	}
	plan_free(p);
	TEST_DONE();

	TEST_START("headroom scales usable capacity and the shadow price");
	m->policy.headroom = 0.5;
	m->policy.objective = OBJ_BALANCE;
	p = solve(m);
	ASSERT_TRUE(p != NULL);
	if (p != NULL) {
		ASSERT_INT_EQ(p->status, PLAN_PARTIAL);
		ASSERT_DBL_NEAR(p->routes[0].carried_bps, 5e9, REL);
		ASSERT_DBL_NEAR(p->unserved_by_prio_bps[0], 3e9, REL);
		ASSERT_DBL_NEAR(p->unserved_by_prio_bps[1], 6e9, REL);
		ASSERT_DBL_NEAR(p->routes[1].carried_bps, 0, REL);
		ASSERT_DBL_NEAR(p->max_util, 0.5, REL);
		ASSERT_DBL_NEAR(p->arcs[2].load_bps, 5e9, REL);
		ASSERT_DBL_NEAR(p->arcs[2].shadow_price, 0.5, REL);
		ASSERT_INT_EQ(p->n_saturated, 1);
		ASSERT_INT_EQ(check_plan(m, p), 0);
	}
	plan_free(p);
	TEST_DONE();
	model_free(m);
}

/*
 * Nothing to route: no demands at all, or only demands of rate 0.  The
 * plan is empty, with zero loads and each arc's full headroom.
 */
static void
test_empty(void)
{
	struct model *m = model_new();
	struct plan *p;

	node(m, "A");
	node(m, "B");
	add_link(m, "ab", "A", "B", 1e9, 1, true);
	add_link(m, "ab2", "A", "B", 1e9, 1, false);

	TEST_START("an empty matrix gives an empty plan with zero loads");
	p = solve(m);
	ASSERT_TRUE(p != NULL);
	if (p != NULL) {
		ASSERT_INT_EQ(p->status, PLAN_EMPTY);
		ASSERT_STR_EQ(plan_status_str(p->status), "empty");
		ASSERT_INT_EQ(p->n_arcs, 4);
		ASSERT_INT_EQ(p->n_routes, 0);
		ASSERT_INT_EQ(p->n_stages, 0);
		ASSERT_DBL_NEAR(p->arcs[1].capacity_bps, 1e9, 0);
		ASSERT_DBL_NEAR(p->arcs[1].headroom_bps, 1e9, 0);
		ASSERT_DBL_NEAR(p->arcs[2].capacity_bps, 0, 0);
		ASSERT_DBL_NEAR(p->max_util, 0, 0);
		ASSERT_DBL_NEAR(p->total_cost, 0, 0);
	}
	plan_free(p);
	TEST_DONE();

	TEST_START("demands of rate 0 only give an empty plan");
	demand(m, "A", "B", 0, 0);
	demand(m, "B", "A", 0, 3);
	p = solve(m);
	ASSERT_TRUE(p != NULL);
	if (p != NULL) {
		ASSERT_INT_EQ(p->status, PLAN_EMPTY);
		ASSERT_INT_EQ(p->n_routes, 2);
		ASSERT_INT_EQ(p->routes[1].n_paths, 0);
		ASSERT_DBL_NEAR(p->routes[1].carried_bps, 0, 0);
		ASSERT_DBL_NEAR(p->routes[1].unserved_bps, 0, 0);
		ASSERT_INT_EQ(check_plan(m, p), 0);
	}
	plan_free(p);
	TEST_DONE();

	TEST_START("a demand of rate 0 beside others gets no path");
	demand(m, "A", "B", 5e8, 0);
	p = solve(m);
	ASSERT_TRUE(p != NULL);
	if (p != NULL) {
		ASSERT_INT_EQ(p->status, PLAN_OPTIMAL);
		ASSERT_INT_EQ(p->routes[0].n_paths, 0);
		ASSERT_DBL_NEAR(p->routes[0].unserved_bps, 0, 0);
		ASSERT_DBL_NEAR(p->routes[2].carried_bps, 5e8, REL);
		/* The down parallel link (arcs 2, 3) carries nothing. */
		ASSERT_DBL_NEAR(p->arcs[2].load_bps, 0, 0);
		ASSERT_DBL_NEAR(p->arcs[0].util, 0.5, REL);
		ASSERT_INT_EQ(check_plan(m, p), 0);
	}
	plan_free(p);
	TEST_DONE();
	model_free(m);
}

/*
 * A down link A-B (metric 1) beside an up detour A-C-B (metric 5 + 5):
 * demand A->B 1 Gbit/s must take the detour, cost 10 x 1e9.  The down
 * link's arcs report capacity 0, load 0, utilisation 0.  With the detour
 * down too, nothing can carry the demand: all of it is unserved, and no
 * capacity row limits it, so no link is saturated.
 */
static void
test_down_link(void)
{
	struct model *m = model_new();
	struct plan *p;

	node(m, "A");
	node(m, "B");
	node(m, "C");
	add_link(m, "ab", "A", "B", 1e10, 1, false);
	add_link(m, "ac", "A", "C", 1e10, 5, true);
	add_link(m, "cb", "C", "B", 1e10, 5, true);
	demand(m, "A", "B", 1e9, 0);

	TEST_START("a down link carries nothing and traffic detours");
	p = solve(m);
	ASSERT_TRUE(p != NULL);
	if (p != NULL) {
		ASSERT_INT_EQ(p->status, PLAN_OPTIMAL);
		ASSERT_DBL_NEAR(p->total_cost, 1e10, REL);
		ASSERT_DBL_NEAR(p->arcs[0].capacity_bps, 0, 0);
		ASSERT_DBL_NEAR(p->arcs[0].load_bps, 0, 0);
		ASSERT_DBL_NEAR(p->arcs[0].util, 0, 0);
		ASSERT_INT_EQ(p->routes[0].paths[0].n_arcs, 2);
		ASSERT_INT_EQ(check_plan(m, p), 0);
	}
	plan_free(p);
	TEST_DONE();

	TEST_START("with every route down, all traffic is unserved");
	m->links[1].up = false;
	p = solve(m);
	ASSERT_TRUE(p != NULL);
	if (p != NULL) {
		ASSERT_INT_EQ(p->status, PLAN_PARTIAL);
		ASSERT_DBL_NEAR(p->unserved_bps, 1e9, REL);
		ASSERT_DBL_NEAR(p->unserved_by_prio_bps[0], 1e9, REL);
		ASSERT_INT_EQ(p->routes[0].n_paths, 0);
		ASSERT_INT_EQ(p->n_saturated, 0);
		ASSERT_INT_EQ(check_plan(m, p), 0);
	}
	plan_free(p);
	TEST_DONE();

	TEST_START("with no link up at all, all traffic is unserved");
	m->links[2].up = false;
	p = solve(m);
	ASSERT_TRUE(p != NULL);
	if (p != NULL) {
		ASSERT_INT_EQ(p->status, PLAN_PARTIAL);
		ASSERT_DBL_NEAR(p->unserved_bps, 1e9, REL);
		ASSERT_DBL_NEAR(p->scale_bps, 1e9, 0);
		ASSERT_INT_EQ(check_plan(m, p), 0);
	}
	plan_free(p);
	TEST_DONE();
	model_free(m);
}

/*
 * Demands from one source to several sinks share one aggregated flow;
 * the decomposition must still give each demand exactly its own rate.
 * Star-and-ring network: hub H, ring R0..R5 (10 Gbit/s, metric 1),
 * spokes H-Ri (1 Gbit/s, metric 1).  Demands H->Ri of 1.5 Gbit/s each:
 * the spoke carries 1 Gbit/s and the remaining 0.5 Gbit/s must come over
 * the ring, through a neighbour's spoke, but every spoke is full, so
 * only 6 x 1 Gbit/s fit; 3 Gbit/s stay unserved.  Every spoke H->Ri
 * limits with price 1.
 */
static void
test_one_source_many_sinks(void)
{
	struct model *m = model_new();
	struct plan *p;
	char a[8], b[8], id[16];
	int i, sat_spokes = 0;

	node(m, "H");
	for (i = 0; i < 6; i++) {
		snprintf(a, sizeof(a), "R%d", i);
		node(m, a);
	}
	for (i = 0; i < 6; i++) {
		snprintf(a, sizeof(a), "R%d", i);
		snprintf(b, sizeof(b), "R%d", (i + 1) % 6);
		snprintf(id, sizeof(id), "ring%d", i);
		add_link(m, id, a, b, 1e10, 1, true);
	}
	for (i = 0; i < 6; i++) {
		snprintf(a, sizeof(a), "R%d", i);
		snprintf(id, sizeof(id), "spoke%d", i);
		add_link(m, id, "H", a, 1e9, 1, true);
		demand(m, "H", a, 1.5e9, 0);
	}

	TEST_START("one source, many sinks: each demand gets its own share");
	p = solve(m);
	ASSERT_TRUE(p != NULL);
	if (p != NULL) {
		ASSERT_INT_EQ(p->status, PLAN_PARTIAL);
		ASSERT_DBL_NEAR(p->carried_bps, 6e9, REL);
		ASSERT_DBL_NEAR(p->unserved_bps, 3e9, REL);
		for (i = 0; i < 6; i++)
			if (p->arcs[2 * (6 + i)].saturated &&
			    fabs(p->arcs[2 * (6 + i)].shadow_price - 1) < REL)
				sat_spokes++;
		ASSERT_INT_EQ(sat_spokes, 6);
		ASSERT_INT_EQ(p->n_saturated, 6);
		ASSERT_INT_EQ(check_plan(m, p), 0);
	}
	plan_free(p);
	TEST_DONE();
	model_free(m);
}

/*
 * Random connected networks (a random tree plus extra links, some down,
 * rates over six orders of magnitude, some over-subscribed), both
 * objectives and two headrooms: every plan must pass check_plan().
 */
static void
test_random_plans(void)
{
	struct model *m;
	struct plan *p;
	unsigned long seed = 7;
	char a[16], b[16], id[16];
	int round, i, n, nl, bad = 0, solved = 0, partial = 0, x, y;

	TEST_START("plans of random networks are consistent routings");
	for (round = 0; round < 24; round++) {
		m = model_new();
		n = 4 + (int)(rnd(&seed) * 12);
		nl = n - 1 + (int)(rnd(&seed) * n);
		for (i = 0; i < n; i++) {
			snprintf(id, sizeof(id), "n%d", i);
			node(m, id);
		}
		for (i = 0; i < nl; i++) {
			if (i < n - 1) {
				x = i + 1;
				y = (int)(rnd(&seed) * (i + 1));
			} else {
				x = (int)(rnd(&seed) * n);
				do
					y = (int)(rnd(&seed) * n);
				while (y == x);
			}
			snprintf(a, sizeof(a), "n%d", x);
			snprintf(b, sizeof(b), "n%d", y);
			snprintf(id, sizeof(id), "l%d", i);
			add_link(m, id, a, b, rnd(&seed) < 0.5 ? 1e9 : 1e10,
			    1 + floor(rnd(&seed) * 20), rnd(&seed) > 0.1);
		}
		for (i = 0; i < 3 * n; i++) {
			x = (int)(rnd(&seed) * n);
			do
				y = (int)(rnd(&seed) * n);
			while (y == x);
			snprintf(a, sizeof(a), "n%d", x);
			snprintf(b, sizeof(b), "n%d", y);
			demand(m, a, b, exp(rnd(&seed) * log(1e6)) *
			    (round % 3 == 0 ? 1e4 : 1e2),
			    (int)(rnd(&seed) * 3));
		}
		m->policy.objective = round % 2 ? OBJ_BALANCE : OBJ_COST;
		m->policy.headroom = round % 4 < 2 ? 1.0 : 0.7;
		p = solve(m);
		if (p != NULL) {
			solved++;
			bad += check_plan(m, p);
			partial += p->status == PLAN_PARTIAL;
		}
		plan_free(p);
		model_free(m);
	}
	ASSERT_INT_EQ(solved, 24);
	ASSERT_INT_EQ(bad, 0);
	/* The instances cover both outcomes. */
	ASSERT_TRUE(partial > 0 && partial < 24);
	TEST_DONE();
}

static void
test_check(void)
{
	struct model *m = model_new();
	struct plan *p = NULL;
	struct err e;

	node(m, "A");
	node(m, "B");
	add_link(m, "ab", "A", "B", 1e9, 1, true);
	demand(m, "A", "B", 1e8, 0);

	TEST_START("engine_check accepts a good model");
	ASSERT_INT_EQ(engine_check(m, NULL), 0);
	TEST_DONE();

	TEST_START("engine_check rejects bad policy values");
	m->policy.headroom = 0;
	err_clear(&e);
	ASSERT_INT_EQ(engine_check(m, &e), ERR_INVALID);
	ASSERT_STR_EQ(e.where, "policy.headroom");
	m->policy.headroom = 1.01;
	ASSERT_INT_EQ(engine_check(m, NULL), ERR_INVALID);
	m->policy.headroom = NAN;
	ASSERT_INT_EQ(engine_check(m, NULL), ERR_INVALID);
	m->policy.headroom = 1;
	m->policy.balance_tol = 0.2;
	err_clear(&e);
	ASSERT_INT_EQ(engine_check(m, &e), ERR_INVALID);
	ASSERT_STR_EQ(e.where, "policy.balance_tol");
	m->policy.balance_tol = -1e-9;
	ASSERT_INT_EQ(engine_check(m, NULL), ERR_INVALID);
	m->policy.balance_tol = 0;
	ASSERT_INT_EQ(engine_check(m, NULL), 0);
	m->policy.objective = (enum objective)5;
	ASSERT_INT_EQ(engine_check(m, NULL), ERR_INVALID);
	m->policy.objective = OBJ_COST;
	TEST_DONE();

	TEST_START("engine_check rejects bad fields written directly");
	m->links[0].capacity_bps = NAN;
	err_clear(&e);
	ASSERT_INT_EQ(engine_check(m, &e), ERR_INVALID);
	ASSERT_STR_EQ(e.where, "links[0].capacity_bps");
	m->links[0].capacity_bps = 1e9;
	m->links[0].te_metric = -1;
	ASSERT_INT_EQ(engine_check(m, NULL), ERR_INVALID);
	m->links[0].te_metric = 1;
	m->links[0].b = 7;
	err_clear(&e);
	ASSERT_INT_EQ(engine_check(m, &e), ERR_INVALID);
	ASSERT_STR_EQ(e.where, "links[0].b");
	m->links[0].b = 0;
	ASSERT_INT_EQ(engine_check(m, NULL), ERR_INVALID);
	m->links[0].b = 1;
	m->demands[0].rate_bps = INFINITY;
	err_clear(&e);
	ASSERT_INT_EQ(engine_check(m, &e), ERR_INVALID);
	ASSERT_STR_EQ(e.where, "demands[0].rate_bps");
	m->demands[0].rate_bps = 1;
	m->demands[0].priority = 8;
	ASSERT_INT_EQ(engine_check(m, NULL), ERR_INVALID);
	m->demands[0].priority = 0;
	m->demands[0].dst = 0;
	ASSERT_INT_EQ(engine_check(m, NULL), ERR_INVALID);
	m->demands[0].dst = 1;
	free(m->nodes[1].id);
	m->nodes[1].id = xstrdup("A");
	err_clear(&e);
	ASSERT_INT_EQ(engine_check(m, &e), ERR_INVALID);
	ASSERT_STR_EQ(e.where, "nodes");
	TEST_DONE();

	TEST_START("engine_solve refuses an invalid model before solving");
	err_clear(&e);
	ASSERT_INT_EQ(engine_solve(m, NULL, &p, &e), ERR_INVALID);
	ASSERT_TRUE(p == NULL);
	TEST_DONE();
	model_free(m);
}

static void
test_time_limit(void)
{
	struct model *m = model_new();
	struct solve_opts o;
	struct plan *p = NULL;
	struct err e;

	node(m, "A");
	node(m, "B");
	add_link(m, "ab", "A", "B", 1e9, 1, true);
	demand(m, "A", "B", 1e8, 0);

	TEST_START("a time limit already passed gives ERR_TIMEOUT, no plan");
	solve_opts_default(&o);
	o.time_limit_s = 1e-12;
	err_clear(&e);
	ASSERT_INT_EQ(engine_solve(m, &o, &p, &e), ERR_TIMEOUT);
	ASSERT_TRUE(p == NULL);
	TEST_DONE();
	model_free(m);
}

/* Reads a whole small file into a new string, or NULL. */
static char *
slurp(const char *path)
{
	FILE *fp = fopen(path, "r");
	char *buf;
	size_t n;

	if (fp == NULL)
		return NULL;
	buf = xcalloc(1 << 16, 1);
	n = fread(buf, 1, (1 << 16) - 1, fp);
	buf[n] = '\0';
	fclose(fp);
	return buf;
}

/*
 * Exports the triangle's last stage and solves the file with glpsol
 * (GLPK's stand-alone solver, an outside program): its optimum, in LP
 * units (metric / largest metric x bit/s / scale), times largest metric x
 * scale must equal the plan's cost, 5e9 (see test_triangle).
 */
static void
test_export(void)
{
	struct model *m = model_new();
	struct solve_opts o;
	struct plan *p = NULL;
	struct err e;
	char dir[] = "/tmp/weft-engine-test-XXXXXX", path[128], cmd[512];
	char line[256], *text;
	double obj = NAN;
	FILE *fp;

	node(m, "A");
	node(m, "B");
	node(m, "C");
	add_link(m, "ab", "A", "B", 1e9, 1, true);
	add_link(m, "ac", "A", "C", 1e10, 1, true);
	add_link(m, "cb", "C", "B", 1e10, 1, true);
	demand(m, "A", "B", 3e9, 0);
	if (mkdtemp(dir) == NULL)
		abort();

	TEST_START("exports the last stage in the LP text format");
	snprintf(path, sizeof(path), "%s/last.lp", dir);
	solve_opts_default(&o);
	o.export_path = path;
	err_clear(&e);
	ASSERT_INT_EQ(engine_solve(m, &o, &p, &e), 0);
	plan_free(p);
	text = slurp(path);
	ASSERT_TRUE(text != NULL);
	if (text != NULL) {
		ASSERT_TRUE(strstr(text, "cap_0_ab") != NULL);
		ASSERT_TRUE(strstr(text, "f_0_2") != NULL);
		ASSERT_TRUE(strstr(text, "u_0") != NULL);
	}
	free(text);
	TEST_DONE();

	TEST_START("an exported MPS file solves to the plan's cost in glpsol");
	snprintf(path, sizeof(path), "%s/last.mps", dir);
	o.export_path = path;
	o.export_format = EXPORT_MPS;
	ASSERT_INT_EQ(engine_solve(m, &o, &p, NULL), 0);
	snprintf(cmd, sizeof(cmd), "glpsol --freemps %s -o %s/out.txt "
	    ">/dev/null 2>&1", path, dir);
	if (access("/usr/bin/glpsol", X_OK) != 0) {
		printf("# glpsol missing: skipped\n");
	} else if (p != NULL) {
		ASSERT_INT_EQ(system(cmd), 0);
		snprintf(path, sizeof(path), "%s/out.txt", dir);
		fp = fopen(path, "r");
		ASSERT_TRUE(fp != NULL);
		while (fp != NULL && fgets(line, sizeof(line), fp) != NULL)
			if (sscanf(line, "Objective: %*s = %lf", &obj) == 1)
				break;
		if (fp != NULL)
			fclose(fp);
		/* The largest metric is 1 here. */
		ASSERT_DBL_NEAR(obj * p->scale_bps, p->total_cost, REL);
		ASSERT_DBL_NEAR(obj * p->scale_bps, 5e9, REL);
	}
	plan_free(p);
	p = NULL;
	TEST_DONE();

	TEST_START("exports a chosen stage, refuses one never solved");
	snprintf(path, sizeof(path), "%s/first.lp", dir);
	o.export_path = path;
	o.export_format = EXPORT_LP;
	o.export_stage = 0;
	ASSERT_INT_EQ(engine_solve(m, &o, &p, NULL), 0);
	plan_free(p);
	p = NULL;
	ASSERT_TRUE(access(path, R_OK) == 0);
	o.export_stage = 5;
	err_clear(&e);
	ASSERT_INT_EQ(engine_solve(m, &o, &p, &e), ERR_INVALID);
	ASSERT_STR_EQ(e.where, "export_stage");
	ASSERT_TRUE(p == NULL);
	TEST_DONE();

	TEST_START("an unwritable export path gives ERR_IO");
	o.export_stage = -1;
	o.export_path = "/nonexistent-dir/x.lp";
	ASSERT_INT_EQ(engine_solve(m, &o, &p, NULL), ERR_IO);
	ASSERT_TRUE(p == NULL);
	TEST_DONE();

	snprintf(cmd, sizeof(cmd), "rm -rf %s", dir);
	if (system(cmd) != 0)
		printf("# could not remove %s\n", dir);
	model_free(m);
}

int
main(void)
{
	test_single_link();
	test_parallel();
	test_triangle();
	test_priorities();
	test_empty();
	test_down_link();
	test_one_source_many_sinks();
	test_random_plans();
	test_check();
	test_time_limit();
	test_export();
	return tap_finish();
}
