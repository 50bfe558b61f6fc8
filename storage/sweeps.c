/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Stored survivability sweeps: progress, per-scenario results, report. */

/*
 * DESIGN
 * A sweep is one row of sweeps and one row of sweep_results per scenario
 * finished.  Its runner creates the row (state "running"), adds results in
 * batches with db_sweep_progress(), which writes them and the progress
 * counters in one transaction so a reader never sees done disagree with
 * the rows, and ends it with db_sweep_finish().  None of this is a model
 * change: the writes open a plain write transaction (db_begin()), never
 * db_begin_change(), so a sweep never makes the solver plan again.  A
 * sweep still "running" when a process first opens the file was cut off by
 * a crash or a stop: db_open() calls db_sweeps_interrupt(), which marks it
 * "interrupted" and keeps its results.  The JSON texts (request, report,
 * each scenario's failures) are the caller's and stored as opaque text.
 * SQLite has no NaN: a NaN result number is stored as NULL and read back
 * as NaN.  Deleting a sweep deletes its results (explicitly, with ON
 * DELETE CASCADE as the backstop).
 */

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <sqlite3.h>

#include "db.h"
#include "db_internal.h"
#include "../daemon/base/err.h"
#include "../daemon/base/xalloc.h"

/* The current time as the schema keeps it: ISO 8601 UTC, whole seconds. */
#define NOW	"strftime('%Y-%m-%dT%H:%M:%SZ', 'now')"

/* The columns read_sweep() reads, in its order. */
#define SWEEP_COLS	"id, kind, state, model_revision, plan_revision, " \
	"total, done, elapsed_s, created_at, finished_at, "

static const char *const kinds[] = { "links", "nodes", "srlgs",
    "link-pairs", NULL };
static const char *const final_states[] = { "done", "cancelled",
    "interrupted", "failed", NULL };
static const char *const statuses[] = { "optimal", "partial", "empty",
    "failed", NULL };

static bool
one_of(const char *w, const char *const *words)
{
	size_t i;

	if (w == NULL)
		return false;
	for (i = 0; words[i] != NULL; i++)
		if (strcmp(w, words[i]) == 0)
			return true;
	return false;
}

/* Binds x to column col; NaN (which SQLite cannot hold) as NULL. */
static int
bind_num(sqlite3_stmt *st, int col, double x)
{
	return isnan(x) ? sqlite3_bind_null(st, col) :
	    sqlite3_bind_double(st, col, x);
}

/* Column col as a double; NULL as NaN. */
static double
column_num(sqlite3_stmt *st, int col)
{
	return sqlite3_column_type(st, col) == SQLITE_NULL ? NAN :
	    sqlite3_column_double(st, col);
}

/* Copies column text into a fixed buffer ("" for NULL), cut to fit. */
static void
column_copy(sqlite3_stmt *st, int col, char *buf, size_t len)
{
	const unsigned char *s = sqlite3_column_text(st, col);

	snprintf(buf, len, "%s", s != NULL ? (const char *)s : "");
}

/*
 * Prepares sql and binds id to ?1.  The statement is the caller's to
 * finalize, also on failure (*stp may be NULL then).
 */
static int
prepare_id(struct db *db, const char *sql, int64_t id, sqlite3_stmt **stp,
    struct err *e)
{
	int r, rc;

	if ((r = db_prepare(db, sql, stp, e)) != 0)
		return r;
	if ((rc = sqlite3_bind_int64(*stp, 1, id)) != SQLITE_OK)
		return db_fail(db, rc, "binding a sweep id", e);
	return 0;
}

/* Runs sql with id bound to ?1, stepping once as db_step() does. */
static int
run_id(struct db *db, const char *sql, int64_t id, bool *rowp,
    const char *what, struct err *e)
{
	sqlite3_stmt *st = NULL;
	int r;

	if ((r = prepare_id(db, sql, id, &st, e)) == 0)
		r = db_step(db, st, rowp, what, e);
	sqlite3_finalize(st);
	return r;
}

static int
not_found(int64_t id, struct err *e)
{
	return err_set(e, ERR_NOTFOUND, "id", "no sweep %lld",
	    (long long)id);
}

