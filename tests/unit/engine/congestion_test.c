/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Unit tests of the congestion cost and of the congestion objective. */

/*
 * DESIGN
 * Three kinds of check.  (1) The function Phi against the definition of
 * Fortz and Thorup, "Internet traffic engineering by optimizing OSPF
 * weights", Proc. IEEE INFOCOM 2000, section II: Phi(0) = 0 and slope 1,
 * 3, 10, 70, 500, 5000 on utilisation [0, 1/3), [1/3, 2/3), [2/3, 9/10),
 * [9/10, 1), [1, 11/10), [11/10, inf).  XXX These values are recalled
 * from memory (the paper's text could not be read from here); they are
 * written out below, apart from the engine's table, so a change to either
 * shows.  (2) Small networks whose optima are derived by hand in the
 * comments.  (3) Three SNDlib instances against scipy's HiGHS solving the
 * same LP built independently in Python, whose optima are recorded here
 * with the command that reproduces them.
 */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "../../tap.h"
#include "../../../daemon/engine/congestion.h"
#include "../../../daemon/engine/engine.h"
#include "../../../daemon/engine/sndlib.h"
#include "../../../daemon/base/err.h"
#include "../../../daemon/base/xalloc.h"

#define REL	1e-6	/* tolerance on optima, relative */
#define DATA	"tests/data/sndlib/"

/* ---- helpers ---- */

static void
node(struct model *m, const char *id)
{
	if (model_add_node(m, id, NULL, NULL, "nodes", NULL) != 0)
		abort();
}

static void
add_link(struct model *m, const char *id, const char *a, const char *b,
    double cap, double metric)
{
	if (model_add_link(m, id, a, b, cap, metric, true, "links",
	    NULL) != 0)
		abort();
}

static void
demand(struct model *m, const char *s, const char *t, double rate, int prio)
{
	if (model_add_demand(m, s, t, rate, prio, "demands", NULL) != 0)
		abort();
}

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

/* The objective of the plan's stage called name, or NAN. */
static double
stage_obj(const struct plan *p, const char *name)
{
	size_t i;

	for (i = 0; i < p->n_stages; i++)
		if (strcmp(p->stages[i].name, name) == 0)
			return p->stages[i].objective;
	return NAN;
}

/* The plan's congestion recomputed from its loads with congestion_phi. */
static double
phi_sum(const struct model *m, const struct plan *p)
{
	size_t a;
	double s = 0;

	for (a = 0; a < p->n_arcs; a++)
		if (m->links[a / 2].up)
			s += congestion_phi(p->arcs[a].load_bps,
			    m->links[a / 2].capacity_bps);
	return s;
}

/* ---- (1) the function ---- */

