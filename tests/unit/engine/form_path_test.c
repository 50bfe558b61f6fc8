/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Unit tests of the path formulation: hand-derived optima, the node-arc
   reference on SNDlib instances, warm re-solves and keep-paths. */
#include <math.h>
#include <pthread.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "../../tap.h"
#include "enginetest.h"
#include "../../../daemon/engine/engine.h"
#include "../../../daemon/engine/sndlib.h"
#include "../../../daemon/base/err.h"
#include "../../../daemon/base/xalloc.h"

#define REL	1e-6	/* tolerance on optima, relative */

/* Solves m with formulation f (no kept state). */
static struct plan *
solve_with(struct model *m, enum formulation f)
{
	struct plan *p = NULL;
	struct err e;

	err_clear(&e);
	m->policy.formulation = f;
	if (engine_solve(m, NULL, &p, &e) != 0)
		printf("# engine_solve: %s: %s\n", e.where, e.msg);
	return p;
}

static struct plan *
solve_warm(struct engine_state **st, struct model *m)
{
	struct plan *p = NULL;
	struct err e;

	err_clear(&e);
	m->policy.formulation = FORM_PATH;
	if (engine_solve_warm(st, m, NULL, &p, &e) != 0)
		printf("# engine_solve_warm: %s: %s\n", e.where, e.msg);
	return p;
}

/*
 * Compares a path plan q with the node-arc reference plan p of the same
 * model: status, carried and unserved traffic per class, maximum
 * utilisation and cost agree to REL.  Returns the count of differences.
 */
static double
stage_lp(const struct plan *p, const char *name)
{
	size_t i;

	for (i = 0; i < p->n_stages; i++)
		if (strcmp(p->stages[i].name, name) == 0)
			return p->stages[i].lp_objective;
	return NAN;
}

static int
same_optimum(const struct plan *p, const struct plan *q)
{
	int bad = 0, c;

	if (p->status != q->status)
		bad++;
	if (fabs(p->carried_bps - q->carried_bps) > REL * fmax(1,
	    p->demand_bps))
		bad++;
	for (c = 0; c <= MODEL_PRIO_MAX; c++)
		if (fabs(p->unserved_by_prio_bps[c] -
		    q->unserved_by_prio_bps[c]) > REL * fmax(1, p->demand_bps))
			bad++;
	if (fabs(p->max_util - q->max_util) > REL * fmax(1e-3, p->max_util))
		bad++;
	if (fabs(p->total_cost - q->total_cost) > REL * fmax(1,
	    p->total_cost))
		bad++;
	if (bad && p->n_stages > 0 && q->n_stages > 0)
		printf("# last stages: arc %s %.10g, path %s %.10g; "
		    "second last: arc %s %.10g, path %s %.10g\n",
		    p->stages[p->n_stages - 1].name,
		    p->stages[p->n_stages - 1].objective,
		    q->stages[q->n_stages - 1].name,
		    q->stages[q->n_stages - 1].objective,
		    p->stages[p->n_stages > 1 ? p->n_stages - 2 : 0].name,
		    p->stages[p->n_stages > 1 ? p->n_stages - 2 : 0].objective,
		    q->stages[q->n_stages > 1 ? q->n_stages - 2 : 0].name,
		    q->stages[q->n_stages > 1 ? q->n_stages - 2 : 0].objective);
	if (bad)
		printf("# arc: status %d carried %.10g U %.10g cost %.10g; "
		    "path: status %d carried %.10g U %.10g cost %.10g\n",
		    (int)p->status, p->carried_bps, p->max_util,
		    p->total_cost, (int)q->status, q->carried_bps,
		    q->max_util, q->total_cost);
	return bad;
}

/* ---- hand-derived optima ---- */

/*
 * A-B direct (10 Gbit/s, metric 1) and A-C-B (10 Gbit/s links, metric 1
 * each), demand A->B 15 Gbit/s.
 *   cost: the direct link fills (10G x 1), the rest takes A-C-B (5G x 2):
 *         cost 2e10, max utilisation 1.
 *   balance: x on the direct link, 15G - x on A-C-B; max(x, 15G - x) /
 *         10G is least at x = 7.5G: U = 0.75, cost 7.5G + 2 x 7.5G =
 *         2.25e10.
 */
