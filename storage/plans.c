/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The plan history: summaries of published plans, newest kept. */

/*
 * Recording a plan is not a model change: it does not bump the model
 * revision (a bump would make the solver plan again, forever).
 */

#include <time.h>

#include <sqlite3.h>

#include "db.h"
#include "db_internal.h"
#include "../daemon/base/err.h"

int
db_record_plan(struct db *db, int64_t plan_revision, int64_t
    model_revision, const char *summary_json, int keep, struct err *e)
{
	sqlite3_stmt *st = NULL;
	int r = ERR_INTERNAL, rc;

	if (plan_revision <= 0) {
		r = err_set(e, ERR_INVALID, "plan_revision",
		    "plan revision must be positive");
		goto out;
	}
	if (summary_json == NULL) {
		r = err_set(e, ERR_INVALID, "summary_json", "no plan summary");
		goto out;
	}
	if (keep < 1) {
		r = err_set(e, ERR_INVALID, "keep",
		    "must keep at least one plan");
		goto out;
	}
	if ((r = db_begin(db, true, e)) != 0)
		goto out;
	if ((r = db_prepare(db, "INSERT INTO plan_history (plan_revision, "
	    "model_revision, created_at, summary_json) "
	    "VALUES (?1, ?2, ?3, ?4)", &st, e)) != 0)
		goto out;
	if ((rc = sqlite3_bind_int64(st, 1, plan_revision)) != SQLITE_OK ||
	    (rc = sqlite3_bind_int64(st, 2, model_revision)) != SQLITE_OK ||
	    (rc = sqlite3_bind_int64(st, 3, (sqlite3_int64)time(NULL))) !=
	    SQLITE_OK ||
	    (rc = sqlite3_bind_text(st, 4, summary_json, -1,
	    SQLITE_STATIC)) != SQLITE_OK) {
		r = db_fail(db, rc, "binding a plan", e);
		goto out;
	}
	/* plan_revision is the primary key: a revision recorded before
	   clashes here. */
	rc = sqlite3_step(st);
	if (rc == SQLITE_CONSTRAINT_PRIMARYKEY) {
		r = err_set(e, ERR_CONFLICT, "plan_revision", "plan revision "
		    "%lld is already recorded", (long long)plan_revision);
		goto out;
	}
	if (rc != SQLITE_DONE) {
		r = db_fail(db, rc, "recording a plan", e);
		goto out;
	}
	sqlite3_finalize(st);
	st = NULL;

	/* Everything at or below the keep+1-th newest goes. */
	if ((r = db_prepare(db, "DELETE FROM plan_history WHERE plan_revision "
	    "<= (SELECT plan_revision FROM plan_history "
	    "ORDER BY plan_revision DESC LIMIT 1 OFFSET ?1)", &st, e)) != 0)
		goto out;
	if ((rc = sqlite3_bind_int(st, 1, keep)) != SQLITE_OK) {
		r = db_fail(db, rc, "binding the history length", e);
		goto out;
	}
	if ((r = db_step(db, st, NULL, "trimming the plan history", e)) != 0 ||
	    (r = db_commit(db, e)) != 0)
		goto out;
	r = 0;
out:
	sqlite3_finalize(st);
	if (r != 0)
		db_rollback(db);
	return r;
}

int
db_last_plan_revision(struct db *db, int64_t *revp, struct err *e)
{
	sqlite3_stmt *st = NULL;
	int r = ERR_INTERNAL, rc;

	*revp = 0;
	if ((r = db_prepare(db, "SELECT coalesce(max(plan_revision), 0) "
	    "FROM plan_history", &st, e)) != 0)
		goto out;
	if ((rc = sqlite3_step(st)) != SQLITE_ROW) {
		r = db_fail(db, rc, "reading the last plan revision", e);
		goto out;
	}
	*revp = sqlite3_column_int64(st, 0);
	r = 0;
out:
	sqlite3_finalize(st);
	return r;
}
