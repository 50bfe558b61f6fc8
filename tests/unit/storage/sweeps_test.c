/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Unit tests for stored sweeps: round trip, refusals, interruption, ids. */

/*
 * Each case uses fresh database files in a temporary directory under /tmp,
 * removed at the end.  What storage says is checked against the sqlite3
 * command-line shell (/usr/bin/sqlite3), a separate program reading the
 * same file.  Timestamps are checked for the ISO 8601 form of RFC 3339
 * section 5.6 ("2026-12-02T07:10:00Z") and against the C library's own
 * clock: a sweep created between two readings of time(3) carries a time
 * between them (such strings sort in time order).  Other expected values
 * are worked out by hand beside each check.
 */

#include <dirent.h>
#include <math.h>
#include <regex.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <unistd.h>

#include "../../tap.h"
#include "dbtest.h"
#include "../../../storage/db.h"
#include "../../../daemon/base/err.h"
#include "../../../daemon/base/xalloc.h"
#include "../../../daemon/engine/model.h"

static int64_t
revision(struct db *db)
{
	int64_t rev = -1;

	if (db_revision(db, &rev, NULL) != 0)
		return -1;
	return rev;
}

/* The C library's UTC time now, in the form the store writes. */
static void
now_iso(char *buf, size_t len)
{
	time_t t = time(NULL);
	struct tm tm;

	gmtime_r(&t, &tm);
	strftime(buf, len, "%Y-%m-%dT%H:%M:%SZ", &tm);
}

/* Whether s is an RFC 3339 UTC date-time with whole seconds. */
static bool
is_iso_utc(const char *s)
{
	regex_t re;
	bool ok;

	if (regcomp(&re, "^[0-9]{4}-[0-9]{2}-[0-9]{2}T[0-9]{2}:[0-9]{2}:"
	    "[0-9]{2}Z$", REG_EXTENDED | REG_NOSUB) != 0)
		return false;
	ok = regexec(&re, s, 0, NULL, 0) == 0;
	regfree(&re);
	return ok;
}

/* A topology with one link, so the store has a model revision (1). */
static struct db *
open_new(char *path, size_t len)
{
	struct model *m = model_new();
	struct db *db = NULL;
	int64_t rev;

	new_path(path, len);
	model_add_node(m, "u", NULL, NULL, "nodes", NULL);
	model_add_node(m, "v", NULL, NULL, "nodes", NULL);
	model_add_link(m, "uv", "u", "v", 1e9, 1, true, "links", NULL);
	if (db_open(path, &db, NULL) != 0 ||
	    db_put_topology(db, m, &rev, NULL) != 0) {
		db_close(db);
		db = NULL;
	}
	model_free(m);
	return db;
}

static struct db_sweep_result
result(long idx, const char *fail, const char *status, double util)
{
	struct db_sweep_result x;

	memset(&x, 0, sizeof(x));
	x.idx = idx;
	x.fail_json = (char *)fail;
	snprintf(x.status, sizeof(x.status), "%s", status);
	x.max_util = util;
	x.carried_bps = 1e12;
	x.unserved_bps = 0;
	x.total_cost = 3.2e12;
	x.solve_ms = 310;
	x.moved_bps = 2e10;
	return x;
}