static void
test_two_routes(void)
{
	struct model *m = model_new();
	struct plan *p;

	TEST_START("two routes: hand-derived cost and balance optima");
	node(m, "A");
	node(m, "B");
	node(m, "C");
	add_link(m, "ab", "A", "B", 1e10, 1, true);
	add_link(m, "ac", "A", "C", 1e10, 1, true);
	add_link(m, "cb", "C", "B", 1e10, 1, true);
	demand(m, "A", "B", 1.5e10, 0);
	p = solve_with(m, FORM_PATH);
	ASSERT_TRUE(p != NULL);
	if (p != NULL) {
		ASSERT_INT_EQ(p->status, PLAN_OPTIMAL);
		ASSERT_INT_EQ(p->formulation, FORM_PATH);
		ASSERT_DBL_NEAR(p->total_cost, 2e10, REL);
		ASSERT_DBL_NEAR(p->max_util, 1, REL);
		ASSERT_INT_EQ(p->routes[0].n_paths, 2);
		ASSERT_TRUE(p->gap <= 1e-7);
		ASSERT_DBL_NEAR(p->bound, 2e10, REL);
		ASSERT_INT_EQ(check_plan(m, p), 0);
	}
	plan_free(p);
	m->policy.objective = OBJ_BALANCE;
	p = solve_with(m, FORM_PATH);
	ASSERT_TRUE(p != NULL);
	if (p != NULL) {
		ASSERT_DBL_NEAR(p->max_util, 0.75, REL);
		ASSERT_DBL_NEAR(p->total_cost, 2.25e10, REL);
		ASSERT_INT_EQ(check_plan(m, p), 0);
	}
	plan_free(p);
	TEST_DONE();
	model_free(m);
}

/*
 * One 10 Gbit/s link A-B; A->B wants 8G at priority 0 and 6G at
 * priority 1.  Class 0 is served whole, class 1 gets the 2G left: 4G
 * unserved, all of class 1.  One more bit/s on A->B serves one more bit/s
 * of class 1, so the link is saturated with shadow price 1.
 */
static void
test_priorities(void)
{
	struct model *m = model_new();
	struct plan *p;

	TEST_START("two classes on one link: admission by priority");
	node(m, "A");
	node(m, "B");
	add_link(m, "ab", "A", "B", 1e10, 1, true);
	demand(m, "A", "B", 8e9, 0);
	demand(m, "A", "B", 6e9, 1);
	p = solve_with(m, FORM_PATH);
	ASSERT_TRUE(p != NULL);
	if (p != NULL) {
		ASSERT_INT_EQ(p->status, PLAN_PARTIAL);
		ASSERT_DBL_NEAR(p->routes[0].carried_bps, 8e9, REL);
		ASSERT_DBL_NEAR(p->routes[1].carried_bps, 2e9, REL);
		ASSERT_DBL_NEAR(p->unserved_by_prio_bps[1], 4e9, REL);
		ASSERT_DBL_NEAR(p->unserved_by_prio_bps[0], 0, REL);
		ASSERT_INT_EQ(p->n_saturated, 1);
		ASSERT_TRUE(p->arcs[0].saturated);
		ASSERT_DBL_NEAR(p->arcs[0].shadow_price, 1, REL);
		ASSERT_INT_EQ(check_plan(m, p), 0);
	}
	plan_free(p);
	TEST_DONE();
	model_free(m);
}

/*
 * Triangle with A-B down: A->B (3G) must take A-C-B, metric 2 + 5:
 * cost 3G x 7 = 2.1e10; utilisation 0.3 on both 10G links.  A demand of
 * 2 bit/s beside it (1e-10 of a 10G link: the LP's bound tolerance) is
 * still routed whole.
 */
static void
test_down_link(void)
{
	struct model *m = model_new();
	struct plan *p;

	TEST_START("a down link is avoided; a 2 bit/s demand is routed");
	node(m, "A");
	node(m, "B");
	node(m, "C");
	add_link(m, "ab", "A", "B", 1e10, 1, false);
	add_link(m, "ac", "A", "C", 1e10, 2, true);
	add_link(m, "cb", "C", "B", 1e10, 5, true);
	demand(m, "A", "B", 3e9, 0);
	demand(m, "C", "A", 2, 0);
	p = solve_with(m, FORM_PATH);
	ASSERT_TRUE(p != NULL);
	if (p != NULL) {
		ASSERT_INT_EQ(p->status, PLAN_OPTIMAL);
		ASSERT_DBL_NEAR(p->total_cost, 2.1e10 + 2 * 2, REL);
		ASSERT_DBL_NEAR(p->max_util, 0.3, REL);
		ASSERT_DBL_NEAR(p->routes[1].carried_bps, 2, 1e-9);
		ASSERT_DBL_NEAR(p->arcs[0].load_bps, 0, 0);
		ASSERT_INT_EQ(check_plan(m, p), 0);
	}
	plan_free(p);
	TEST_DONE();
	model_free(m);
}