/* Fills s from a row of SWEEP_COLS, then params_json, report_json, error. */
static void
read_sweep(sqlite3_stmt *st, struct db_sweep *s)
{
	memset(s, 0, sizeof(*s));
	s->id = sqlite3_column_int64(st, 0);
	column_copy(st, 1, s->kind, sizeof(s->kind));
	column_copy(st, 2, s->state, sizeof(s->state));
	s->model_revision = sqlite3_column_int64(st, 3);
	s->plan_revision = sqlite3_column_int64(st, 4);
	s->total = (long)sqlite3_column_int64(st, 5);
	s->done = (long)sqlite3_column_int64(st, 6);
	s->elapsed_s = sqlite3_column_double(st, 7);
	column_copy(st, 8, s->created_at, sizeof(s->created_at));
	column_copy(st, 9, s->finished_at, sizeof(s->finished_at));
	s->params_json = db_column_strdup(st, 10);
	s->report_json = db_column_strdup(st, 11);
	s->error = db_column_strdup(st, 12);
}

static void
clear_sweep(struct db_sweep *s)
{
	free(s->params_json);
	free(s->report_json);
	free(s->error);
}

/* ---- writing ---- */

int
db_sweep_create(struct db *db, const char *kind, int64_t model_rev,
    int64_t plan_rev, long total, const char *params_json, int64_t *idp,
    struct err *e)
{
	sqlite3_stmt *st = NULL;
	int r = ERR_INTERNAL, rc;

	*idp = 0;
	if (!one_of(kind, kinds)) {
		r = err_set(e, ERR_INVALID, "kind", "must be \"links\", "
		    "\"nodes\", \"srlgs\" or \"link-pairs\"");
		goto out;
	}
	if (total < 0) {
		r = err_set(e, ERR_INVALID, "total", "a sweep cannot have %ld "
		    "scenarios", total);
		goto out;
	}
	if (params_json == NULL) {
		r = err_set(e, ERR_INVALID, "params_json", "no sweep request");
		goto out;
	}
	/* One statement: atomic on its own, and last_insert_rowid() is
	   this connection's. */
	if ((r = db_prepare(db, "INSERT INTO sweeps (kind, state, "
	    "model_revision, plan_revision, total, done, elapsed_s, "
	    "created_at, params_json) VALUES (?1, 'running', ?2, ?3, ?4, 0, 0, "
	    NOW ", ?5)", &st, e)) != 0)
		goto out;
	if ((rc = sqlite3_bind_text(st, 1, kind, -1, SQLITE_STATIC)) !=
	    SQLITE_OK ||
	    (rc = sqlite3_bind_int64(st, 2, model_rev)) != SQLITE_OK ||
	    (rc = sqlite3_bind_int64(st, 3, plan_rev)) != SQLITE_OK ||
	    (rc = sqlite3_bind_int64(st, 4, total)) != SQLITE_OK ||
	    (rc = sqlite3_bind_text(st, 5, params_json, -1, SQLITE_STATIC)) !=
	    SQLITE_OK) {
		r = db_fail(db, rc, "binding a sweep", e);
		goto out;
	}
	if ((r = db_step(db, st, NULL, "creating a sweep", e)) != 0)
		goto out;
	*idp = sqlite3_last_insert_rowid(db->sq);
	r = 0;
out:
	sqlite3_finalize(st);
	return r;
}

/* Checks what the schema would refuse in the results, naming the field. */
static int
check_results(const struct db_sweep_result *rs, size_t n, long total,
    struct err *e)
{
	char where[48];
	size_t i;

	for (i = 0; i < n; i++) {
		if (rs[i].idx < 0 || rs[i].idx >= total) {
			snprintf(where, sizeof(where), "results[%zu].idx", i);
			return err_set(e, ERR_INVALID, where, "scenario %ld is "
			    "not in [0, %ld)", rs[i].idx, total);
		}
		if (rs[i].fail_json == NULL) {
			snprintf(where, sizeof(where), "results[%zu].fail_json",
			    i);
			return err_set(e, ERR_INVALID, where,
			    "no failure set");
		}
		if (!one_of(rs[i].status, statuses)) {
			snprintf(where, sizeof(where), "results[%zu].status",
			    i);
			return err_set(e, ERR_INVALID, where, "must be "
			    "\"optimal\", \"partial\", \"empty\" or \"failed\"");
		}
	}
	return 0;
}

