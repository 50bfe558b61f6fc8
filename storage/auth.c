/* SPDX-License-Identifier: GPL-3.0-or-later */
/* API tokens (selector, salt and hash only) and the audit log of writes. */

/*
 * DESIGN
 * Neither tokens nor audit rows are part of the model: no write here
 * touches the model revision.  A token row holds what checking a token
 * needs (storage/schema/004_auth.sql); the secret part of a token never
 * reaches this file.  The daemon reads the valid tokens through
 * db_token_list() into its own cache (api/auth.c); the token commands
 * (daemon/tokencmd.c) add and revoke rows from another process, which is
 * why the daemon re-reads the list rather than being told.
 */

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <sqlite3.h>

#include "db.h"
#include "db_internal.h"
#include "../daemon/base/err.h"
#include "../daemon/base/xalloc.h"

#define NOW	"strftime('%Y-%m-%dT%H:%M:%SZ', 'now')"

static bool
role_ok(const char *role)
{
	return role != NULL && (strcmp(role, "read") == 0 ||
	    strcmp(role, "operate") == 0 || strcmp(role, "admin") == 0);
}

int
db_token_add(struct db *db, const char *selector, const char *role,
    const char *name, const uint8_t salt[DB_TOKEN_SALT_LEN],
    const uint8_t hash[DB_TOKEN_HASH_LEN], int64_t *idp, struct err *e)
{
	sqlite3_stmt *st = NULL;
	int r = ERR_INTERNAL, rc;

	*idp = 0;
	if (selector == NULL || strlen(selector) != DB_TOKEN_SELECTOR_LEN)
		return err_set(e, ERR_INVALID, "selector", "a selector has %d "
		    "characters", DB_TOKEN_SELECTOR_LEN);
	if (!role_ok(role))
		return err_set(e, ERR_INVALID, "role", "role must be read, "
		    "operate or admin");
	if (name == NULL)
		name = "";
	if (strlen(name) > DB_TOKEN_NAME_MAX)
		return err_set(e, ERR_INVALID, "name", "name longer than %d "
		    "bytes", DB_TOKEN_NAME_MAX);
	if ((r = db_prepare(db, "INSERT INTO tokens (selector, role, name, "
	    "salt, hash, created_at) VALUES (?1, ?2, ?3, ?4, ?5, " NOW ")",
	    &st, e)) != 0)
		goto out;
	if ((rc = sqlite3_bind_text(st, 1, selector, -1, SQLITE_STATIC)) !=
	    SQLITE_OK ||
	    (rc = sqlite3_bind_text(st, 2, role, -1, SQLITE_STATIC)) !=
	    SQLITE_OK ||
	    (rc = sqlite3_bind_text(st, 3, name, -1, SQLITE_STATIC)) !=
	    SQLITE_OK ||
	    (rc = sqlite3_bind_blob(st, 4, salt, DB_TOKEN_SALT_LEN,
	    SQLITE_STATIC)) != SQLITE_OK ||
	    (rc = sqlite3_bind_blob(st, 5, hash, DB_TOKEN_HASH_LEN,
	    SQLITE_STATIC)) != SQLITE_OK) {
		r = db_fail(db, rc, "binding a token", e);
		goto out;
	}
	rc = sqlite3_step(st);
	if (rc == SQLITE_CONSTRAINT_UNIQUE) {
		r = err_set(e, ERR_CONFLICT, "selector", "another token has "
		    "this selector");
		goto out;
	}
	if (rc != SQLITE_DONE) {
		r = db_fail(db, rc, "storing a token", e);
		goto out;
	}
	*idp = sqlite3_last_insert_rowid(db->sq);
	r = 0;
out:
	sqlite3_finalize(st);
	return r;
}

/* Copies column col (text, may be NULL) into buf of size n. */
static void
column_copy(sqlite3_stmt *st, int col, char *buf, size_t n)
{
	const unsigned char *s = sqlite3_column_text(st, col);

	snprintf(buf, n, "%s", s != NULL ? (const char *)s : "");
}