static void
test_round_trip(void)
{
	struct db_sweep_result rs[2], *got = NULL;
	struct db_sweep *s = NULL, *list = NULL;
	struct db *db = NULL;
	struct err e = { 0 };
	char path[128], before[32], after[32];
	int64_t id = 0, id2 = 0;
	size_t n = 0;

	TEST_START("creates, advances, finishes, reads, lists and deletes a "
	    "sweep; the model revision stays");
	db = open_new(path, sizeof(path));
	ASSERT_TRUE(db != NULL);
	if (db == NULL)
		goto out;
	now_iso(before, sizeof(before));
	ASSERT_INT_EQ(db_sweep_create(db, "links", 12, 9, 3,
	    "{\"kind\":\"links\",\"scale\":1}", &id, &e), 0);
	now_iso(after, sizeof(after));
	ASSERT_INT_EQ(id, 1);
	ASSERT_INT_EQ(revision(db), 1);

	ASSERT_INT_EQ(db_sweep_get(db, id, &s, &e), 0);
	if (s != NULL) {
		ASSERT_INT_EQ(s->id, 1);
		ASSERT_STR_EQ(s->kind, "links");
		ASSERT_STR_EQ(s->state, "running");
		ASSERT_INT_EQ(s->model_revision, 12);
		ASSERT_INT_EQ(s->plan_revision, 9);
		ASSERT_INT_EQ(s->total, 3);
		ASSERT_INT_EQ(s->done, 0);
		ASSERT_DBL_NEAR(s->elapsed_s, 0, 0);
		ASSERT_TRUE(is_iso_utc(s->created_at));
		ASSERT_TRUE(strcmp(before, s->created_at) <= 0 &&
		    strcmp(s->created_at, after) <= 0);
		ASSERT_STR_EQ(s->finished_at, "");
		ASSERT_STR_EQ(s->params_json, "{\"kind\":\"links\",\"scale\":1}");
		ASSERT_TRUE(s->report_json == NULL && s->error == NULL);
	}
	db_sweep_free(s);
	s = NULL;

	/* Two results out of order; the second failed, its numbers NaN. */
	rs[0] = result(2, "{\"links\":[\"L3\"]}", "partial", 1.0);
	rs[0].unserved_bps = 4e9;
	rs[1] = result(0, "{\"links\":[\"L1\"]}", "failed", NAN);
	rs[1].error = "time limit";
	rs[1].carried_bps = rs[1].unserved_bps = rs[1].total_cost = NAN;
	rs[1].moved_bps = -1;
	ASSERT_INT_EQ(db_sweep_progress(db, id, 2, 1.5, rs, 2, &e), 0);
	ASSERT_SHELL(path, "SELECT done, elapsed_s FROM sweeps WHERE id = 1;",
	    "2|1.5");
	/* SQLite holds the NaNs as NULL (printed empty by the shell). */
	ASSERT_SHELL(path, "SELECT group_concat(idx || ':' || status || ':' || "
	    "coalesce(max_util, 'null') || ':' || coalesce(error, '-')) FROM "
	    "(SELECT * FROM sweep_results ORDER BY idx);",
	    "0:failed:null:time limit,2:partial:1.0:-");
	rs[0] = result(1, "{\"links\":[\"L2\"]}", "optimal", 0.7);
	ASSERT_INT_EQ(db_sweep_progress(db, id, 3, 2.75, rs, 1, &e), 0);
	ASSERT_INT_EQ(revision(db), 1);

	ASSERT_INT_EQ(db_sweep_results(db, id, &got, &n, &e), 0);
	ASSERT_INT_EQ(n, 3);
	if (n == 3) {
		ASSERT_INT_EQ(got[0].idx, 0);
		ASSERT_INT_EQ(got[1].idx, 1);
		ASSERT_INT_EQ(got[2].idx, 2);
		ASSERT_STR_EQ(got[0].fail_json, "{\"links\":[\"L1\"]}");
		ASSERT_STR_EQ(got[0].status, "failed");
		ASSERT_STR_EQ(got[0].error, "time limit");
		ASSERT_TRUE(isnan(got[0].max_util) && isnan(got[0].total_cost));
		ASSERT_DBL_NEAR(got[0].moved_bps, -1, 0);
		ASSERT_DBL_NEAR(got[0].solve_ms, 310, 0);
		ASSERT_STR_EQ(got[1].status, "optimal");
		ASSERT_TRUE(got[1].error == NULL);
		ASSERT_DBL_NEAR(got[1].max_util, 0.7, 0);
		ASSERT_DBL_NEAR(got[1].carried_bps, 1e12, 0);
		ASSERT_DBL_NEAR(got[1].moved_bps, 2e10, 0);
		ASSERT_STR_EQ(got[2].fail_json, "{\"links\":[\"L3\"]}");
		ASSERT_DBL_NEAR(got[2].unserved_bps, 4e9, 0);
		ASSERT_DBL_NEAR(got[2].total_cost, 3.2e12, 0);
	}
	db_sweep_results_free(got, n);
	got = NULL;

	ASSERT_INT_EQ(db_sweep_finish(db, id, "done", 4.25,
	    "{\"headroom\":0.8}", NULL, &e), 0);
	ASSERT_INT_EQ(db_sweep_get(db, id, &s, &e), 0);
	if (s != NULL) {
		ASSERT_STR_EQ(s->state, "done");
		ASSERT_INT_EQ(s->done, 3);
		ASSERT_DBL_NEAR(s->elapsed_s, 4.25, 0);
		ASSERT_TRUE(is_iso_utc(s->finished_at));
		ASSERT_TRUE(strcmp(s->created_at, s->finished_at) <= 0);
		ASSERT_STR_EQ(s->report_json, "{\"headroom\":0.8}");
		ASSERT_TRUE(s->error == NULL);
	}
	db_sweep_free(s);
	s = NULL;

	/* A second sweep lists first. */
	ASSERT_INT_EQ(db_sweep_create(db, "link-pairs", 12, 9, 10, "{}", &id2,
	    &e), 0);
	ASSERT_INT_EQ(id2, 2);
	ASSERT_INT_EQ(db_sweep_list(db, &list, &n, &e), 0);
	ASSERT_INT_EQ(n, 2);
	if (n == 2) {
		ASSERT_INT_EQ(list[0].id, 2);
		ASSERT_STR_EQ(list[0].kind, "link-pairs");
		ASSERT_STR_EQ(list[0].state, "running");
		ASSERT_INT_EQ(list[0].total, 10);
		ASSERT_INT_EQ(list[1].id, 1);
		ASSERT_STR_EQ(list[1].state, "done");
		ASSERT_INT_EQ(list[1].done, 3);
		ASSERT_TRUE(list[1].finished_at[0] != '\0');
	}
	db_sweeps_free(list, n);
	list = NULL;

	/* Deleting: a running sweep is refused, a finished one goes with
	   its results. */
	ASSERT_INT_EQ(db_sweep_delete(db, id2, &e), ERR_CONFLICT);
	ASSERT_STR_EQ(e.where, "id");
	err_clear(&e);
	ASSERT_INT_EQ(db_sweep_delete(db, id, &e), 0);
	ASSERT_SHELL(path, "SELECT count(*) FROM sweep_results;", "0");
	ASSERT_SHELL(path, "SELECT group_concat(id) FROM sweeps;", "2");
	ASSERT_INT_EQ(db_sweep_get(db, id, &s, &e), ERR_NOTFOUND);
	ASSERT_TRUE(s == NULL);
	err_clear(&e);
	ASSERT_INT_EQ(db_sweep_results(db, id, &got, &n, &e), ERR_NOTFOUND);
	ASSERT_TRUE(got == NULL && n == 0);
	ASSERT_INT_EQ(db_sweep_delete(db, id, NULL), ERR_NOTFOUND);
	ASSERT_INT_EQ(revision(db), 1);
	ASSERT_SHELL(path, "SELECT value FROM meta "
	    "WHERE key = 'model_revision';", "1");
	ASSERT_SHELL(path, "PRAGMA foreign_key_check;", "");
out:
	db_close(db);
	TEST_DONE();
}