/* ---- the node-arc reference on SNDlib instances ---- */


/* Both formulations on m; returns the count of disagreements. */
static int
compare(struct model *m)
{
	struct plan *p, *q;
	int bad = 0;

	p = solve_with(m, FORM_ARC);
	q = solve_with(m, FORM_PATH);
	if (p == NULL || q == NULL)
		bad++;
	else {
		bad += same_optimum(p, q);
		bad += check_plan(m, q) != 0;
	}
	plan_free(p);
	plan_free(q);
	return bad;
}

/*
 * SNDlib instances (Orlowski et al. 2010), each as published, scaled to
 * over-subscription with two priority classes, and with a link down:
 * the path formulation reaches the node-arc formulation's optimum (the
 * exact reference, itself checked against HiGHS by the reference suite).
 */
static void
test_sndlib(void)
{
	static const char *const names[] = {
		"abilene.txt", "polska.txt", "atlanta.txt", "nobel-eu.txt",
		"geant.txt",
	};
	struct model *m;
	size_t i, k;
	int bad, obj, cases;

	for (i = 0; i < sizeof(names) / sizeof(names[0]); i++) {
		TEST_START(names[i]);
		m = load_sndlib(names[i]);
		ASSERT_TRUE(m != NULL);
		if (m == NULL) {
			TEST_DONE();
			continue;
		}
		bad = 0;
		cases = 0;
		for (obj = 0; obj < 2; obj++) {
			m->policy.objective = obj ? OBJ_BALANCE : OBJ_COST;
			bad += compare(m);
			cases++;
		}
		/* Over-subscribed, two classes. */
		for (k = 0; k < m->n_demands; k++) {
			m->demands[k].rate_bps *= 4;
			m->demands[k].priority = (int)(k % 2);
		}
		for (obj = 0; obj < 2; obj++) {
			m->policy.objective = obj ? OBJ_BALANCE : OBJ_COST;
			bad += compare(m);
			cases++;
		}
		/* As published, headroom 0.8, its first link down. */
		for (k = 0; k < m->n_demands; k++) {
			m->demands[k].rate_bps /= 4;
			m->demands[k].priority = 0;
		}
		m->links[0].up = false;
		m->policy.headroom = 0.8;
		for (obj = 0; obj < 2; obj++) {
			m->policy.objective = obj ? OBJ_BALANCE : OBJ_COST;
			bad += compare(m);
			cases++;
		}
		ASSERT_INT_EQ(cases, 6);
		ASSERT_INT_EQ(bad, 0);
		TEST_DONE();
		model_free(m);
	}
}

/*
 * Random connected networks (a random tree plus extra links, some down,
 * rates over six orders of magnitude, some over-subscribed, three
 * classes), both objectives and two headrooms: the path formulation's
 * plan is a consistent routing with the node-arc formulation's optimum.
 */
static void
test_random(void)
{
	struct model *m;
	char a[16], b[16], id[16];
	unsigned long seed = 11;
	int round, i, n, nl, bad = 0, x, y;

	TEST_START("random networks: same optima as the node-arc LP");
	for (round = 0; round < 40; round++) {
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
		if ((x = compare(m)) != 0)
			printf("# round %d: %d differences\n", round, x);
		bad += x;
		model_free(m);
	}
	ASSERT_INT_EQ(bad, 0);
	TEST_DONE();
}

/* ---- warm re-solves ---- */

/*
 * One kept state through a sequence of changes on nobel-eu (link down,
 * restore, demands +10 %, objective switch, headroom, then changes that
 * only take away, for the warm shortcut): every warm plan
 * equals a node-arc solve of the same model from nothing.  A changed TE
 * metric changes the structure: that solve is a full build.
 */
