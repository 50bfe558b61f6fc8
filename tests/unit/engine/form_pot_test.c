/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Unit tests of the potential method: its certificate against hand-derived
   optima and the node-arc LP, cut-off demands, the hand-over when the
   matrix does not fit, warm re-solves. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "../../tap.h"
#include "enginetest.h"
#include "../../../daemon/engine/engine.h"
#include "../../../daemon/base/err.h"

#define GAP	0.01	/* gap target of every potential solve here */
#define CERT	1e-9	/* slack on bound <= U* <= max_util, relative */

static struct plan *
solve_as(struct engine_state **st, struct model *m, enum formulation f)
{
	struct plan *p = NULL;
	struct err e;

	err_clear(&e);
	m->policy.formulation = f;
	m->policy.objective = OBJ_BALANCE;
	m->policy.gap_target = f == FORM_POT ? GAP : 1e-7;
	if (engine_solve_warm(st, m, NULL, &p, &e) != 0)
		printf("# engine_solve_warm: %s: %s\n", e.where, e.msg);
	return p;
}

/*
 * The potential plan q's claims against the optimum ustar: a consistent
 * routing of everything, bound <= U* <= max_util, the gap within the
 * target and equal to (max_util - bound) / max_util.  Returns the count of
 * failed claims.
 */
static int
certified(const struct model *m, const struct plan *q, double ustar)
{
	int bad = 0;

	if (q == NULL)
		return 1;
	bad += check_plan(m, q) != 0;
	bad += q->formulation != FORM_POT;
	bad += q->bound > ustar * (1 + CERT);
	bad += q->max_util < ustar * (1 - CERT);
	bad += q->gap > GAP + 1e-12;
	bad += fabs(q->gap - (q->max_util - q->bound) / q->max_util) > 1e-12;
	if (bad)
		printf("# U %.12g bound %.12g U* %.12g gap %.3g formulation %d\n",
		    q->max_util, q->bound, ustar, q->gap, (int)q->formulation);
	return bad;
}

/*
 * U* of m by the node-arc formulation (exact): its balance stage's
 * objective (the plan's max_util may lie up to balance_tol above it,
 * where the cost stage moved).
 */
static double
exact_u(struct model *m, enum plan_status *status)
{
	struct engine_state *st = NULL;
	struct plan *p = solve_as(&st, m, FORM_ARC);
	double u = NAN;
	size_t i;

	for (i = 0; p != NULL && i < p->n_stages; i++)
		if (strcmp(p->stages[i].name, "balance") == 0)
			u = p->stages[i].objective;

	if (status != NULL)
		*status = p != NULL ? p->status : PLAN_EMPTY;
	plan_free(p);
	engine_state_free(st);
	return u;
}

/* tests/data/sndlib/NAME with every capacity x factor, or NULL. */
static struct model *
load_scaled(const char *name, double factor)
{
	struct model *m = load_sndlib(name);
	size_t k;

	for (k = 0; m != NULL && k < m->n_links; k++)
		m->links[k].capacity_bps *= factor;
	return m;
}

static void
test_two_routes(void)
{
	struct model *m = model_new();
	struct engine_state *st = NULL;
	struct plan *p;

	TEST_START("two routes: U* = 20 / (10 + 30) certified");
	node(m, "A");
	node(m, "B");
	node(m, "C");
	add_link(m, "AB", "A", "B", 10, 1, true);
	add_link(m, "AC", "A", "C", 30, 1, true);
	add_link(m, "CB", "C", "B", 30, 1, true);
	demand(m, "A", "B", 20, 0);
	/* Hand-derived: x on AB, 20 - x on A-C-B; x / 10 = (20 - x) / 30
	   gives x = 5 and U* = 0.5. */
	p = solve_as(&st, m, FORM_POT);
	ASSERT_INT_EQ(certified(m, p, 0.5), 0);
	ASSERT_TRUE(p != NULL && p->status == PLAN_OPTIMAL);
	plan_free(p);
	engine_state_free(st);
	model_free(m);
	TEST_DONE();
}

