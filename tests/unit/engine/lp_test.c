/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Unit tests of the GLPK wrapper on LPs solved by hand. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "../../tap.h"
#include "../../../daemon/engine/lp.h"
#include "../../../daemon/base/err.h"

#define TOL	1e-9

/*
 * min -x - y  s.t.  r0: x + 2y <= 4,  r1: 3x + y <= 6,  x, y >= 0.
 * Both rows bind at the optimum: x = 8/5, y = 6/5, objective -14/5.
 * Duals solve B^T pi = c_B: pi0 + 3 pi1 = -1, 2 pi0 + pi1 = -1, so
 * pi0 = -2/5, pi1 = -1/5 (non-positive: "<=" rows of a minimisation).
 */
static struct lp *
two_by_two(void)
{
	struct lp *lp = lp_new("t");
	int rows[] = { 0, 0, 1, 1 }, cols[] = { 0, 1, 0, 1 };
	double vals[] = { 1, 2, 3, 1 };

	lp_add_rows(lp, 2);
	lp_add_cols(lp, 2);
	lp_set_row_bounds(lp, 0, -INFINITY, 4);
	lp_set_row_bounds(lp, 1, -INFINITY, 6);
	lp_set_col_bounds(lp, 0, 0, INFINITY);
	lp_set_col_bounds(lp, 1, 0, INFINITY);
	lp_set_obj(lp, 0, -1);
	lp_set_obj(lp, 1, -1);
	lp_set_row_name(lp, 0, "first_row");
	lp_set_col_name(lp, 0, "x");
	lp_set_col_name(lp, 1, "y");
	lp_load_matrix(lp, 4, rows, cols, vals);
	lp_scale(lp);
	return lp;
}

static void
test_solve(void)
{
	struct lp_params prm = { .method = LP_PRIMAL };
	struct lp_result res;
	struct lp *lp = two_by_two();

	TEST_START("solves a 2x2 LP to the vertex derived by hand");
	ASSERT_INT_EQ(lp_n_rows(lp), 2);
	ASSERT_INT_EQ(lp_n_cols(lp), 2);
	ASSERT_INT_EQ(lp_solve(lp, &prm, &res), 0);
	ASSERT_INT_EQ(res.status, LP_OPTIMAL);
	ASSERT_DBL_NEAR(res.objective, -2.8, TOL);
	ASSERT_DBL_NEAR(lp_obj_value(lp), -2.8, TOL);
	ASSERT_DBL_NEAR(lp_col_value(lp, 0), 1.6, TOL);
	ASSERT_DBL_NEAR(lp_col_value(lp, 1), 1.2, TOL);
	ASSERT_DBL_NEAR(lp_row_value(lp, 0), 4, TOL);
	ASSERT_DBL_NEAR(lp_row_dual(lp, 0), -0.4, TOL);
	ASSERT_DBL_NEAR(lp_row_dual(lp, 1), -0.2, TOL);
	ASSERT_DBL_NEAR(lp_col_dual(lp, 0), 0, TOL);
	ASSERT_TRUE(res.iterations > 0);
	TEST_DONE();

	TEST_START("a second solve from the optimal basis does no pivots");
	ASSERT_INT_EQ(lp_solve(lp, &prm, &res), 0);
	ASSERT_INT_EQ(res.iterations, 0);
	TEST_DONE();

	/*
	 * Adding r2: x <= 1 cuts the vertex off: y = (4 - 1) / 2 = 1.5
	 * (r1: 3 + 1.5 <= 6 holds), objective -2.5.
	 */
	TEST_START("an added row re-solves with the dual simplex");
	{
		int c = 0;
		double v = 1;

		ASSERT_INT_EQ(lp_add_row(lp, 1, &c, &v, -INFINITY, 1), 2);
	}
	prm.method = LP_DUAL;
	ASSERT_INT_EQ(lp_solve(lp, &prm, &res), 0);
	ASSERT_INT_EQ(res.status, LP_OPTIMAL);
	ASSERT_DBL_NEAR(res.objective, -2.5, TOL);
	ASSERT_DBL_NEAR(lp_col_value(lp, 1), 1.5, TOL);
	TEST_DONE();

	/* y fixed at 0.5: x = min(1, 4 - 1, (6 - 0.5) / 3) = 1, obj -1.5. */
	TEST_START("fixed column bounds are honoured");
	lp_set_col_bounds(lp, 1, 0.5, 0.5);
	ASSERT_INT_EQ(lp_solve(lp, &prm, &res), 0);
	ASSERT_DBL_NEAR(res.objective, -1.5, TOL);
	TEST_DONE();

	/* x >= 5 contradicts r2 (x <= 1): no feasible point. */
	TEST_START("an infeasible LP is an outcome, not an error");
	lp_set_col_bounds(lp, 0, 5, INFINITY);
	prm.method = LP_PRIMAL;
	ASSERT_INT_EQ(lp_solve(lp, &prm, &res), 0);
	ASSERT_INT_EQ(res.status, LP_INFEASIBLE);
	TEST_DONE();
	lp_free(lp);
	lp_free(NULL);
}