static void
test_refusals(void)
{
	struct db_sweep_result rs[2];
	struct db_sweep *s = NULL;
	struct db *db = NULL;
	struct err e = { 0 };
	char path[128];
	int64_t id = 0, other = 99;

	TEST_START("refuses bad sweeps and results; a refused batch writes "
	    "nothing");
	db = open_new(path, sizeof(path));
	ASSERT_TRUE(db != NULL);
	if (db == NULL)
		goto out;
	ASSERT_INT_EQ(db_sweep_create(db, "paths", 1, 1, 3, "{}", &other, &e),
	    ERR_INVALID);
	ASSERT_STR_EQ(e.where, "kind");
	ASSERT_INT_EQ(other, 0);
	err_clear(&e);
	ASSERT_INT_EQ(db_sweep_create(db, "nodes", 1, 1, -1, "{}", &other, &e),
	    ERR_INVALID);
	ASSERT_STR_EQ(e.where, "total");
	ASSERT_INT_EQ(db_sweep_create(db, "nodes", 1, 1, 3, NULL, &other,
	    NULL), ERR_INVALID);
	ASSERT_SHELL(path, "SELECT count(*) FROM sweeps;", "0");

	err_clear(&e);
	ASSERT_INT_EQ(db_sweep_create(db, "srlgs", 1, 1, 3, "{}", &id, &e), 0);
	rs[0] = result(0, "{\"srlgs\":[12]}", "optimal", 0.5);
	rs[1] = result(1, "{\"srlgs\":[13]}", "optimal", 0.5);

	ASSERT_INT_EQ(db_sweep_progress(db, id + 1, 1, 0, rs, 1, &e),
	    ERR_NOTFOUND);
	ASSERT_STR_EQ(e.where, "id");
	err_clear(&e);
	ASSERT_INT_EQ(db_sweep_progress(db, id, 4, 0, rs, 1, &e),
	    ERR_INVALID);
	ASSERT_STR_EQ(e.where, "done");
	err_clear(&e);
	ASSERT_INT_EQ(db_sweep_progress(db, id, 1, NAN, rs, 1, &e),
	    ERR_INVALID);
	ASSERT_STR_EQ(e.where, "elapsed_s");
	err_clear(&e);
	rs[1].idx = 3;		/* total is 3: indices 0, 1, 2 */
	ASSERT_INT_EQ(db_sweep_progress(db, id, 2, 0, rs, 2, &e),
	    ERR_INVALID);
	ASSERT_STR_EQ(e.where, "results[1].idx");
	err_clear(&e);
	rs[1].idx = 1;
	snprintf(rs[1].status, sizeof(rs[1].status), "feasible");
	ASSERT_INT_EQ(db_sweep_progress(db, id, 2, 0, rs, 2, &e),
	    ERR_INVALID);
	ASSERT_STR_EQ(e.where, "results[1].status");
	snprintf(rs[1].status, sizeof(rs[1].status), "empty");

	/* Index 0 once, then a batch that repeats it: the whole batch
	   (index 1 too) and its counters are refused. */
	err_clear(&e);
	ASSERT_INT_EQ(db_sweep_progress(db, id, 1, 0.5, rs, 1, &e), 0);
	rs[0].idx = 1;
	rs[1].idx = 0;
	ASSERT_INT_EQ(db_sweep_progress(db, id, 3, 0.75, rs, 2, &e),
	    ERR_CONFLICT);
	ASSERT_STR_EQ(e.where, "results[1].idx");
	ASSERT_SHELL(path, "SELECT group_concat(idx) FROM sweep_results;",
	    "0");
	ASSERT_SHELL(path, "SELECT done, elapsed_s FROM sweeps;", "1|0.5");

	err_clear(&e);
	ASSERT_INT_EQ(db_sweep_finish(db, id, "running", 1, NULL, NULL, &e),
	    ERR_INVALID);
	ASSERT_STR_EQ(e.where, "state");
	err_clear(&e);
	ASSERT_INT_EQ(db_sweep_finish(db, id + 7, "done", 1, NULL, NULL, &e),
	    ERR_NOTFOUND);
	ASSERT_STR_EQ(e.where, "id");

	/* A failed sweep says why. */
	err_clear(&e);
	ASSERT_INT_EQ(db_sweep_finish(db, id, "failed", 1, NULL,
	    "the database is full", &e), 0);
	ASSERT_INT_EQ(db_sweep_get(db, id, &s, &e), 0);
	if (s != NULL) {
		ASSERT_STR_EQ(s->state, "failed");
		ASSERT_STR_EQ(s->error, "the database is full");
		ASSERT_TRUE(s->report_json == NULL);
	}
	db_sweep_free(s);
	ASSERT_INT_EQ(revision(db), 1);
out:
	db_close(db);
	TEST_DONE();
}

