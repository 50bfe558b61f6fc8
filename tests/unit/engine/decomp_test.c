/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Unit tests of flow decomposition on flows built by hand. */
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "../../tap.h"
#include "../../../daemon/engine/decomp.h"
#include "../../../daemon/engine/plan.h"
#include "../../../daemon/base/xalloc.h"

/*
 * Nodes 0..3, arcs: a0 0->1, a1 1->2, a2 2->0, a3 1->3, a4 0->3, a5 2->3.
 * Source 0's flow is built from known parts: path a0 a3 (1), path a4 (1),
 * path a0 a1 (1) to node 2, and the cycle a0 a1 a2 (0.5).  So
 * a0 = 2.5, a1 = 1.5, a2 = 0.5, a3 = 1, a4 = 1, a5 = 0.
 */
static const size_t tail[] = { 0, 1, 2, 1, 0, 2 };
static const size_t head[] = { 1, 2, 0, 3, 3, 3 };

static void
base_flow(double *flow)
{
	const double f[] = { 2.5, 1.5, 0.5, 1, 1, 0 };

	memcpy(flow, f, sizeof(f));
}

static void
free_routes(struct plan_route *rt, size_t n)
{
	size_t i, j;

	for (i = 0; i < n; i++) {
		for (j = 0; j < rt[i].n_paths; j++)
			free(rt[i].paths[j].arcs);
		free(rt[i].paths);
	}
	memset(rt, 0, n * sizeof(*rt));
}

/* Returns 1 unless path p runs from s to t over consecutive arcs. */
static int
bad_path(const struct plan_path *p, size_t s, size_t t)
{
	size_t at = s, i;

	for (i = 0; i < p->n_arcs; i++) {
		if (tail[p->arcs[i]] != at)
			return 1;
		at = head[p->arcs[i]];
	}
	return at != t;
}

static void
test_cycle_and_sinks(void)
{
	struct decomp *d = decomp_new(4, 6, tail, head);
	struct plan_route rt[2];
	double flow[6], left = 0;
	size_t dem[] = { 0, 1 }, dst[] = { 3, 2 }, i;
	double want[] = { 2, 1 };

	memset(rt, 0, sizeof(rt));
	base_flow(flow);
	TEST_START("cancels a cycle and gives each sink its own paths");
	decomp_source(d, 0, flow, 1e-12, 2, dem, dst, want, 10, rt);
	/* Demand 0 -> 3: a0 a3 and a4, 1 each, times scale 10. */
	ASSERT_INT_EQ(rt[0].n_paths, 2);
	ASSERT_DBL_NEAR(rt[0].carried_bps, 20, 1e-12);
	for (i = 0; i < rt[0].n_paths; i++) {
		ASSERT_INT_EQ(bad_path(&rt[0].paths[i], 0, 3), 0);
		ASSERT_DBL_NEAR(rt[0].paths[i].rate_bps, 10, 1e-12);
	}
	/* Demand 0 -> 2: a0 a1, rate 1; the cycle's 0.5 is gone. */
	ASSERT_INT_EQ(rt[1].n_paths, 1);
	ASSERT_DBL_NEAR(rt[1].carried_bps, 10, 1e-12);
	ASSERT_INT_EQ(rt[1].paths[0].n_arcs, 2);
	ASSERT_INT_EQ(bad_path(&rt[1].paths[0], 0, 2), 0);
	for (i = 0; i < 6; i++)
		left += flow[i];
	ASSERT_DBL_NEAR(left, 0, 1e-12);
	TEST_DONE();
	free_routes(rt, 2);

	/*
	 * Two demands share sink 3 (wants 1.5 and 0.5): the first listed
	 * is served first and the second gets the rest; rates sorted
	 * largest first within each route.
	 */
	TEST_START("demands sharing a sink split its paths in list order");
	{
		size_t dem2[] = { 0, 1 }, dst2[] = { 3, 3 };
		double want2[] = { 1.5, 0.5 };

		base_flow(flow);
		decomp_source(d, 0, flow, 1e-12, 2, dem2, dst2, want2, 1, rt);
		ASSERT_DBL_NEAR(rt[0].carried_bps, 1.5, 1e-12);
		ASSERT_DBL_NEAR(rt[1].carried_bps, 0.5, 1e-12);
		ASSERT_INT_EQ(rt[0].n_paths, 2);
		if (rt[0].n_paths == 2) {
			ASSERT_DBL_NEAR(rt[0].paths[0].rate_bps, 1, 1e-12);
			ASSERT_DBL_NEAR(rt[0].paths[1].rate_bps, 0.5, 1e-12);
		}
		ASSERT_INT_EQ(rt[1].n_paths, 1);
		for (i = 0; i < 2; i++)
			ASSERT_INT_EQ(bad_path(&rt[i].paths[0], 0, 3), 0);
	}
	TEST_DONE();
	free_routes(rt, 2);

	/* Only 2 units reach node 3: a want of 3 is carried as 2. */
	TEST_START("a sink wanting more than reaches it gets what reaches it");
	{
		size_t dem3[] = { 0 }, dst3[] = { 3 };
		double want3[] = { 3 };

		base_flow(flow);
		flow[1] = 0.5;	/* node 2's own unit removed: 1->2 holds 0.5 */
		decomp_source(d, 0, flow, 1e-12, 1, dem3, dst3, want3, 1, rt);
		ASSERT_DBL_NEAR(rt[0].carried_bps, 2, 1e-12);
	}
	TEST_DONE();
	free_routes(rt, 1);

	/*
	 * LP dust: a flow of 1e-15 on a5 and -1e-15 on a4's partner is
	 * ignored with eps 1e-13, and a path rate below eps is not made.
	 */
	TEST_START("dust below eps is dropped, not routed");
	{
		size_t dem4[] = { 0 }, dst4[] = { 3 };
		double want4[] = { 2 };

		base_flow(flow);
		flow[5] = 1e-15;
		flow[2] = -1e-15 + 0.5;
		decomp_source(d, 0, flow, 1e-13, 1, dem4, dst4, want4, 1, rt);
		ASSERT_DBL_NEAR(rt[0].carried_bps, 2, 1e-12);
		for (i = 0; i < rt[0].n_paths; i++)
			ASSERT_TRUE(rt[0].paths[i].rate_bps > 1e-13);
	}
	TEST_DONE();
	free_routes(rt, 1);
	decomp_free(d);
	decomp_free(NULL);
}