static void
test_table(void)
{
	/* The paper's breakpoints and slopes, written out independently. */
	static const double from[CONGESTION_PIECES] = {
		0, 1.0 / 3, 2.0 / 3, 9.0 / 10, 1, 11.0 / 10 };
	static const double slope[CONGESTION_PIECES] = {
		1, 3, 10, 70, 500, 5000 };
	const struct congestion_piece *pc = congestion_pieces;
	double c = 7e9, u, l, best, line;
	int i, t;

	TEST_START("the pieces are the published breakpoints and slopes");
	for (i = 0; i < CONGESTION_PIECES; i++) {
		ASSERT_DBL_NEAR(pc[i].util_from, from[i], 1e-15);
		ASSERT_DBL_NEAR(pc[i].slope, slope[i], 1e-15);
	}
	TEST_DONE();

	/*
	 * Hand-integrated values at the breakpoints, capacity c:
	 *   Phi(c/3)    = c/3
	 *   Phi(2c/3)   = c/3 + 3 c/3                  = 4c/3
	 *   Phi(9c/10)  = 4c/3 + 10 (9/10 - 2/3) c     = 4c/3 + 7c/3 = 11c/3
	 *   Phi(c)      = 11c/3 + 70 c/10              = 32c/3
	 *   Phi(11c/10) = 32c/3 + 500 c/10             = 182c/3
	 *   Phi(2c)     = 182c/3 + 5000 (2 - 11/10) c  = 182c/3 + 4500 c
	 */
	TEST_START("Phi at the breakpoints, integrated by hand");
	ASSERT_DBL_NEAR(congestion_phi(0, c), 0, 1e-15);
	ASSERT_DBL_NEAR(congestion_phi(-5, c), 0, 1e-15);
	ASSERT_DBL_NEAR(congestion_phi(c / 3, c), c / 3, 1e-12);
	ASSERT_DBL_NEAR(congestion_phi(2 * c / 3, c), 4 * c / 3, 1e-12);
	ASSERT_DBL_NEAR(congestion_phi(0.9 * c, c), 11 * c / 3, 1e-12);
	ASSERT_DBL_NEAR(congestion_phi(c, c), 32 * c / 3, 1e-12);
	ASSERT_DBL_NEAR(congestion_phi(1.1 * c, c), 182 * c / 3, 1e-12);
	ASSERT_DBL_NEAR(congestion_phi(2 * c, c), 182 * c / 3 + 4500 * c,
	    1e-12);
	TEST_DONE();

	/*
	 * The LP's form: Phi = max_i (slope_i l - b_i c) everywhere, which
	 * holds only if each b_i makes the lines meet at the breakpoints.
	 */
	TEST_START("the intercepts make Phi the largest of its lines");
	ASSERT_DBL_NEAR(pc[0].intercept, 0, 1e-15);
	for (t = 0; t <= 1300; t++) {
		u = t / 1000.0;
		l = u * c;
		best = -INFINITY;
		for (i = 0; i < CONGESTION_PIECES; i++) {
			line = pc[i].slope * l - pc[i].intercept * c;
			best = fmax(best, line);
		}
		ASSERT_DBL_NEAR(best / c, congestion_phi(l, c) / c, 1e-12);
	}
	/* Each line is Phi exactly on its own piece. */
	for (i = 0; i < CONGESTION_PIECES; i++) {
		u = pc[i].util_from + 0.01;
		ASSERT_DBL_NEAR(pc[i].slope * u - pc[i].intercept,
		    congestion_phi(u * c, c) / c, 1e-12);
	}
	TEST_DONE();

	TEST_START("Phi scales with load and capacity together");
	for (t = 1; t <= 12; t++) {
		u = t / 10.0;
		ASSERT_DBL_NEAR(congestion_phi(u * 1e10, 1e10) / 1e10,
		    congestion_phi(u * 3, 3) / 3, 1e-12);
	}
	TEST_DONE();
}

/* ---- (2) hand-derived optima ---- */

/*
 * One link A-B of capacity 1e9, one demand of rate d: the load is d and
 * the optimum Phi(d, 1e9), integrated by hand for a load in each piece
 * that a hard capacity allows (the pieces above utilisation 1 are
 * checked on the function above):
 *   0.2 c:  0.2 c
 *   0.5 c:  c/3 + 3 (0.5 - 1/3) c     = 5c/6
 *   0.8 c:  4c/3 + 10 (0.8 - 2/3) c   = 8c/3
 *   0.95 c: 11c/3 + 70 (0.95 - 0.9) c = 43c/6
 *   c:      32c/3
 */
static void
test_single_link(void)
{
	static const double util[] = { 0.2, 0.5, 0.8, 0.95, 1.0 };
	static const double want[] = { 0.2, 5.0 / 6, 8.0 / 3, 43.0 / 6,
	    32.0 / 3 };
	const double c = 1e9;
	struct model *m;
	struct plan *p;
	char name[96];
	size_t i;

	for (i = 0; i < sizeof(util) / sizeof(util[0]); i++) {
		m = model_new();
		m->policy.objective = OBJ_CONGESTION;
		node(m, "A");
		node(m, "B");
		add_link(m, "ab", "A", "B", c, 1);
		demand(m, "A", "B", util[i] * c, 0);
		snprintf(name, sizeof(name), "single link at utilisation %g: "
		    "Phi = %.6g c", util[i], want[i]);
		TEST_START(name);
		p = solve(m);
		ASSERT_TRUE(p != NULL);
		if (p != NULL) {
			ASSERT_INT_EQ(p->status, PLAN_OPTIMAL);
			ASSERT_INT_EQ(p->objective, OBJ_CONGESTION);
			ASSERT_DBL_NEAR(p->congestion, want[i] * c, REL);
			ASSERT_DBL_NEAR(stage_obj(p, "congestion"),
			    want[i] * c, REL);
			ASSERT_DBL_NEAR(p->total_cost, util[i] * c, REL);
			/* The reverse arc carries nothing. */
			ASSERT_DBL_NEAR(p->arcs[1].load_bps, 0, 1e-12);
		}
		plan_free(p);
		TEST_DONE();
		model_free(m);
	}
}