static void
test_warm(void)
{
	struct engine_state *st = NULL;
	struct model *m;
	struct plan *p, *q;
	size_t k, i;
	int bad = 0, warm = 0, step, shortcuts = 0;

	TEST_START("warm re-solves agree with solves from nothing");
	m = load_sndlib("nobel-eu.txt");
	ASSERT_TRUE(m != NULL);
	if (m == NULL) {
		TEST_DONE();
		return;
	}
	for (step = 0; step < 11; step++) {
		switch (step) {
		case 1:
			m->links[3].up = false;
			break;
		case 2:
			m->links[3].up = true;
			m->links[7].up = false;
			break;
		case 3:
			m->links[7].up = true;
			for (k = 0; k < m->n_demands; k++)
				m->demands[k].rate_bps *= 1.1;
			break;
		case 4:
			m->policy.objective = OBJ_BALANCE;
			break;
		case 5:
			m->links[5].capacity_bps *= 0.5;
			m->links[2].up = false;
			break;
		case 6:
			m->policy.headroom = 0.9;
			for (k = 0; k < m->n_demands; k += 3)
				m->demands[k].rate_bps *= 3;
			/* The kept LP unit is now half a new build's. */
			for (i = 0; i < m->n_links; i++)
				m->links[i].capacity_bps *= 2;
			break;
		case 7:
			/* Small enough to fit: a full balance solve. */
			for (k = 0; k < m->n_demands; k++)
				m->demands[k].rate_bps *= 0.02;
			m->links[2].up = true;
			break;
		case 8:
			/* Only taking away after a balance plan that fit:
			   the warm shortcut (form_path.c) may decide it. */
			m->links[9].up = false;
			break;
		case 9:
			/* Nothing changed: the shortcut again. */
			break;
		case 10:
			/* Some rates up: U may rise past the kept cap, then
			   the full stages run. */
			for (k = 0; k < m->n_demands; k += 5)
				m->demands[k].rate_bps *= 1.05;
			break;
		}
		q = solve_warm(&st, m);
		p = solve_with(m, FORM_ARC);
		if (p == NULL || q == NULL)
			bad++;
		else {
			bad += same_optimum(p, q);
			bad += check_plan(m, q) != 0;
			/* lp_objective is in a new build's LP units. */
			if (!(fabs(stage_lp(p, "cost") - stage_lp(q, "cost")) <=
			    REL * fabs(stage_lp(p, "cost")))) {
				printf("# step %d: cost lp_objective %.10g, "
				    "node-arc %.10g\n", step,
				    stage_lp(q, "cost"), stage_lp(p, "cost"));
				bad++;
			}
			warm += q->warm;
			/* The shortcut's admit and balance run no LP. */
			if (q->n_stages == 3 && q->stages[0].iterations == 0 &&
			    q->stages[1].iterations == 0 && q->warm)
				shortcuts++;
			if (step > 0 && !q->warm)
				printf("# step %d was not warm\n", step);
			if (step > 0 && !(q->moved_bps >= 0))
				bad++;
		}
		plan_free(p);
		plan_free(q);
	}
	ASSERT_INT_EQ(bad, 0);
	ASSERT_INT_EQ(warm, 10);
	/* Steps 8 and 9 take the shortcut. */
	if (shortcuts < 2)
		printf("# %d warm solves took the shortcut\n", shortcuts);
	ASSERT_TRUE(shortcuts >= 2);
	/* A TE metric change rebuilds. */
	for (i = 0; i < m->n_links; i++)
		m->links[i].te_metric += 1;
	q = solve_warm(&st, m);
	p = solve_with(m, FORM_ARC);
	ASSERT_TRUE(p != NULL && q != NULL);
	if (p != NULL && q != NULL) {
		ASSERT_TRUE(!q->warm);
		ASSERT_DBL_NEAR(q->moved_bps, -1, 0);
		ASSERT_INT_EQ(same_optimum(p, q), 0);
	}
	plan_free(p);
	plan_free(q);
	engine_state_free(st);
	model_free(m);
	TEST_DONE();
}

/*
 * Warm edge cases on the triangle A, B, C (10G links, metric 1): a demand
 * whose rate goes from 0 to positive gets paths (A->B 4G: direct, cost
 * 4e9); with every link down it is all unserved; links back up carry it
 * again; a demand added to the list changes the shape and rebuilds.
 */