static void
test_sndlib(void)
{
	static const struct {
		const char *name;
		double factor;	/* capacities x factor: the matrix fits */
	} cases[] = {
		{ "abilene.txt", 80 }, { "polska.txt", 10 },
		{ "nobel-eu.txt", 15 }, { "germany50.txt", 10 },
	};
	struct engine_state *st;
	struct model *m;
	struct plan *p;
	size_t i;
	double u;

	for (i = 0; i < sizeof(cases) / sizeof(cases[0]); i++) {
		TEST_START(cases[i].name);
		m = load_scaled(cases[i].name, cases[i].factor);
		ASSERT_TRUE(m != NULL);
		if (m == NULL) {
			TEST_DONE();
			continue;
		}
		st = NULL;
		u = exact_u(m, NULL);
		p = solve_as(&st, m, FORM_POT);
		ASSERT_INT_EQ(certified(m, p, u), 0);
		ASSERT_TRUE(p != NULL && !p->warm);
		plan_free(p);
		/* The same model again: warm, from the kept flows. */
		p = solve_as(&st, m, FORM_POT);
		ASSERT_INT_EQ(certified(m, p, u), 0);
		ASSERT_TRUE(p != NULL && p->warm);
		plan_free(p);
		engine_state_free(st);
		model_free(m);
		TEST_DONE();
	}
}

/*
 * germany50 x 10: each of its first links down and up again, warm from
 * the kept flows (a detour around the link), certified against the
 * node-arc optimum of the changed network; a failure that leaves the
 * matrix unable to fit hands over to the exact stages.
 */
static void
test_warm_failures(void)
{
	struct engine_state *st = NULL;
	struct model *m = load_scaled("germany50.txt", 10);
	struct plan *p;
	enum plan_status es;
	size_t l;
	int bad = 0, warm = 0, n = 0;
	double u;

	TEST_START("germany50: link failures re-solved warm and certified");
	ASSERT_TRUE(m != NULL);
	if (m == NULL) {
		TEST_DONE();
		return;
	}
	p = solve_as(&st, m, FORM_POT);
	plan_free(p);
	for (l = 0; l < 8; l++) {
		m->links[l].up = false;
		u = exact_u(m, &es);
		p = solve_as(&st, m, FORM_POT);
		n++;
		if (es == PLAN_OPTIMAL && u <= 1) {
			bad += certified(m, p, u);
			warm += p != NULL && p->warm;
		} else
			bad += p == NULL || p->formulation != FORM_PATH;
		plan_free(p);
		m->links[l].up = true;
		p = solve_as(&st, m, FORM_POT);
		bad += certified(m, p, exact_u(m, NULL));
		plan_free(p);
	}
	ASSERT_INT_EQ(n, 8);
	ASSERT_INT_EQ(bad, 0);
	ASSERT_TRUE(warm > 0);
	engine_state_free(st);
	model_free(m);
	TEST_DONE();
}

static void
test_cut_off(void)
{
	struct model *m = model_new();
	struct engine_state *st = NULL;
	struct plan *p;

	TEST_START("a demand no up link reaches is unserved, the rest certified");
	node(m, "A");
	node(m, "B");
	node(m, "C");
	node(m, "D");
	add_link(m, "AB", "A", "B", 100, 1, true);
	add_link(m, "BC", "B", "C", 100, 1, true);
	add_link(m, "CA", "C", "A", 100, 1, true);
	add_link(m, "CD", "C", "D", 100, 1, false);
	demand(m, "A", "B", 30, 0);
	demand(m, "A", "D", 7, 0);
	/* A-B direct (x) and A-C-B (30 - x), all capacities 100: x = 15,
	   U* = 0.15. */
	p = solve_as(&st, m, FORM_POT);
	ASSERT_TRUE(p != NULL);
	if (p != NULL) {
		ASSERT_INT_EQ(check_plan(m, p), 0);
		ASSERT_INT_EQ(p->formulation, FORM_POT);
		ASSERT_INT_EQ(p->status, PLAN_PARTIAL);
		ASSERT_TRUE(fabs(p->routes[1].unserved_bps - 7) < 1e-9);
		ASSERT_TRUE(p->bound <= 0.15 * (1 + CERT) &&
		    p->max_util >= 0.15 * (1 - CERT) && p->gap <= GAP);
	}
	plan_free(p);
	engine_state_free(st);
	model_free(m);
	TEST_DONE();
}