/*
 * Two parallel links A-B, l1 (metric 1) and l2 (metric m2); x on l1,
 * D - x on l2.  Phi1(x) + Phi2(D - x) is convex in x; at the optimum the
 * subgradients [left slope, right slope] of the two links overlap.
 *
 * (a) c1 = c2 = 1e9, D = 4/3 e9, m2 = 10.  At x = 2/3 e9 both links sit
 *     on the breakpoint 2/3 (slopes 3 | 10): moving load either way
 *     costs 10 - 3 = 7 per bit/s, so the split is unique although l1
 *     is ten times cheaper.  Phi* = 2 x 4/3 e9 = 8/3 e9; cost = 2/3 e9
 *     x (1 + 10) = 22/3 e9.  (Cost alone would fill l1: 1e9 and 1/3 e9.)
 * (b) c1 = c2 = 1e9, D = 1e9, m2 = 10.  Both links on slope 3 for x in
 *     [1/3, 2/3] e9 (left of it l1 has slope 1 and l2 slope 10, right of
 *     it the reverse), so Phi* = Phi(1/3) + Phi(2/3) = 5/3 e9 on that
 *     whole range, and the cost stage takes its cheapest end: x = 2/3 e9,
 *     cost = 2/3 + 10/3 = 4e9.  (Balance would split 1/2 : 1/2, cost
 *     5.5e9.)
 * (c) c1 = 3e9, c2 = 1e9, D = 3e9, m2 = 2.  Slopes equal at 10 when
 *     x / c1 in [2/3, 9/10) and (3 - x) / c2 in [2/3, 9/10): x in
 *     [2.1, 7/3] e9.  Phi* = Phi1(7/3 e9) + Phi2(2/3 e9) = (1 + 3 +
 *     10/3) + 4/3 = 26/3 e9; cost picks x = 7/3 e9: 7/3 + 2 x 2/3 =
 *     11/3 e9.
 */
static void
test_parallel(void)
{
	static const struct {
		const char *name;
		double c1, c2, d, m2, phi, cost, x;
	} cs[] = {
		{ "two equal links at a shared breakpoint split 1:1",
		    1e9, 1e9, 4e9 / 3, 10, 8e9 / 3, 22e9 / 3, 2e9 / 3 },
		{ "two equal links on one slope: the cost stage picks the "
		    "cheap end", 1e9, 1e9, 1e9, 10, 5e9 / 3, 4e9, 2e9 / 3 },
		{ "unequal links equalise their marginal slopes at 10",
		    3e9, 1e9, 3e9, 2, 26e9 / 3, 11e9 / 3, 7e9 / 3 },
	};
	struct model *m;
	struct plan *p;
	size_t i;

	for (i = 0; i < sizeof(cs) / sizeof(cs[0]); i++) {
		m = model_new();
		m->policy.objective = OBJ_CONGESTION;
		node(m, "A");
		node(m, "B");
		add_link(m, "l1", "A", "B", cs[i].c1, 1);
		add_link(m, "l2", "A", "B", cs[i].c2, cs[i].m2);
		demand(m, "A", "B", cs[i].d, 0);
		TEST_START(cs[i].name);
		p = solve(m);
		ASSERT_TRUE(p != NULL);
		if (p != NULL) {
			ASSERT_INT_EQ(p->status, PLAN_OPTIMAL);
			ASSERT_DBL_NEAR(stage_obj(p, "congestion"), cs[i].phi,
			    REL);
			ASSERT_DBL_NEAR(p->congestion, cs[i].phi, REL);
			ASSERT_DBL_NEAR(phi_sum(m, p), p->congestion, 1e-12);
			ASSERT_DBL_NEAR(p->total_cost, cs[i].cost, REL);
			ASSERT_DBL_NEAR(p->arcs[0].load_bps, cs[i].x, REL);
			ASSERT_DBL_NEAR(p->arcs[2].load_bps, cs[i].d - cs[i].x,
			    REL);
			ASSERT_STR_EQ(p->stages[p->n_stages - 1].name, "cost");
		}
		plan_free(p);
		TEST_DONE();
		model_free(m);
	}
}

/*
 * Admission first: one link of 1e9 and demands of 1.5e9 (priority 1) and
 * 0.5e9 (priority 0).  Priority 0 is carried whole, priority 1 gets the
 * remaining 0.5e9; the link is full, Phi = 32/3 e9.
 */