static void
test_warm_edges(void)
{
	struct engine_state *st = NULL;
	struct model *m = model_new();
	struct plan *p;
	size_t i;

	TEST_START("warm: rate from zero, all links down, a new demand");
	node(m, "A");
	node(m, "B");
	node(m, "C");
	add_link(m, "ab", "A", "B", 1e10, 1, true);
	add_link(m, "ac", "A", "C", 1e10, 1, true);
	add_link(m, "cb", "C", "B", 1e10, 1, true);
	demand(m, "A", "B", 0, 0);
	demand(m, "C", "B", 1e9, 1);
	p = solve_warm(&st, m);
	ASSERT_TRUE(p != NULL && !p->warm);
	plan_free(p);
	m->demands[0].rate_bps = 4e9;
	p = solve_warm(&st, m);
	ASSERT_TRUE(p != NULL);
	if (p != NULL) {
		ASSERT_TRUE(p->warm);
		ASSERT_INT_EQ(p->status, PLAN_OPTIMAL);
		ASSERT_DBL_NEAR(p->total_cost, 5e9, REL);
		ASSERT_INT_EQ(check_plan(m, p), 0);
	}
	plan_free(p);
	for (i = 0; i < m->n_links; i++)
		m->links[i].up = false;
	p = solve_warm(&st, m);
	ASSERT_TRUE(p != NULL);
	if (p != NULL) {
		ASSERT_INT_EQ(p->status, PLAN_PARTIAL);
		ASSERT_DBL_NEAR(p->unserved_bps, 5e9, REL);
		ASSERT_INT_EQ(check_plan(m, p), 0);
	}
	plan_free(p);
	for (i = 0; i < m->n_links; i++)
		m->links[i].up = true;
	p = solve_warm(&st, m);
	ASSERT_TRUE(p != NULL);
	if (p != NULL) {
		ASSERT_INT_EQ(p->status, PLAN_OPTIMAL);
		ASSERT_DBL_NEAR(p->total_cost, 5e9, REL);
		ASSERT_INT_EQ(check_plan(m, p), 0);
	}
	plan_free(p);
	demand(m, "B", "A", 2e9, 0);
	p = solve_warm(&st, m);
	ASSERT_TRUE(p != NULL);
	if (p != NULL) {
		ASSERT_TRUE(!p->warm);
		ASSERT_DBL_NEAR(p->total_cost, 7e9, REL);
		ASSERT_INT_EQ(check_plan(m, p), 0);
	}
	plan_free(p);
	engine_state_free(st);
	model_free(m);
	TEST_DONE();
}

/*
 * keep_paths: the same failure and restore with and without it.  After
 * the restore, the plan that prefers the paths in use moves no more
 * traffic than the one that does not, and its cost stays within
 * keep_paths_tol of the optimum (the node-arc cost optimum).
 */
static void
test_keep_paths(void)
{
	struct engine_state *st[2] = { NULL, NULL };
	struct model *m;
	struct plan *p, *ref;
	double moved[2][3], cost[2];
	int mode, step, bad = 0;

	TEST_START("keep_paths moves no more traffic on fail + restore");
	m = load_sndlib("polska.txt");
	ASSERT_TRUE(m != NULL);
	if (m == NULL) {
		TEST_DONE();
		return;
	}
	ref = solve_with(m, FORM_ARC);
	for (mode = 0; mode < 2; mode++) {
		m->policy.keep_paths = mode == 1;
		m->policy.keep_paths_tol = 0.05;
		for (step = 0; step < 3; step++) {
			m->links[4].up = step != 1;
			p = solve_warm(&st[mode], m);
			if (p == NULL) {
				bad++;
				continue;
			}
			bad += check_plan(m, p) != 0;
			moved[mode][step] = p->moved_bps;
			if (step == 2)
				cost[mode] = p->total_cost;
			plan_free(p);
		}
	}
	ASSERT_INT_EQ(bad, 0);
	ASSERT_TRUE(ref != NULL);
	if (bad == 0 && ref != NULL) {
		printf("# moved without: %.6g %.6g, with: %.6g %.6g\n",
		    moved[0][1], moved[0][2], moved[1][1], moved[1][2]);
		ASSERT_TRUE(moved[1][2] <= moved[0][2] + 1e-6 * ref->demand_bps);
		ASSERT_TRUE(moved[1][1] + moved[1][2] <=
		    moved[0][1] + moved[0][2] + 1e-6 * ref->demand_bps);
		/* The restore moves traffic back without keep_paths. */
		ASSERT_TRUE(moved[0][2] > 0);
		ASSERT_DBL_NEAR(cost[0], ref->total_cost, REL);
		ASSERT_TRUE(cost[1] <= ref->total_cost * (1 + 0.05 + 1e-9));
	}
	plan_free(ref);
	engine_state_free(st[0]);
	engine_state_free(st[1]);
	model_free(m);
	TEST_DONE();
}