static void
test_no_fit(void)
{
	struct engine_state *st = NULL, *st2 = NULL;
	struct model *m = load_sndlib("abilene.txt");
	struct plan *p, *q;

	TEST_START("a matrix that does not fit: the exact path stages decide");
	ASSERT_TRUE(m != NULL);
	if (m == NULL) {
		TEST_DONE();
		return;
	}
	p = solve_as(&st, m, FORM_POT);
	q = solve_as(&st2, m, FORM_PATH);
	ASSERT_TRUE(p != NULL && q != NULL);
	if (p != NULL && q != NULL) {
		ASSERT_INT_EQ(p->formulation, FORM_PATH);
		ASSERT_INT_EQ(p->status, PLAN_PARTIAL);
		ASSERT_TRUE(fabs(p->carried_bps - q->carried_bps) <=
		    1e-6 * q->demand_bps);
		ASSERT_INT_EQ(check_plan(m, p), 0);
	}
	plan_free(p);
	plan_free(q);
	engine_state_free(st);
	engine_state_free(st2);
	model_free(m);
	TEST_DONE();
}

/*
 * One kept state through path, potential and path again, a seed taken
 * and freed between: the seed leaves the potential method's flows with
 * the state (make check-asan-unit runs this under AddressSanitizer).
 */
static void
test_mixed_state(void)
{
	struct engine_state *st = NULL, *st2;
	struct engine_seed *sd;
	struct model *m = load_scaled("polska.txt", 10);
	struct plan *p;
	int bad = 0;

	TEST_START("path, potential, path on one state; seeds own no flows");
	ASSERT_TRUE(m != NULL);
	if (m == NULL) {
		TEST_DONE();
		return;
	}
	p = solve_as(&st, m, FORM_PATH);
	bad += p == NULL;
	plan_free(p);
	p = solve_as(&st, m, FORM_POT);
	bad += p == NULL || p->formulation != FORM_POT;
	plan_free(p);
	p = solve_as(&st, m, FORM_PATH);
	bad += p == NULL || !p->warm;
	plan_free(p);
	sd = engine_seed_take(st);
	bad += sd == NULL;
	st2 = engine_state_from_seed(sd);
	engine_seed_free(sd);
	p = solve_as(&st2, m, FORM_POT);
	bad += p == NULL || p->formulation != FORM_POT;
	plan_free(p);
	engine_state_free(st2);
	p = solve_as(&st, m, FORM_POT);
	bad += p == NULL || !p->warm;
	plan_free(p);
	ASSERT_INT_EQ(bad, 0);
	engine_state_free(st);
	model_free(m);
	TEST_DONE();
}

static void
test_words(void)
{
	enum formulation f = FORM_ARC;

	TEST_START("the policy word \"potential\" round-trips");
	ASSERT_INT_EQ(formulation_parse("potential", &f), 0);
	ASSERT_INT_EQ(f, FORM_POT);
	ASSERT_TRUE(strcmp(formulation_word(FORM_POT), "potential") == 0);
	TEST_DONE();
}

int
main(void)
{
	test_words();
	test_two_routes();
	test_cut_off();
	test_sndlib();
	test_warm_failures();
	test_no_fit();
	test_mixed_state();
	engine_thread_done();
	return tap_finish();
}