static void
test_unbounded(void)
{
	struct lp_params prm = { .method = LP_PRIMAL };
	struct lp_result res;
	struct lp *lp = lp_new(NULL);
	int r = 0, c = 0;
	double v = 1;

	/* min -x s.t. x >= 1 (a row): x grows without bound. */
	TEST_START("an unbounded LP is an outcome, not an error");
	lp_add_rows(lp, 1);
	lp_add_cols(lp, 1);
	lp_set_row_bounds(lp, 0, 1, INFINITY);
	lp_set_col_bounds(lp, 0, -INFINITY, INFINITY);
	lp_set_obj(lp, 0, -1);
	lp_load_matrix(lp, 1, &r, &c, &v);
	ASSERT_INT_EQ(lp_solve(lp, &prm, &res), 0);
	ASSERT_INT_EQ(res.status, LP_UNBOUNDED);
	TEST_DONE();
	lp_free(lp);
}

static void
test_basis(void)
{
	struct lp_params prm = { .method = LP_PRIMAL };
	struct lp_result res;
	struct lp *lp = two_by_two();
	struct lp_basis *b;

	/*
	 * Crash basis: x and y basic, both rows' slacks non-basic, is the
	 * optimal vertex above, so the solve needs no pivot.
	 */
	TEST_START("a crash basis set by hand is used as the start");
	lp_set_col_stat(lp, 0, LP_BASIC);
	lp_set_col_stat(lp, 1, LP_BASIC);
	lp_set_row_stat(lp, 0, LP_NONBASIC);
	lp_set_row_stat(lp, 1, LP_NONBASIC);
	ASSERT_INT_EQ(lp_solve(lp, &prm, &res), 0);
	ASSERT_INT_EQ(res.iterations, 0);
	ASSERT_DBL_NEAR(res.objective, -2.8, TOL);
	TEST_DONE();

	/*
	 * min -x alone is optimal at x = 2, y = 0 (r1 binds), a different
	 * vertex; restoring the saved basis brings the first one back.
	 */
	TEST_START("a saved basis restores a vertex after another solve");
	b = lp_basis_save(lp);
	lp_set_obj(lp, 1, 0);
	ASSERT_INT_EQ(lp_solve(lp, &prm, &res), 0);
	ASSERT_DBL_NEAR(lp_col_value(lp, 0), 2, TOL);
	ASSERT_TRUE(res.iterations > 0);
	lp_set_obj(lp, 1, -1);
	lp_basis_load(lp, b);
	ASSERT_INT_EQ(lp_solve(lp, &prm, &res), 0);
	ASSERT_INT_EQ(res.iterations, 0);
	ASSERT_DBL_NEAR(lp_col_value(lp, 1), 1.2, TOL);
	lp_basis_free(b);
	lp_basis_free(NULL);
	TEST_DONE();

	/* A column appended later gets its entries and joins the LP. */
	TEST_START("a column added after loading takes part");
	{
		int c = lp_add_cols(lp, 1), r = 0;
		double v = 1;

		/*
		 * z in r0 with cost -3 per unit of r0, against -1 for x
		 * and -1/2 for y: z = 4 fills r0, x = y = 0, objective -12.
		 */
		ASSERT_INT_EQ(c, 2);
		lp_set_col_entries(lp, c, 1, &r, &v);
		lp_set_col_bounds(lp, c, 0, INFINITY);
		lp_set_obj(lp, c, -3);
		ASSERT_INT_EQ(lp_solve(lp, &prm, &res), 0);
		ASSERT_DBL_NEAR(res.objective, -12, TOL);
		ASSERT_DBL_NEAR(lp_col_value(lp, c), 4, TOL);
	}
	TEST_DONE();
	lp_free(lp);
}

static void
test_write(void)
{
	struct lp *lp = two_by_two();
	char dir[] = "/tmp/weft-lp-test-XXXXXX", path[128], buf[4096];
	FILE *fp;
	size_t n;

	if (mkdtemp(dir) == NULL)
		abort();
	TEST_START("writes the LP text format and MPS with our names");
	snprintf(path, sizeof(path), "%s/t.lp", dir);
	ASSERT_INT_EQ(lp_write(lp, path, LP_FMT_LP, false), 0);
	fp = fopen(path, "r");
	ASSERT_TRUE(fp != NULL);
	if (fp != NULL) {
		n = fread(buf, 1, sizeof(buf) - 1, fp);
		buf[n] = '\0';
		fclose(fp);
		ASSERT_TRUE(strstr(buf, "first_row") != NULL);
	}
	unlink(path);
	snprintf(path, sizeof(path), "%s/t.mps", dir);
	ASSERT_INT_EQ(lp_write(lp, path, LP_FMT_MPS, false), 0);
	ASSERT_TRUE(access(path, R_OK) == 0);
	unlink(path);
	ASSERT_INT_EQ(lp_write(lp, "/nonexistent-dir/t.lp", LP_FMT_LP, false),
	    ERR_IO);
	rmdir(dir);
	TEST_DONE();
	lp_free(lp);
}

int
main(void)
{
	test_solve();
	test_unbounded();
	test_basis();
	test_write();
	lp_thread_done();
	return tap_finish();
}