static void
test_check_policy(void)
{
	struct model *m = model_new();
	struct err e;

	TEST_START("policy checks: formulation, gap target, keep tolerance");
	node(m, "A");
	node(m, "B");
	add_link(m, "ab", "A", "B", 1e9, 1, true);
	m->policy.formulation = (enum formulation)7;
	err_clear(&e);
	ASSERT_INT_EQ(engine_check(m, &e), ERR_INVALID);
	ASSERT_STR_EQ(e.where, "policy.formulation");
	m->policy.formulation = FORM_PATH;
	m->policy.gap_target = 0.6;
	err_clear(&e);
	ASSERT_INT_EQ(engine_check(m, &e), ERR_INVALID);
	ASSERT_STR_EQ(e.where, "policy.gap_target");
	m->policy.gap_target = 1e-7;
	m->policy.keep_paths_tol = -1;
	err_clear(&e);
	ASSERT_INT_EQ(engine_check(m, &e), ERR_INVALID);
	ASSERT_STR_EQ(e.where, "policy.keep_paths_tol");
	TEST_DONE();
	model_free(m);
}

/* ---- seeds: the live master lent to another thread ---- */

struct seed_job {
	const struct engine_seed *sd;
	struct model *m;	/* the scenario */
	struct plan *q;		/* out */
	bool warm_ok;
};

static void *
seed_thread(void *arg)
{
	struct seed_job *j = arg;
	struct engine_state *st = engine_state_from_seed(j->sd);

	j->warm_ok = st != NULL;
	j->q = solve_warm(&st, j->m);
	engine_state_free(st);
	engine_thread_done();
	return NULL;
}

/*
 * A seed taken after a balance solve on nobel-eu (scaled to fit) is
 * rebuilt on two other threads at once, each solving another link
 * failure from it: both plans are warm, equal node-arc solves of their
 * scenario from nothing, and report traffic moved away from the seed's
 * plan; the original state keeps working after the seed is taken.
 */
static void
test_seed(void)
{
	struct engine_state *st = NULL;
	struct engine_seed *sd;
	struct seed_job job[2];
	pthread_t th[2];
	struct model *m;
	struct plan *p, *q;
	size_t k;
	int i, bad = 0;

	TEST_START("a seed starts warm solves on other threads");
	m = load_sndlib("nobel-eu.txt");
	ASSERT_TRUE(m != NULL);
	if (m == NULL) {
		TEST_DONE();
		return;
	}
	for (k = 0; k < m->n_demands; k++)
		m->demands[k].rate_bps *= 0.02;
	m->policy.objective = OBJ_BALANCE;
	q = solve_warm(&st, m);
	ASSERT_TRUE(q != NULL && q->status == PLAN_OPTIMAL);
	plan_free(q);
	sd = engine_seed_take(st);
	ASSERT_TRUE(sd != NULL);
	for (i = 0; i < 2; i++) {
		job[i].sd = sd;
		job[i].m = model_copy(m);
		job[i].m->links[4 + 7 * i].up = false;
		job[i].q = NULL;
		ASSERT_INT_EQ(pthread_create(&th[i], NULL, seed_thread,
		    &job[i]), 0);
	}
	for (i = 0; i < 2; i++) {
		pthread_join(th[i], NULL);
		p = solve_with(job[i].m, FORM_ARC);
		q = job[i].q;
		ASSERT_TRUE(job[i].warm_ok && p != NULL && q != NULL);
		if (p != NULL && q != NULL) {
			bad += same_optimum(p, q);
			bad += check_plan(job[i].m, q) != 0;
			ASSERT_TRUE(q->warm);
			ASSERT_TRUE(q->moved_bps >= 0);
		}
		plan_free(p);
		plan_free(q);
		model_free(job[i].m);
	}
	ASSERT_INT_EQ(bad, 0);
	engine_seed_free(sd);
	/* The original state is untouched by its seed's use. */
	m->links[2].up = false;
	q = solve_warm(&st, m);
	p = solve_with(m, FORM_ARC);
	ASSERT_TRUE(p != NULL && q != NULL && q->warm);
	if (p != NULL && q != NULL)
		ASSERT_INT_EQ(same_optimum(p, q), 0);
	plan_free(p);
	plan_free(q);
	/* Nothing to seed from. */
	ASSERT_TRUE(engine_seed_take(NULL) == NULL);
	ASSERT_TRUE(engine_state_from_seed(NULL) == NULL);
	engine_state_free(st);
	model_free(m);
	TEST_DONE();
}

int
main(void)
{
	test_two_routes();
	test_priorities();
	test_down_link();
	test_check_policy();
	test_random();
	test_sndlib();
	test_warm();
	test_warm_edges();
	test_keep_paths();
	test_seed();
	engine_thread_done();
	return tap_finish();
}