/* A reproducible pseudo-random number in [0, 1). */
static double
rnd(unsigned long *s)
{
	*s = *s * 6364136223846793005UL + 1442695040888963407UL;
	return (double)(*s >> 11) / 9007199254740992.0;
}

/*
 * A grid of 30 x 30 nodes with arcs both ways; flows built from 3000
 * random walks (paths with cycles allowed) from node 0 to random sinks.
 * Decomposition must hand every sink exactly the sum of its walks and
 * leave no flow behind (cycles cancel, paths cover the rest), and run in
 * well under a second.
 */
static void
test_random_walks(void)
{
	enum { W = 30, N = W * W, WALKS = 3000 };
	size_t *t, *h, m = 0, v, i, k, *dem, *dst, steps, *step;
	double *flow, *want, *got, bad = 0, left = 0;
	struct plan_route *rt;
	struct decomp *d;
	unsigned long seed = 3;

	/* step[4 v + dir]: the arc from v right, left, down, up, or m. */
	t = xcalloc(4 * N, sizeof(*t));
	h = xcalloc(4 * N, sizeof(*h));
	step = xcalloc(4 * N, sizeof(*step));
	for (v = 0; v < 4 * N; v++)
		step[v] = SIZE_MAX;
	for (v = 0; v < N; v++) {
		if (v % W + 1 < W) {
			step[4 * v] = m;
			t[m] = v, h[m++] = v + 1;
			step[4 * (v + 1) + 1] = m;
			t[m] = v + 1, h[m++] = v;
		}
		if (v + W < N) {
			step[4 * v + 2] = m;
			t[m] = v, h[m++] = v + W;
			step[4 * (v + W) + 3] = m;
			t[m] = v + W, h[m++] = v;
		}
	}
	flow = xcalloc(m, sizeof(*flow));
	dem = xcalloc(WALKS, sizeof(*dem));
	dst = xcalloc(WALKS, sizeof(*dst));
	want = xcalloc(WALKS, sizeof(*want));
	got = xcalloc(N, sizeof(*got));
	rt = xcalloc(WALKS, sizeof(*rt));
	for (k = 0; k < WALKS; k++) {
		double r = 0.001 + rnd(&seed);
		size_t target = 1 + (size_t)(rnd(&seed) * (N - 1)), dir;

		/* Wander, then walk straight (across, then down) to target. */
		v = 0;
		for (steps = 0; steps < 20; steps++) {
			do
				dir = (size_t)(rnd(&seed) * 4);
			while (step[4 * v + dir] == SIZE_MAX);
			i = step[4 * v + dir];
			flow[i] += r;
			v = h[i];
		}
		while (v != target) {
			dir = v % W < target % W ? 0 : v % W > target % W ? 1 :
			    v / W < target / W ? 2 : 3;
			i = step[4 * v + dir];
			flow[i] += r;
			v = h[i];
		}
		dem[k] = k;
		dst[k] = target;
		want[k] = r;
	}
	d = decomp_new(N, m, t, h);
	TEST_START("random walks on a grid decompose exactly, leaving nothing");
	decomp_source(d, 0, flow, 1e-12, WALKS, dem, dst, want, 1, rt);
	for (k = 0; k < WALKS; k++) {
		got[dst[k]] += rt[k].carried_bps;
		got[dst[k]] -= want[k];
		for (i = 0; i < rt[k].n_paths; i++)
			for (v = 0; v + 1 < rt[k].paths[i].n_arcs; v++)
				if (h[rt[k].paths[i].arcs[v]] !=
				    t[rt[k].paths[i].arcs[v + 1]])
					bad++;
	}
	for (v = 0; v < N; v++)
		bad += fabs(got[v]) > 1e-9;
	for (i = 0; i < m; i++)
		left += flow[i];
	ASSERT_DBL_NEAR(bad, 0, 0);
	ASSERT_DBL_NEAR(left, 0, 1e-9);
	TEST_DONE();
	free_routes(rt, WALKS);
	decomp_free(d);
	free(t);
	free(h);
	free(step);
	free(flow);
	free(dem);
	free(dst);
	free(want);
	free(got);
	free(rt);
}

int
main(void)
{
	test_cycle_and_sinks();
	test_random_walks();
	return tap_finish();
}
