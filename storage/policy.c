/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The stored policy: one row, or none for the default. */

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include <sqlite3.h>

#include "db.h"
#include "db_internal.h"
#include "../daemon/base/err.h"
#include "../daemon/base/xalloc.h"
#include "../daemon/engine/model.h"

int
db_put_policy(struct db *db, const struct policy *p, int64_t *revp,
    struct err *e)
{
	sqlite3_stmt *st = NULL;
	const char *word, *fword;
	int64_t rev = 0;
	int r = ERR_INTERNAL, rc;

	*revp = 0;
	if (p == NULL) {
		r = err_set(e, ERR_INVALID, NULL, "no policy");
		goto out;
	}
	if ((word = objective_word(p->objective)) == NULL) {
		r = err_set(e, ERR_INVALID, "objective", "unknown objective %d",
		    (int)p->objective);
		goto out;
	}
	if ((fword = formulation_word(p->formulation)) == NULL) {
		r = err_set(e, ERR_INVALID, "formulation",
		    "unknown formulation %d", (int)p->formulation);
		goto out;
	}
	if (!(p->gap_target >= 0 && p->gap_target <= 0.5) ||
	    !(p->keep_paths_tol >= 0 && p->keep_paths_tol <= 0.5)) {
		r = err_set(e, ERR_INVALID, !(p->gap_target >= 0 &&
		    p->gap_target <= 0.5) ? "gap_target" : "keep_paths_tol",
		    "must be in [0, 0.5]");
		goto out;
	}
	if (!isfinite(p->headroom) || p->headroom <= 0 || p->headroom > 1) {
		r = err_set(e, ERR_INVALID, "headroom",
		    "headroom must be in (0, 1]");
		goto out;
	}
	if (!isfinite(p->balance_tol) || p->balance_tol < 0) {
		r = err_set(e, ERR_INVALID, "balance_tol",
		    "balance tolerance must be finite and not negative");
		goto out;
	}
	if (p->matrix != NULL && (r = db_check_name(p->matrix, "matrix",
	    e)) != 0)
		goto out;

	if ((r = db_begin_change(db, &rev, e)) != 0)
		goto out;
	if ((r = db_prepare(db, "INSERT OR REPLACE INTO policy (id, objective, "
	    "headroom, matrix, balance_tol, formulation, gap_target, "
	    "keep_paths, keep_paths_tol) VALUES (1, ?1, ?2, ?3, ?4, ?5, ?6, "
	    "?7, ?8)", &st, e)) != 0)
		goto out;
	if ((rc = sqlite3_bind_text(st, 1, word, -1, SQLITE_STATIC)) !=
	    SQLITE_OK ||
	    (rc = sqlite3_bind_double(st, 2, p->headroom)) != SQLITE_OK ||
	    (rc = p->matrix != NULL ? sqlite3_bind_text(st, 3, p->matrix, -1,
	    SQLITE_STATIC) : sqlite3_bind_null(st, 3)) != SQLITE_OK ||
	    (rc = sqlite3_bind_double(st, 4, p->balance_tol)) != SQLITE_OK ||
	    (rc = sqlite3_bind_text(st, 5, fword, -1, SQLITE_STATIC)) !=
	    SQLITE_OK ||
	    (rc = sqlite3_bind_double(st, 6, p->gap_target)) != SQLITE_OK ||
	    (rc = sqlite3_bind_int(st, 7, p->keep_paths ? 1 : 0)) !=
	    SQLITE_OK ||
	    (rc = sqlite3_bind_double(st, 8, p->keep_paths_tol)) != SQLITE_OK) {
		r = db_fail(db, rc, "binding the policy", e);
		goto out;
	}
	if ((r = db_step(db, st, NULL, "storing the policy", e)) != 0 ||
	    (r = db_commit(db, e)) != 0)
		goto out;
	*revp = rev;
	r = 0;
out:
	sqlite3_finalize(st);
	if (r != 0)
		db_rollback(db);
	return r;
}

int
db_read_policy(struct db *db, struct policy *p, struct err *e)
{
	sqlite3_stmt *st = NULL;
	const char *word;
	enum objective obj;
	enum formulation form;
	bool found;
	int r = ERR_INTERNAL;

	policy_clear(p);
	policy_default(p);
	if ((r = db_prepare(db, "SELECT objective, headroom, matrix, "
	    "balance_tol, formulation, gap_target, keep_paths, keep_paths_tol "
	    "FROM policy WHERE id = 1", &st, e)) != 0 ||
	    (r = db_step(db, st, &found, "reading the policy", e)) != 0)
		goto out;
	if (!found) {
		r = 0;		/* none stored: the default stands */
		goto out;
	}
	word = (const char *)sqlite3_column_text(st, 0);
	if (objective_parse(word, &obj) != 0) {
		r = err_set(e, ERR_DB, NULL, "stored policy has an unknown "
		    "objective \"%s\"", word != NULL ? word : "");
		goto out;
	}
	word = (const char *)sqlite3_column_text(st, 4);
	if (formulation_parse(word, &form) != 0) {
		r = err_set(e, ERR_DB, NULL, "stored policy has an unknown "
		    "formulation \"%s\"", word != NULL ? word : "");
		goto out;
	}
	p->objective = obj;
	p->headroom = sqlite3_column_double(st, 1);
	p->matrix = db_column_strdup(st, 2);
	p->balance_tol = sqlite3_column_double(st, 3);
	p->formulation = form;
	p->gap_target = sqlite3_column_double(st, 5);
	p->keep_paths = sqlite3_column_int(st, 6) != 0;
	p->keep_paths_tol = sqlite3_column_double(st, 7);
	r = 0;
out:
	sqlite3_finalize(st);
	return r;
}