int
db_token_list(struct db *db, bool valid_only, struct db_token **tp,
    size_t *np, struct err *e)
{
	sqlite3_stmt *st = NULL;
	struct db_token *t = NULL, *k;
	size_t n = 0, cap = 0;
	bool row;
	int r = ERR_INTERNAL;

	*tp = NULL;
	*np = 0;
	if ((r = db_prepare(db, valid_only ?
	    "SELECT id, selector, role, name, salt, hash, created_at, "
	    "revoked_at FROM tokens WHERE revoked_at IS NULL ORDER BY id" :
	    "SELECT id, selector, role, name, salt, hash, created_at, "
	    "revoked_at FROM tokens ORDER BY id", &st, e)) != 0)
		goto out;
	for (;;) {
		if ((r = db_step(db, st, &row, "listing tokens", e)) != 0)
			goto out;
		if (!row)
			break;
		if (sqlite3_column_bytes(st, 4) != DB_TOKEN_SALT_LEN ||
		    sqlite3_column_bytes(st, 5) != DB_TOKEN_HASH_LEN) {
			r = err_set(e, ERR_DB, NULL, "token %lld has a salt "
			    "or hash of the wrong size",
			    (long long)sqlite3_column_int64(st, 0));
			goto out;
		}
		if (n == cap) {
			cap = cap == 0 ? 8 : cap * 2;
			t = xreallocarray(t, cap, sizeof(*t));
		}
		k = &t[n++];
		memset(k, 0, sizeof(*k));
		k->id = sqlite3_column_int64(st, 0);
		column_copy(st, 1, k->selector, sizeof(k->selector));
		column_copy(st, 2, k->role, sizeof(k->role));
		column_copy(st, 3, k->name, sizeof(k->name));
		memcpy(k->salt, sqlite3_column_blob(st, 4), DB_TOKEN_SALT_LEN);
		memcpy(k->hash, sqlite3_column_blob(st, 5), DB_TOKEN_HASH_LEN);
		column_copy(st, 6, k->created_at, sizeof(k->created_at));
		column_copy(st, 7, k->revoked_at, sizeof(k->revoked_at));
	}
	*tp = t;
	*np = n;
	t = NULL;
	r = 0;
out:
	sqlite3_finalize(st);
	free(t);
	return r;
}

int
db_token_revoke(struct db *db, int64_t id, bool *wasp, struct err *e)
{
	sqlite3_stmt *st = NULL;
	bool row;
	int r = ERR_INTERNAL, rc;

	if (wasp != NULL)
		*wasp = false;
	if ((r = db_begin(db, true, e)) != 0)
		goto out;
	if ((r = db_prepare(db, "SELECT revoked_at IS NOT NULL FROM tokens "
	    "WHERE id = ?1", &st, e)) != 0)
		goto out;
	if ((rc = sqlite3_bind_int64(st, 1, id)) != SQLITE_OK) {
		r = db_fail(db, rc, "binding a token id", e);
		goto out;
	}
	if ((r = db_step(db, st, &row, "reading a token", e)) != 0)
		goto out;
	if (!row) {
		r = err_set(e, ERR_NOTFOUND, "id", "no token %lld",
		    (long long)id);
		goto out;
	}
	if (sqlite3_column_int(st, 0) != 0) {
		if (wasp != NULL)
			*wasp = true;
	} else {
		sqlite3_finalize(st);
		st = NULL;
		if ((r = db_prepare(db, "UPDATE tokens SET revoked_at = " NOW
		    " WHERE id = ?1", &st, e)) != 0)
			goto out;
		if ((rc = sqlite3_bind_int64(st, 1, id)) != SQLITE_OK) {
			r = db_fail(db, rc, "binding a token id", e);
			goto out;
		}
		if ((r = db_step(db, st, NULL, "revoking a token", e)) != 0)
			goto out;
	}
	sqlite3_finalize(st);
	st = NULL;
	if ((r = db_commit(db, e)) != 0)
		goto out;
	r = 0;
out:
	sqlite3_finalize(st);
	if (r != 0)
		db_rollback(db);
	return r;
}

int
db_audit_add(struct db *db, const struct db_audit *a, struct err *e)
{
	sqlite3_stmt *st = NULL;
	int r = ERR_INTERNAL, rc;

	if (a->who == NULL || a->method == NULL || a->path == NULL)
		return err_set(e, ERR_INVALID, NULL, "an audit row needs who, "
		    "method and path");
	if ((r = db_prepare(db, "INSERT INTO audit (at, who, token_id, "
	    "client, method, path, status, model_revision, request_id) "
	    "VALUES (" NOW ", ?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8)", &st, e)) != 0)
		goto out;
	if ((rc = sqlite3_bind_text(st, 1, a->who, -1, SQLITE_STATIC)) !=
	    SQLITE_OK ||
	    (rc = a->token_id > 0 ? sqlite3_bind_int64(st, 2, a->token_id) :
	    sqlite3_bind_null(st, 2)) != SQLITE_OK ||
	    (rc = sqlite3_bind_text(st, 3, a->client != NULL ? a->client : "",
	    -1, SQLITE_STATIC)) != SQLITE_OK ||
	    (rc = sqlite3_bind_text(st, 4, a->method, -1, SQLITE_STATIC)) !=
	    SQLITE_OK ||
	    (rc = sqlite3_bind_text(st, 5, a->path, -1, SQLITE_STATIC)) !=
	    SQLITE_OK ||
	    (rc = sqlite3_bind_int(st, 6, a->status)) != SQLITE_OK ||
	    (rc = a->model_revision > 0 ? sqlite3_bind_int64(st, 7,
	    a->model_revision) : sqlite3_bind_null(st, 7)) != SQLITE_OK ||
	    (rc = sqlite3_bind_text(st, 8, a->request_id != NULL ?
	    a->request_id : "", -1, SQLITE_STATIC)) != SQLITE_OK) {
		r = db_fail(db, rc, "binding an audit row", e);
		goto out;
	}
	r = db_step(db, st, NULL, "writing the audit log", e);
out:
	sqlite3_finalize(st);
	return r;
}