static void
test_interrupted(void)
{
	struct db_sweep_result rs[1];
	struct db_sweep *s = NULL;
	struct db_sweep_result *got = NULL;
	struct db *db = NULL;
	struct err e = { 0 };
	char path[128], done_at[32] = "";
	int64_t run = 0, fin = 0;
	size_t n = 0;

	TEST_START("a sweep left running becomes interrupted after close and "
	    "reopen; its results and finished sweeps stay");
	db = open_new(path, sizeof(path));
	ASSERT_TRUE(db != NULL);
	if (db == NULL)
		goto out;
	ASSERT_INT_EQ(db_sweep_create(db, "nodes", 1, 1, 2, "{}", &fin, &e),
	    0);
	ASSERT_INT_EQ(db_sweep_finish(db, fin, "cancelled", 0.5, "{}", NULL,
	    &e), 0);
	ASSERT_INT_EQ(db_sweep_get(db, fin, &s, &e), 0);
	if (s != NULL)
		snprintf(done_at, sizeof(done_at), "%s", s->finished_at);
	db_sweep_free(s);
	s = NULL;
	ASSERT_INT_EQ(db_sweep_create(db, "links", 1, 1, 2, "{}", &run, &e),
	    0);
	rs[0] = result(1, "{\"links\":[\"uv\"]}", "empty", 0);
	ASSERT_INT_EQ(db_sweep_progress(db, run, 1, 2.5, rs, 1, &e), 0);
	db_close(db);
	db = NULL;
	ASSERT_SHELL(path, "SELECT state, finished_at IS NULL FROM sweeps "
	    "ORDER BY id;", "cancelled|0\nrunning|1");

	ASSERT_INT_EQ(db_open(path, &db, &e), 0);
	ASSERT_SHELL(path, "SELECT state, finished_at IS NULL FROM sweeps "
	    "ORDER BY id;", "cancelled|0\ninterrupted|0");
	ASSERT_INT_EQ(db_sweep_get(db, run, &s, &e), 0);
	if (s != NULL) {
		ASSERT_STR_EQ(s->state, "interrupted");
		ASSERT_TRUE(is_iso_utc(s->finished_at));
		ASSERT_INT_EQ(s->done, 1);
		ASSERT_DBL_NEAR(s->elapsed_s, 2.5, 0);
	}
	db_sweep_free(s);
	s = NULL;
	ASSERT_INT_EQ(db_sweep_results(db, run, &got, &n, &e), 0);
	ASSERT_INT_EQ(n, 1);
	if (n == 1)
		ASSERT_STR_EQ(got[0].fail_json, "{\"links\":[\"uv\"]}");
	db_sweep_results_free(got, n);
	ASSERT_INT_EQ(db_sweep_get(db, fin, &s, &e), 0);
	if (s != NULL) {
		ASSERT_STR_EQ(s->state, "cancelled");
		ASSERT_STR_EQ(s->finished_at, done_at);
	}
	db_sweep_free(s);
	/* Not running any more: it may be deleted. */
	ASSERT_INT_EQ(db_sweep_delete(db, run, &e), 0);
	ASSERT_INT_EQ(revision(db), 1);
out:
	db_close(db);
	TEST_DONE();
}

