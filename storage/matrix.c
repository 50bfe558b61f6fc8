/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Stored traffic matrices: put, delete, load, list. */

/*
 * DESIGN
 * A matrix is a row in matrices (its name and the model revision of its
 * last put) and its demands, each with its position in the matrix as
 * ordinal so a load returns them in the caller's order.  Demands name their
 * nodes by id; db_put_matrix() looks every id up in the stored nodes inside
 * its write transaction, so a matrix resolves against the topology it was
 * put against.  A later topology may drop some of those nodes: the matrix
 * stays stored as it is (no foreign key ties demands to nodes), reads give
 * it back whole, and loading the model leaves such demands out of the plan
 * and counts them (storage/topology.c).  Deleting a matrix deletes its
 * demands by ON DELETE CASCADE.
 */

#include <stdio.h>
#include <stdlib.h>

#include <sqlite3.h>

#include "db.h"
#include "db_internal.h"
#include "../daemon/base/err.h"
#include "../daemon/base/xalloc.h"
#include "../daemon/engine/model.h"

int
db_write_matrix(struct db *db, const char *name, const struct matrix *mx,
    int64_t rev, struct err *e)
{
	sqlite3_stmt *st = NULL;
	const struct matrix_entry *me;
	size_t i;
	int r = ERR_INTERNAL, rc;

	if ((r = db_prepare(db, "INSERT INTO matrices (name, updated_revision) "
	    "VALUES (?1, ?2) ON CONFLICT (name) DO UPDATE "
	    "SET updated_revision = excluded.updated_revision", &st, e)) != 0)
		goto out;
	if ((rc = sqlite3_bind_text(st, 1, name, -1, SQLITE_STATIC)) !=
	    SQLITE_OK ||
	    (rc = sqlite3_bind_int64(st, 2, rev)) != SQLITE_OK) {
		r = db_fail(db, rc, "binding a matrix", e);
		goto out;
	}
	if ((r = db_step(db, st, NULL, "storing a matrix", e)) != 0)
		goto out;
	sqlite3_finalize(st);
	st = NULL;

	if ((r = db_run_key(db, "DELETE FROM demands WHERE matrix = ?1", name,
	    NULL, "deleting old demands", e)) != 0)
		goto out;

	if ((r = db_prepare(db, "INSERT INTO demands (matrix, ordinal, src, "
	    "dst, rate_bps, priority) VALUES (?1, ?2, ?3, ?4, ?5, ?6)", &st,
	    e)) != 0)
		goto out;
	for (i = 0; i < mx->n; i++) {
		me = &mx->entries[i];
		sqlite3_reset(st);
		if ((rc = sqlite3_bind_text(st, 1, name, -1,
		    SQLITE_STATIC)) != SQLITE_OK ||
		    (rc = sqlite3_bind_int64(st, 2, (sqlite3_int64)i)) !=
		    SQLITE_OK ||
		    (rc = sqlite3_bind_text(st, 3, me->src, -1,
		    SQLITE_STATIC)) != SQLITE_OK ||
		    (rc = sqlite3_bind_text(st, 4, me->dst, -1,
		    SQLITE_STATIC)) != SQLITE_OK ||
		    (rc = sqlite3_bind_double(st, 5, me->rate_bps)) !=
		    SQLITE_OK ||
		    (rc = sqlite3_bind_int(st, 6, me->priority)) != SQLITE_OK) {
			r = db_fail(db, rc, "binding a demand", e);
			goto out;
		}
		if ((r = db_step(db, st, NULL, "storing a demand", e)) != 0)
			goto out;
	}
	r = 0;
out:
	sqlite3_finalize(st);
	return r;
}

int
db_read_matrix(struct db *db, const char *name, struct matrix **mxp,
    struct err *e)
{
	sqlite3_stmt *st = NULL;
	struct matrix *mx = NULL;
	const char *src, *dst;
	bool found;
	int r = ERR_INTERNAL, rc;

	*mxp = NULL;
	if ((r = db_run_key(db, "SELECT 1 FROM matrices WHERE name = ?1", name,
	    &found, "looking up a matrix", e)) != 0)
		goto out;
	if (!found) {
		r = 0;		/* no such matrix: *mxp stays NULL */
		goto out;
	}

	mx = matrix_new(name);
	if ((r = db_prepare(db, "SELECT src, dst, rate_bps, priority "
	    "FROM demands WHERE matrix = ?1 ORDER BY ordinal", &st, e)) != 0)
		goto out;
	if ((rc = sqlite3_bind_text(st, 1, name, -1, SQLITE_STATIC)) !=
	    SQLITE_OK) {
		r = db_fail(db, rc, "binding a matrix name", e);
		goto out;
	}
	while ((rc = sqlite3_step(st)) == SQLITE_ROW) {
		src = (const char *)sqlite3_column_text(st, 0);
		dst = (const char *)sqlite3_column_text(st, 1);
		if (src == NULL || dst == NULL) {
			r = err_set(e, ERR_DB, NULL, "matrix \"%s\" holds a "
			    "demand without ends", name);
			goto out;
		}
		/* matrix_add() copies: the column text dies at the next
		   step. */
		matrix_add(mx, src, dst, sqlite3_column_double(st, 2),
		    sqlite3_column_int(st, 3));
	}
	if (rc != SQLITE_DONE) {
		r = db_fail(db, rc, "reading demands", e);
		goto out;
	}
	*mxp = mx;
	mx = NULL;
	r = 0;
out:
	sqlite3_finalize(st);
	matrix_free(mx);
	return r;
}

/*
 * Inside the write transaction: every node id mx uses must be stored.
 * ERR_INVALID at "demands[i].src|dst" names the first one that is not.
 */