static int
put_results(struct db *db, int64_t id, const struct db_sweep_result *rs,
    size_t n, struct err *e)
{
	sqlite3_stmt *st = NULL;
	const struct db_sweep_result *x;
	char where[48];
	size_t i;
	int r = ERR_INTERNAL, rc;

	if ((r = db_prepare(db, "INSERT INTO sweep_results (sweep, idx, "
	    "fail_json, status, error, max_util, carried_bps, unserved_bps, "
	    "total_cost, solve_ms, moved_bps) VALUES (?1, ?2, ?3, ?4, ?5, ?6, "
	    "?7, ?8, ?9, ?10, ?11)", &st, e)) != 0)
		goto out;
	for (i = 0; i < n; i++) {
		x = &rs[i];
		sqlite3_reset(st);
		if ((rc = sqlite3_bind_int64(st, 1, id)) != SQLITE_OK ||
		    (rc = sqlite3_bind_int64(st, 2, x->idx)) != SQLITE_OK ||
		    (rc = sqlite3_bind_text(st, 3, x->fail_json, -1,
		    SQLITE_STATIC)) != SQLITE_OK ||
		    (rc = sqlite3_bind_text(st, 4, x->status, -1,
		    SQLITE_STATIC)) != SQLITE_OK ||
		    (rc = x->error != NULL ? sqlite3_bind_text(st, 5, x->error,
		    -1, SQLITE_STATIC) : sqlite3_bind_null(st, 5)) !=
		    SQLITE_OK ||
		    (rc = bind_num(st, 6, x->max_util)) != SQLITE_OK ||
		    (rc = bind_num(st, 7, x->carried_bps)) != SQLITE_OK ||
		    (rc = bind_num(st, 8, x->unserved_bps)) != SQLITE_OK ||
		    (rc = bind_num(st, 9, x->total_cost)) != SQLITE_OK ||
		    (rc = bind_num(st, 10, x->solve_ms)) != SQLITE_OK ||
		    (rc = bind_num(st, 11, x->moved_bps)) != SQLITE_OK) {
			r = db_fail(db, rc, "binding a sweep result", e);
			goto out;
		}
		/* (sweep, idx) is the primary key: a scenario stored
		   before clashes here. */
		rc = sqlite3_step(st);
		if (rc == SQLITE_CONSTRAINT_PRIMARYKEY) {
			snprintf(where, sizeof(where), "results[%zu].idx", i);
			r = err_set(e, ERR_CONFLICT, where, "scenario %ld of "
			    "sweep %lld is already stored", x->idx,
			    (long long)id);
			goto out;
		}
		if (rc != SQLITE_DONE) {
			r = db_fail(db, rc, "storing a sweep result", e);
			goto out;
		}
	}
	r = 0;
out:
	sqlite3_finalize(st);
	return r;
}