static void
test_second_connection(void)
{
	struct db *a = NULL, *b = NULL, *c = NULL;
	struct err e = { 0 };
	char path[128];
	int64_t id = 0;

	TEST_START("a second connection of the same process leaves a running "
	    "sweep running");
	a = open_new(path, sizeof(path));
	ASSERT_TRUE(a != NULL);
	if (a == NULL)
		goto out;
	ASSERT_INT_EQ(db_sweep_create(a, "links", 1, 1, 1, "{}", &id, &e), 0);
	ASSERT_INT_EQ(db_open(path, &b, &e), 0);
	ASSERT_SHELL(path, "SELECT state FROM sweeps;", "running");
	db_close(b);
	b = NULL;
	ASSERT_SHELL(path, "SELECT state FROM sweeps;", "running");
	/* The sweep's own connection still writes to it. */
	ASSERT_INT_EQ(db_sweep_finish(a, id, "done", 1, "{}", NULL, &e), 0);
	ASSERT_INT_EQ(db_sweep_create(a, "links", 1, 1, 1, "{}", &id, &e), 0);
	db_close(a);
	a = NULL;
	/* Every connection closed: the next open is a new start. */
	ASSERT_INT_EQ(db_open(path, &c, &e), 0);
	ASSERT_SHELL(path, "SELECT group_concat(state) FROM (SELECT state "
	    "FROM sweeps ORDER BY id);", "done,interrupted");
out:
	db_close(a);
	db_close(b);
	db_close(c);
	TEST_DONE();
}

static void
test_ids(void)
{
	struct db_sweep *list = NULL;
	struct db *db = NULL;
	struct err e = { 0 };
	char path[128];
	int64_t a = 0, b = 0, c = 0;
	size_t n = 9;

	TEST_START("an empty list; ids are not reused after a delete");
	db = open_new(path, sizeof(path));
	ASSERT_TRUE(db != NULL);
	if (db == NULL)
		goto out;
	ASSERT_INT_EQ(db_sweep_list(db, &list, &n, &e), 0);
	ASSERT_INT_EQ(n, 0);
	ASSERT_TRUE(list == NULL);
	ASSERT_INT_EQ(db_sweep_create(db, "links", 1, 1, 0, "{}", &a, &e), 0);
	ASSERT_INT_EQ(db_sweep_create(db, "nodes", 1, 1, 0, "{}", &b, &e), 0);
	ASSERT_INT_EQ(db_sweep_finish(db, b, "done", 0, NULL, NULL, &e), 0);
	ASSERT_INT_EQ(db_sweep_delete(db, b, &e), 0);
	ASSERT_INT_EQ(db_sweep_create(db, "srlgs", 1, 1, 0, "{}", &c, &e), 0);
	ASSERT_INT_EQ(a, 1);
	ASSERT_INT_EQ(b, 2);
	ASSERT_INT_EQ(c, 3);
out:
	db_close(db);
	TEST_DONE();
}

int
main(void)
{
	if (mkdtemp(tmpdir) == NULL) {
		perror("mkdtemp");
		return 1;
	}
	test_round_trip();
	test_refusals();
	test_interrupted();
	test_second_connection();
	test_ids();
	rm_tmpdir();
	return tap_finish();
}
