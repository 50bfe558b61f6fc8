/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Unit tests of the query value readers (api/query.c). */

/*
 * The expected values are the rules docs/api.md gives each parameter:
 * wait "seconds, a number > 0 and at most long_poll_max_s", after "a plan
 * revision, an integer >= 0; only with wait", from "a plan revision" (the
 * first is 1), format "lp" (the default) or "mps", stage "-1, the default,
 * is the last" up to the plan's stages.  Each rejection must name the
 * parameter in where, as the error reply's "where" does.
 */

#include <stdint.h>
#include <stdio.h>
#include <string.h>

#include "../../tap.h"
#include "../../../api/query.h"
#include "../../../daemon/base/err.h"
#include "../../../daemon/engine/plan.h"

static int
poll(const char *w, const char *a, double *wp, int64_t *ap, bool *hp,
    struct err *e)
{
	err_clear(e);
	return query_poll(w, a, 300, wp, ap, hp, e);
}

int
main(void)
{
	static const struct {
		const char *wait, *after, *where;
	} bad_polls[] = {
		{ "0", NULL, "wait" },
		{ "-1", NULL, "wait" },
		{ "300.5", NULL, "wait" },
		{ "", NULL, "wait" },
		{ "5s", NULL, "wait" },
		{ "nan", NULL, "wait" },
		{ "inf", NULL, "wait" },
		{ "1e-400", NULL, "wait" },
		{ NULL, "3", "after" },
		{ "5", "-1", "after" },
		{ "5", "+1", "after" },
		{ "5", "", "after" },
		{ "5", "1.5", "after" },
		{ "5", "99999999999999999999", "after" },
	};
	static const char *const bad_from[] = { NULL, "", "0", "-3", "1.0",
	    "x", "99999999999999999999" };
	static const char *const bad_stage[] = { "-2", "", "1.5", "x",
	    "99999999999" };
	struct err e;
	enum export_format fmt;
	double w;
	int64_t a, rev;
	bool has;
	size_t i;
	int stage;
	char s[16];

	TEST_START("no wait: no poll, after unset");
	ASSERT_INT_EQ(poll(NULL, NULL, &w, &a, &has, &e), 0);
	ASSERT_TRUE(w == 0 && !has);
	TEST_DONE();

	TEST_START("wait and after are read");
	ASSERT_INT_EQ(poll("0.25", "12", &w, &a, &has, &e), 0);
	ASSERT_DBL_NEAR(w, 0.25, 0);
	ASSERT_TRUE(has && a == 12);
	ASSERT_INT_EQ(poll("300", NULL, &w, &a, &has, &e), 0);
	ASSERT_DBL_NEAR(w, 300, 0);
	ASSERT_TRUE(!has);
	ASSERT_INT_EQ(poll("5", "0", &w, &a, &has, &e), 0);
	ASSERT_TRUE(has && a == 0);
	TEST_DONE();

	TEST_START("rejects a bad wait or after, naming it");
	for (i = 0; i < sizeof(bad_polls) / sizeof(bad_polls[0]); i++) {
		ASSERT_INT_EQ(poll(bad_polls[i].wait, bad_polls[i].after, &w,
		    &a, &has, &e), ERR_INVALID);
		ASSERT_STR_EQ(e.where, bad_polls[i].where);
		ASSERT_TRUE(w == 0 && !has);
	}
	TEST_DONE();

	TEST_START("from is a revision >= 1");
	err_clear(&e);
	ASSERT_INT_EQ(query_from("1", &rev, &e), 0);
	ASSERT_TRUE(rev == 1);
	ASSERT_INT_EQ(query_from("9007199254740993", &rev, &e), 0);
	ASSERT_TRUE(rev == INT64_C(9007199254740993));
	for (i = 0; i < sizeof(bad_from) / sizeof(bad_from[0]); i++) {
		err_clear(&e);
		ASSERT_INT_EQ(query_from(bad_from[i], &rev, &e), ERR_INVALID);
		ASSERT_STR_EQ(e.where, "from");
	}
	TEST_DONE();

	TEST_START("format lp by default or mps; stage -1 by default");
	err_clear(&e);
	ASSERT_INT_EQ(query_export(NULL, NULL, &fmt, &stage, &e), 0);
	ASSERT_TRUE(fmt == EXPORT_LP && stage == -1);
	ASSERT_INT_EQ(query_export("lp", "0", &fmt, &stage, &e), 0);
	ASSERT_TRUE(fmt == EXPORT_LP && stage == 0);
	snprintf(s, sizeof(s), "%d", PLAN_STAGES_MAX - 1);
	ASSERT_INT_EQ(query_export("mps", s, &fmt, &stage, &e), 0);
	ASSERT_TRUE(fmt == EXPORT_MPS && stage == PLAN_STAGES_MAX - 1);
	TEST_DONE();

	TEST_START("rejects another format or a stage out of range");
	err_clear(&e);
	ASSERT_INT_EQ(query_export("MPS", NULL, &fmt, &stage, &e),
	    ERR_INVALID);
	ASSERT_STR_EQ(e.where, "format");
	snprintf(s, sizeof(s), "%d", PLAN_STAGES_MAX);
	err_clear(&e);
	ASSERT_INT_EQ(query_export(NULL, s, &fmt, &stage, &e), ERR_INVALID);
	ASSERT_STR_EQ(e.where, "stage");
	for (i = 0; i < sizeof(bad_stage) / sizeof(bad_stage[0]); i++) {
		err_clear(&e);
		ASSERT_INT_EQ(query_export("lp", bad_stage[i], &fmt, &stage,
		    &e), ERR_INVALID);
		ASSERT_STR_EQ(e.where, "stage");
	}
	TEST_DONE();

	return tap_finish();
}