int
db_sweep_progress(struct db *db, int64_t id, long done, double elapsed_s,
    const struct db_sweep_result *rs, size_t n, struct err *e)
{
	sqlite3_stmt *st = NULL;
	long total;
	bool found;
	int r = ERR_INTERNAL, rc;

	if (n > 0 && rs == NULL) {
		r = err_set(e, ERR_INVALID, "results", "no results");
		goto out;
	}
	if (!isfinite(elapsed_s) || elapsed_s < 0) {
		r = err_set(e, ERR_INVALID, "elapsed_s", "must be a finite "
		    "number of seconds >= 0");
		goto out;
	}
	if ((r = db_begin(db, true, e)) != 0 ||
	    (r = prepare_id(db, "SELECT total FROM sweeps WHERE id = ?1", id,
	    &st, e)) != 0 ||
	    (r = db_step(db, st, &found, "reading a sweep", e)) != 0)
		goto out;
	if (!found) {
		r = not_found(id, e);
		goto out;
	}
	total = (long)sqlite3_column_int64(st, 0);
	sqlite3_finalize(st);
	st = NULL;
	if (done < 0 || done > total) {
		r = err_set(e, ERR_INVALID, "done", "%ld scenarios done is not "
		    "in [0, %ld]", done, total);
		goto out;
	}
	if ((r = check_results(rs, n, total, e)) != 0 ||
	    (r = put_results(db, id, rs, n, e)) != 0 ||
	    (r = prepare_id(db, "UPDATE sweeps SET done = ?2, elapsed_s = ?3 "
	    "WHERE id = ?1", id, &st, e)) != 0)
		goto out;
	if ((rc = sqlite3_bind_int64(st, 2, done)) != SQLITE_OK ||
	    (rc = sqlite3_bind_double(st, 3, elapsed_s)) != SQLITE_OK) {
		r = db_fail(db, rc, "binding sweep progress", e);
		goto out;
	}
	if ((r = db_step(db, st, NULL, "storing sweep progress", e)) != 0 ||
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
db_sweep_finish(struct db *db, int64_t id, const char *state,
    double elapsed_s, const char *report_json, const char *error,
    struct err *e)
{
	sqlite3_stmt *st = NULL;
	int r = ERR_INTERNAL, rc;

	if (!one_of(state, final_states)) {
		r = err_set(e, ERR_INVALID, "state", "must be \"done\", "
		    "\"cancelled\", \"interrupted\" or \"failed\"");
		goto out;
	}
	if (!isfinite(elapsed_s) || elapsed_s < 0) {
		r = err_set(e, ERR_INVALID, "elapsed_s", "must be a finite "
		    "number of seconds >= 0");
		goto out;
	}
	if ((r = prepare_id(db, "UPDATE sweeps SET state = ?2, elapsed_s = ?3, "
	    "finished_at = " NOW ", report_json = ?4, error = ?5 "
	    "WHERE id = ?1", id, &st, e)) != 0)
		goto out;
	if ((rc = sqlite3_bind_text(st, 2, state, -1, SQLITE_STATIC)) !=
	    SQLITE_OK ||
	    (rc = sqlite3_bind_double(st, 3, elapsed_s)) != SQLITE_OK ||
	    (rc = report_json != NULL ? sqlite3_bind_text(st, 4, report_json,
	    -1, SQLITE_STATIC) : sqlite3_bind_null(st, 4)) != SQLITE_OK ||
	    (rc = error != NULL ? sqlite3_bind_text(st, 5, error, -1,
	    SQLITE_STATIC) : sqlite3_bind_null(st, 5)) != SQLITE_OK) {
		r = db_fail(db, rc, "binding a sweep's end", e);
		goto out;
	}
	if ((r = db_step(db, st, NULL, "finishing a sweep", e)) != 0)
		goto out;
	if (sqlite3_changes(db->sq) == 0) {
		r = not_found(id, e);
		goto out;
	}
	r = 0;
out:
	sqlite3_finalize(st);
	return r;
}

int
db_sweep_delete(struct db *db, int64_t id, struct err *e)
{
	sqlite3_stmt *st = NULL;
	bool found;
	int r = ERR_INTERNAL;

	if ((r = db_begin(db, true, e)) != 0 ||
	    (r = prepare_id(db, "SELECT state = 'running' FROM sweeps "
	    "WHERE id = ?1", id, &st, e)) != 0 ||
	    (r = db_step(db, st, &found, "reading a sweep", e)) != 0)
		goto out;
	if (!found) {
		r = not_found(id, e);
		goto out;
	}
	if (sqlite3_column_int(st, 0) != 0) {
		r = err_set(e, ERR_CONFLICT, "id", "sweep %lld is running; "
		    "cancel it first", (long long)id);
		goto out;
	}
	if ((r = run_id(db, "DELETE FROM sweep_results WHERE sweep = ?1", id,
	    NULL, "deleting sweep results", e)) != 0 ||
	    (r = run_id(db, "DELETE FROM sweeps WHERE id = ?1", id, NULL,
	    "deleting a sweep", e)) != 0 ||
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
db_sweeps_interrupt(struct db *db, struct err *e)
{
	return db_exec(db, "UPDATE sweeps SET state = 'interrupted', "
	    "finished_at = " NOW " WHERE state = 'running'", e);
}

/* ---- reading ---- */

int
db_sweep_get(struct db *db, int64_t id, struct db_sweep **sp, struct err *e)
{
	sqlite3_stmt *st = NULL;
	struct db_sweep *s = NULL;
	bool found;
	int r = ERR_INTERNAL;

	*sp = NULL;
	if ((r = prepare_id(db, "SELECT " SWEEP_COLS "params_json, "
	    "report_json, error FROM sweeps WHERE id = ?1", id, &st, e)) != 0 ||
	    (r = db_step(db, st, &found, "reading a sweep", e)) != 0)
		goto out;
	if (!found) {
		r = not_found(id, e);
		goto out;
	}
	s = xmalloc(sizeof(*s));
	read_sweep(st, s);
	*sp = s;
	r = 0;
out:
	sqlite3_finalize(st);
	return r;
}

int
db_sweep_results(struct db *db, int64_t id, struct db_sweep_result **rp,
    size_t *np, struct err *e)
{
	sqlite3_stmt *st = NULL;
	struct db_sweep_result *rs = NULL, *x;
	size_t n = 0, cap = 0;
	bool found;
	int r = ERR_INTERNAL, rc;

	*rp = NULL;
	*np = 0;
	/* One read transaction: the sweep and its rows from one state. */
	if ((r = db_begin(db, false, e)) != 0 ||
	    (r = run_id(db, "SELECT 1 FROM sweeps WHERE id = ?1", id, &found,
	    "looking up a sweep", e)) != 0)
		goto out;
	if (!found) {
		r = not_found(id, e);
		goto out;
	}
	if ((r = prepare_id(db, "SELECT idx, fail_json, status, error, "
	    "max_util, carried_bps, unserved_bps, total_cost, solve_ms, "
	    "moved_bps FROM sweep_results WHERE sweep = ?1 ORDER BY idx", id,
	    &st, e)) != 0)
		goto out;
	while ((rc = sqlite3_step(st)) == SQLITE_ROW) {
		if (n == cap) {
			cap = cap == 0 ? 64 : 2 * cap;
			rs = xreallocarray(rs, cap, sizeof(*rs));
		}
		x = &rs[n++];
		memset(x, 0, sizeof(*x));
		x->idx = (long)sqlite3_column_int64(st, 0);
		x->fail_json = db_column_strdup(st, 1);
		column_copy(st, 2, x->status, sizeof(x->status));
		x->error = db_column_strdup(st, 3);
		x->max_util = column_num(st, 4);
		x->carried_bps = column_num(st, 5);
		x->unserved_bps = column_num(st, 6);
		x->total_cost = column_num(st, 7);
		x->solve_ms = column_num(st, 8);
		x->moved_bps = column_num(st, 9);
	}
	if (rc != SQLITE_DONE) {
		r = db_fail(db, rc, "reading sweep results", e);
		goto out;
	}
	if ((r = db_commit(db, e)) != 0)
		goto out;
	*rp = rs;
	*np = n;
	rs = NULL;
	n = 0;
	r = 0;
out:
	sqlite3_finalize(st);
	if (r != 0)
		db_rollback(db);
	db_sweep_results_free(rs, n);
	return r;
}

int
db_sweep_list(struct db *db, struct db_sweep **sp, size_t *np,
    struct err *e)
{
	sqlite3_stmt *st = NULL;
	struct db_sweep *ss = NULL;
	size_t n = 0, cap = 0;
	int r = ERR_INTERNAL, rc;

	*sp = NULL;
	*np = 0;
	if ((r = db_prepare(db, "SELECT " SWEEP_COLS "NULL, NULL, error "
	    "FROM sweeps ORDER BY id DESC", &st, e)) != 0)
		goto out;
	while ((rc = sqlite3_step(st)) == SQLITE_ROW) {
		if (n == cap) {
			cap = cap == 0 ? 16 : 2 * cap;
			ss = xreallocarray(ss, cap, sizeof(*ss));
		}
		read_sweep(st, &ss[n++]);
	}
	if (rc != SQLITE_DONE) {
		r = db_fail(db, rc, "listing sweeps", e);
		goto out;
	}
	*sp = ss;
	*np = n;
	ss = NULL;
	n = 0;
	r = 0;
out:
	sqlite3_finalize(st);
	db_sweeps_free(ss, n);
	return r;
}

/* ---- freeing ---- */

void
db_sweep_free(struct db_sweep *s)
{
	if (s == NULL)
		return;
	clear_sweep(s);
	free(s);
}

void
db_sweeps_free(struct db_sweep *s, size_t n)
{
	size_t i;

	if (s == NULL)
		return;
	for (i = 0; i < n; i++)
		clear_sweep(&s[i]);
	free(s);
}

void
db_sweep_results_free(struct db_sweep_result *r, size_t n)
{
	size_t i;

	if (r == NULL)
		return;
	for (i = 0; i < n; i++) {
		free(r[i].fail_json);
		free(r[i].error);
	}
	free(r);
}