static int
check_nodes(struct db *db, const struct matrix *mx, struct err *e)
{
	sqlite3_stmt *st = NULL;
	const char *id;
	char where[48];
	size_t i;
	bool found;
	int end, r = ERR_INTERNAL, rc;

	if ((r = db_prepare(db, "SELECT 1 FROM nodes WHERE id = ?1", &st,
	    e)) != 0)
		goto out;
	for (i = 0; i < mx->n; i++) {
		for (end = 0; end < 2; end++) {
			id = end == 0 ? mx->entries[i].src :
			    mx->entries[i].dst;
			sqlite3_reset(st);
			if ((rc = sqlite3_bind_text(st, 1, id, -1,
			    SQLITE_STATIC)) != SQLITE_OK) {
				r = db_fail(db, rc, "binding a node id", e);
				goto out;
			}
			if ((r = db_step(db, st, &found, "looking up a node",
			    e)) != 0)
				goto out;
			if (!found) {
				snprintf(where, sizeof(where),
				    "demands[%zu].%s", i, end == 0 ? "src" :
				    "dst");
				r = err_set(e, ERR_INVALID, where,
				    "unknown node \"%s\"", id);
				goto out;
			}
		}
	}
	r = 0;
out:
	sqlite3_finalize(st);
	return r;
}

int
db_put_matrix(struct db *db, const char *name, const struct matrix *mx,
    int64_t *revp, struct err *e)
{
	int64_t rev = 0;
	int r = ERR_INTERNAL;

	*revp = 0;
	if ((r = db_check_name(name, "name", e)) != 0)
		goto out;
	if (mx == NULL) {
		r = err_set(e, ERR_INVALID, NULL, "no matrix");
		goto out;
	}
	if ((r = matrix_check(mx, e)) != 0)
		goto out;
	if ((r = db_begin_change(db, &rev, e)) != 0 ||
	    (r = check_nodes(db, mx, e)) != 0 ||
	    (r = db_write_matrix(db, name, mx, rev, e)) != 0 ||
	    (r = db_commit(db, e)) != 0)
		goto out;
	*revp = rev;
	r = 0;
out:
	if (r != 0)
		db_rollback(db);
	return r;
}

int
db_delete_matrix(struct db *db, const char *name, int64_t *revp,
    struct err *e)
{
	int64_t rev = 0;
	int r = ERR_INTERNAL;

	*revp = 0;
	if ((r = db_check_name(name, "name", e)) != 0)
		goto out;
	/* Its demands go with it (ON DELETE CASCADE). */
	if ((r = db_begin_change(db, &rev, e)) != 0 ||
	    (r = db_run_key(db, "DELETE FROM matrices WHERE name = ?1", name,
	    NULL, "deleting a matrix", e)) != 0)
		goto out;
	if (sqlite3_changes(db->sq) == 0) {
		r = err_set(e, ERR_NOTFOUND, "name", "no matrix \"%s\"", name);
		goto out;
	}
	if ((r = db_commit(db, e)) != 0)
		goto out;
	*revp = rev;
	r = 0;
out:
	if (r != 0)
		db_rollback(db);
	return r;
}

int
db_load_matrix(struct db *db, const char *name, struct matrix **mxp,
    struct err *e)
{
	struct matrix *mx = NULL;
	int r = ERR_INTERNAL;

	*mxp = NULL;
	if ((r = db_check_name(name, "name", e)) != 0)
		goto out;
	/* One snapshot: the matrix row and its demands. */
	if ((r = db_begin(db, false, e)) != 0 ||
	    (r = db_read_matrix(db, name, &mx, e)) != 0 ||
	    (r = db_commit(db, e)) != 0)
		goto out;
	if (mx == NULL) {
		r = err_set(e, ERR_NOTFOUND, "name", "no matrix \"%s\"", name);
		goto out;
	}
	*mxp = mx;
	mx = NULL;
	r = 0;
out:
	if (r != 0)
		db_rollback(db);
	matrix_free(mx);
	return r;
}

int
db_list_matrices(struct db *db, struct db_name **namesp, size_t *np,
    struct err *e)
{
	sqlite3_stmt *st = NULL;
	struct db_name *names = NULL;
	size_t n = 0, cap = 0;
	int r = ERR_INTERNAL, rc;

	*namesp = NULL;
	*np = 0;
	if ((r = db_prepare(db, "SELECT m.name, count(d.ordinal), "
	    "coalesce(sum(d.rate_bps), 0) FROM matrices m "
	    "LEFT JOIN demands d ON d.matrix = m.name "
	    "GROUP BY m.name ORDER BY m.name", &st, e)) != 0)
		goto out;
	while ((rc = sqlite3_step(st)) == SQLITE_ROW) {
		if (n == cap) {
			cap = cap == 0 ? 8 : 2 * cap;
			names = xreallocarray(names, cap, sizeof(*names));
		}
		names[n].name = db_column_strdup(st, 0);
		if (names[n].name == NULL) {
			r = err_set(e, ERR_DB, NULL, "a matrix without a name");
			goto out;
		}
		names[n].n_demands = (size_t)sqlite3_column_int64(st, 1);
		names[n].total_bps = sqlite3_column_double(st, 2);
		n++;
	}
	if (rc != SQLITE_DONE) {
		r = db_fail(db, rc, "listing matrices", e);
		goto out;
	}
	*namesp = names;
	*np = n;
	names = NULL;
	n = 0;
	r = 0;
out:
	sqlite3_finalize(st);
	db_names_free(names, n);
	return r;
}

void
db_names_free(struct db_name *names, size_t n)
{
	size_t i;

	if (names == NULL)
		return;
	for (i = 0; i < n; i++)
		free(names[i].name);
	free(names);
}