static void
test_admission(void)
{
	struct model *m = model_new();
	struct plan *p;

	m->policy.objective = OBJ_CONGESTION;
	node(m, "A");
	node(m, "B");
	add_link(m, "ab", "A", "B", 1e9, 1);
	demand(m, "A", "B", 1.5e9, 1);
	demand(m, "A", "B", 0.5e9, 0);
	TEST_START("admission by priority comes before congestion");
	p = solve(m);
	ASSERT_TRUE(p != NULL);
	if (p != NULL) {
		ASSERT_INT_EQ(p->status, PLAN_PARTIAL);
		ASSERT_DBL_NEAR(p->routes[1].carried_bps, 0.5e9, REL);
		ASSERT_DBL_NEAR(p->routes[0].carried_bps, 0.5e9, REL);
		ASSERT_DBL_NEAR(p->congestion, 32e9 / 3, REL);
		ASSERT_DBL_NEAR(stage_obj(p, "congestion"), 32e9 / 3, REL);
	}
	plan_free(p);
	TEST_DONE();
	model_free(m);
}

/* engine_check accepts the objective; every plan reports congestion. */
static void
test_check_and_report(void)
{
	struct model *m = model_new();
	struct plan *p;
	struct err e;

	node(m, "A");
	node(m, "B");
	add_link(m, "ab", "A", "B", 1e9, 1);
	demand(m, "A", "B", 0.5e9, 0);

	TEST_START("engine_check accepts congestion, rejects objective 3");
	m->policy.objective = OBJ_CONGESTION;
	err_clear(&e);
	ASSERT_INT_EQ(engine_check(m, &e), 0);
	m->policy.objective = (enum objective)3;
	err_clear(&e);
	ASSERT_INT_EQ(engine_check(m, &e), ERR_INVALID);
	ASSERT_STR_EQ(e.where, "policy.objective");
	TEST_DONE();

	/*
	 * Until the path formulation has a congestion stage, the node-arc
	 * one solves congestion whatever the policy asks, and says so.
	 */
	TEST_START("congestion asked of the path formulation is solved node-arc");
	m->policy.objective = OBJ_CONGESTION;
	m->policy.formulation = FORM_PATH;
	err_clear(&e);
	ASSERT_INT_EQ(engine_check(m, &e), 0);
	p = solve(m);
	ASSERT_TRUE(p != NULL);
	if (p != NULL) {
		struct plan *q;

		ASSERT_INT_EQ(p->formulation, FORM_ARC);
		m->policy.formulation = FORM_ARC;
		q = solve(m);
		ASSERT_TRUE(q != NULL);
		if (q != NULL)
			ASSERT_DBL_NEAR(p->congestion, q->congestion, 1e-12);
		plan_free(q);
	}
	plan_free(p);
	m->policy.formulation = FORM_ARC;
	TEST_DONE();

	/* Phi(0.5 c) = 5c/6 whatever objective chose the route. */
	TEST_START("a cost plan reports its congestion too");
	m->policy.objective = OBJ_COST;
	p = solve(m);
	ASSERT_TRUE(p != NULL);
	if (p != NULL) {
		ASSERT_DBL_NEAR(p->congestion, 5e9 / 6, REL);
		ASSERT_TRUE(isnan(stage_obj(p, "congestion")));
	}
	plan_free(p);
	TEST_DONE();
	model_free(m);
}

/*
 * The congestion stage exported as MPS and solved by glpsol (GLPK's
 * stand-alone solver): its optimum in LP units times the scale must be
 * the stage's Phi*, case (a) of test_parallel: 8/3 e9.
 */
static void
test_export(void)
{
	struct model *m = model_new();
	struct solve_opts o;
	struct plan *p = NULL;
	char dir[] = "/tmp/weft-congestion-test-XXXXXX", path[128];
	char cmd[512], line[256];
	double obj = NAN;
	FILE *fp;

	m->policy.objective = OBJ_CONGESTION;
	node(m, "A");
	node(m, "B");
	add_link(m, "l1", "A", "B", 1e9, 1);
	add_link(m, "l2", "A", "B", 1e9, 10);
	demand(m, "A", "B", 4e9 / 3, 0);
	if (mkdtemp(dir) == NULL)
		abort();
	TEST_START("the exported congestion stage solves to Phi* in glpsol");
	snprintf(path, sizeof(path), "%s/cong.mps", dir);
	solve_opts_default(&o);
	o.export_path = path;
	o.export_format = EXPORT_MPS;
	o.export_stage = 1;	/* admit, then congestion */
	ASSERT_INT_EQ(engine_solve(m, &o, &p, NULL), 0);
	if (access("/usr/bin/glpsol", X_OK) != 0) {
		printf("# glpsol missing: skipped\n");
	} else if (p != NULL) {
		ASSERT_STR_EQ(p->stages[1].name, "congestion");
		snprintf(cmd, sizeof(cmd), "glpsol --freemps %s -o %s/out.txt "
		    ">/dev/null 2>&1", path, dir);
		ASSERT_INT_EQ(system(cmd), 0);
		snprintf(path, sizeof(path), "%s/out.txt", dir);
		fp = fopen(path, "r");
		ASSERT_TRUE(fp != NULL);
		while (fp != NULL && fgets(line, sizeof(line), fp) != NULL)
			if (sscanf(line, "Objective: %*s = %lf", &obj) == 1)
				break;
		if (fp != NULL)
			fclose(fp);
		ASSERT_DBL_NEAR(obj * p->scale_bps, 8e9 / 3, REL);
		ASSERT_DBL_NEAR(obj, p->stages[1].lp_objective, REL);
	}
	plan_free(p);
	TEST_DONE();
	snprintf(cmd, sizeof(cmd), "rm -rf %s", dir);
	if (system(cmd) != 0)
		printf("# could not remove %s\n", dir);
	model_free(m);
}

