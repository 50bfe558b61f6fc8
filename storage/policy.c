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

/* The objective as stored: words, so the file reads without our enum. */
static const struct {
	enum objective obj;
	const char *word;
} objectives[] = {
	{ OBJ_COST, "cost" },
	{ OBJ_BALANCE, "balance" },
};

static const char *
objective_word(enum objective obj)
{
	size_t i;

	for (i = 0; i < sizeof(objectives) / sizeof(objectives[0]); i++)
		if (objectives[i].obj == obj)
			return objectives[i].word;
	return NULL;
}

static int
objective_parse(const char *word, enum objective *objp)
{
	size_t i;

	for (i = 0; i < sizeof(objectives) / sizeof(objectives[0]); i++)
		if (word != NULL && strcmp(objectives[i].word, word) == 0) {
			*objp = objectives[i].obj;
			return 0;
		}
	return ERR_INVALID;
}

int
db_put_policy(struct db *db, const struct policy *p, int64_t *revp,
    struct err *e)
{
	sqlite3_stmt *st = NULL;
	const char *word;
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

	if ((r = db_begin(db, true, e)) != 0 ||
	    (r = db_bump_revision(db, &rev, e)) != 0)
		goto out;
	if ((r = db_prepare(db, "INSERT OR REPLACE INTO policy (id, objective, "
	    "headroom, matrix, balance_tol) VALUES (1, ?1, ?2, ?3, ?4)", &st,
	    e)) != 0)
		goto out;
	if ((rc = sqlite3_bind_text(st, 1, word, -1, SQLITE_STATIC)) !=
	    SQLITE_OK ||
	    (rc = sqlite3_bind_double(st, 2, p->headroom)) != SQLITE_OK ||
	    (rc = p->matrix != NULL ? sqlite3_bind_text(st, 3, p->matrix, -1,
	    SQLITE_STATIC) : sqlite3_bind_null(st, 3)) != SQLITE_OK ||
	    (rc = sqlite3_bind_double(st, 4, p->balance_tol)) != SQLITE_OK) {
		r = db_fail(db, rc, "binding the policy", e);
		goto out;
	}
	if ((rc = sqlite3_step(st)) != SQLITE_DONE) {
		r = db_fail(db, rc, "storing the policy", e);
		goto out;
	}
	if ((r = db_commit(db, e)) != 0)
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
	int r = ERR_INTERNAL, rc;

	policy_clear(p);
	policy_default(p);
	if ((r = db_prepare(db, "SELECT objective, headroom, matrix, "
	    "balance_tol FROM policy WHERE id = 1", &st, e)) != 0)
		goto out;
	rc = sqlite3_step(st);
	if (rc == SQLITE_DONE) {
		r = 0;		/* none stored: the default stands */
		goto out;
	}
	if (rc != SQLITE_ROW) {
		r = db_fail(db, rc, "reading the policy", e);
		goto out;
	}
	word = (const char *)sqlite3_column_text(st, 0);
	if (objective_parse(word, &obj) != 0) {
		r = err_set(e, ERR_DB, NULL, "stored policy has an unknown "
		    "objective \"%s\"", word != NULL ? word : "");
		goto out;
	}
	p->objective = obj;
	p->headroom = sqlite3_column_double(st, 1);
	p->matrix = db_column_strdup(st, 2);
	p->balance_tol = sqlite3_column_double(st, 3);
	r = 0;
out:
	sqlite3_finalize(st);
	return r;
}