/* ---- (3) SNDlib instances against HiGHS ---- */

static struct model *
load(const char *name)
{
	char path[256];
	struct model *m = NULL;
	struct err e;
	FILE *f;
	char *text;
	long n;

	snprintf(path, sizeof(path), DATA "%s.txt", name);
	if ((f = fopen(path, "rb")) == NULL) {
		perror(path);
		return NULL;
	}
	fseek(f, 0, SEEK_END);
	n = ftell(f);
	fseek(f, 0, SEEK_SET);
	text = xcalloc((size_t)n + 1, 1);
	if (fread(text, 1, (size_t)n, f) != (size_t)n)
		n = -1;
	fclose(f);
	err_clear(&e);
	if (n < 0 || sndlib_parse(text, (size_t)n, &m, &e) != 0)
		printf("# %s: %s: %s\n", name, e.where, e.msg);
	free(text);
	return m;
}

/*
 * Optima of the congestion LP (min sum Phi, then min cost with sum Phi
 * within 1e-7 of it), every capacity times factor, solved by scipy's
 * HiGHS on an LP built independently in Python.  Reproduce with
 *
 *     /usr/bin/python3 tests/reference/congestion_ref.py
 *
 * which prints, per instance: name, factor, min max utilisation, Phi*,
 * the cost at Phi*, and Phi of the final loads (Phi* x (1 + 1e-7): the
 * cost stage uses the slack).
 */
static void
test_sndlib(void)
{
	static const struct {
		const char *name;
		double factor, phi, cost, phi_final;
	} cs[] = {
		{ "abilene", 70, 19184684000000, 8938343414864.2344,
		    19184685918469.105 },
		{ "atlanta", 2.5, 589493000000.00012, 19164136606469.805,
		    589493058949.33777 },
		{ "geant", 10, 12076339333333.314, 6265523377096.9375,
		    12076340540967.684 },
	};
	struct model *m;
	struct plan *p;
	char name[128];
	size_t i, j;

	for (i = 0; i < sizeof(cs) / sizeof(cs[0]); i++) {
		snprintf(name, sizeof(name), "%s x %g: Phi*, cost and the "
		    "plan's congestion agree with HiGHS", cs[i].name,
		    cs[i].factor);
		TEST_START(name);
		m = load(cs[i].name);
		ASSERT_TRUE(m != NULL);
		if (m == NULL) {
			TEST_DONE();
			continue;
		}
		for (j = 0; j < m->n_links; j++)
			m->links[j].capacity_bps *= cs[i].factor;
		m->policy.objective = OBJ_CONGESTION;
		p = solve(m);
		ASSERT_TRUE(p != NULL);
		if (p != NULL) {
			ASSERT_INT_EQ(p->status, PLAN_OPTIMAL);
			ASSERT_DBL_NEAR(stage_obj(p, "congestion"), cs[i].phi,
			    REL);
			ASSERT_DBL_NEAR(p->total_cost, cs[i].cost, REL);
			ASSERT_DBL_NEAR(p->congestion, cs[i].phi_final, REL);
			ASSERT_DBL_NEAR(phi_sum(m, p), p->congestion, 1e-12);
			/* The cost stage stays within the cap. */
			ASSERT_TRUE(p->congestion <= stage_obj(p,
			    "congestion") * (1 + 1e-7) * (1 + 1e-9));
		}
		plan_free(p);
		TEST_DONE();
		model_free(m);
	}
}

int
main(void)
{
	test_table();
	test_single_link();
	test_parallel();
	test_admission();
	test_check_and_report();
	test_export();
	test_sndlib();
	return tap_finish();
}
