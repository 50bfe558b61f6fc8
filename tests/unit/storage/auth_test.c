/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Unit tests for stored tokens and the audit log (storage/auth.c). */

/*
 * Each case uses a fresh database file in a temporary directory under
 * /tmp, removed at the end.  What is on disk is read back with the
 * sqlite3 command-line shell (/usr/bin/sqlite3), a separate program, so
 * the checks do not rest on storage's own readers alone.  Salts and
 * hashes are fixed byte patterns here: what is hashed is api/auth.c's
 * business (tests/unit/api/auth_test.c).
 */

#include <sys/stat.h>

#include <dirent.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "../../tap.h"
#include "dbtest.h"
#include "../../../storage/db.h"
#include "../../../storage/schema.h"
#include "../../../daemon/base/err.h"
#include "../../../daemon/base/xalloc.h"

/* Salt k: bytes k, k+1, ...; hash k: bytes 0xa0 + k, ... */
static void
pattern(int k, uint8_t salt[DB_TOKEN_SALT_LEN],
    uint8_t hash[DB_TOKEN_HASH_LEN])
{
	int i;

	for (i = 0; i < DB_TOKEN_SALT_LEN; i++)
		salt[i] = (uint8_t)(k + i);
	for (i = 0; i < DB_TOKEN_HASH_LEN; i++)
		hash[i] = (uint8_t)(0xa0 + k + i);
}

static int64_t
revision(struct db *db)
{
	int64_t rev = -1;

	(void)db_revision(db, &rev, NULL);
	return rev;
}

static void
test_tokens(void)
{
	uint8_t salt[DB_TOKEN_SALT_LEN], hash[DB_TOKEN_HASH_LEN];
	struct db_token *t = NULL;
	struct db *db = NULL;
	struct err e = { 0 };
	char path[128], name[80];
	int64_t id;
	size_t n;
	bool was;

	new_path(path, sizeof(path));
	TEST_START("stores tokens in id order with role, name, salt, hash");
	ASSERT_INT_EQ(db_open(path, &db, &e), 0);
	pattern(1, salt, hash);
	ASSERT_INT_EQ(db_token_add(db, "00112233aabbccdd", "read", "monitor",
	    salt, hash, &id, &e), 0);
	ASSERT_INT_EQ(id, 1);
	pattern(2, salt, hash);
	ASSERT_INT_EQ(db_token_add(db, "0123456789abcdef", "operate", NULL,
	    salt, hash, &id, &e), 0);
	ASSERT_INT_EQ(id, 2);
	pattern(3, salt, hash);
	ASSERT_INT_EQ(db_token_add(db, "fedcba9876543210", "admin", "root-ops",
	    salt, hash, &id, &e), 0);
	ASSERT_INT_EQ(id, 3);
	ASSERT_INT_EQ(db_token_list(db, false, &t, &n, &e), 0);
	ASSERT_INT_EQ(n, 3);
	if (n == 3) {
		ASSERT_STR_EQ(t[0].role, "read");
		ASSERT_STR_EQ(t[0].name, "monitor");
		ASSERT_STR_EQ(t[0].selector, "00112233aabbccdd");
		ASSERT_STR_EQ(t[1].name, "");
		ASSERT_STR_EQ(t[2].role, "admin");
		ASSERT_STR_EQ(t[2].revoked_at, "");
		ASSERT_INT_EQ(strlen(t[2].created_at), 20);
		pattern(2, salt, hash);
		ASSERT_TRUE(memcmp(t[1].salt, salt, sizeof(salt)) == 0);
		ASSERT_TRUE(memcmp(t[1].hash, hash, sizeof(hash)) == 0);
	}
	free(t);
	t = NULL;
	/* The same bytes, read by another program. */
	ASSERT_SHELL(path, "SELECT id, role, name, hex(salt), hex(hash) FROM "
	    "tokens WHERE id = 2;", "2|operate||"
	    "02030405060708090A0B0C0D0E0F1011|"
	    "A2A3A4A5A6A7A8A9AAABACADAEAFB0B1B2B3B4B5B6B7B8B9BABBBCBDBEBFC0C1");
	ASSERT_SHELL(path, "SELECT count(*) FROM tokens WHERE created_at GLOB "
	    "'[0-9][0-9][0-9][0-9]-[0-9][0-9]-[0-9][0-9]T[0-9][0-9]:[0-9][0-9]"
	    ":[0-9][0-9]Z';", "3");
	/* Tokens are not the model. */
	ASSERT_INT_EQ(revision(db), 0);
	TEST_DONE();

	TEST_START("refuses a bad role, selector or name, and a selector twice");
	pattern(4, salt, hash);
	err_clear(&e);
	ASSERT_INT_EQ(db_token_add(db, "1111222233334444", "root", NULL, salt,
	    hash, &id, &e), ERR_INVALID);
	ASSERT_STR_EQ(e.where, "role");
	err_clear(&e);
	ASSERT_INT_EQ(db_token_add(db, "11112222", "read", NULL, salt, hash,
	    &id, &e), ERR_INVALID);
	ASSERT_STR_EQ(e.where, "selector");
	err_clear(&e);
	memset(name, 'n', 65);
	name[65] = '\0';
	ASSERT_INT_EQ(db_token_add(db, "1111222233334444", "read", name, salt,
	    hash, &id, &e), ERR_INVALID);
	ASSERT_STR_EQ(e.where, "name");
	err_clear(&e);
	ASSERT_INT_EQ(db_token_add(db, "0123456789abcdef", "read", NULL, salt,
	    hash, &id, &e), ERR_CONFLICT);
	ASSERT_STR_EQ(e.where, "selector");
	err_clear(&e);
	ASSERT_SHELL(path, "SELECT count(*) FROM tokens;", "3");
	TEST_DONE();

	TEST_START("revokes a token: kept, but no longer listed as valid");
	ASSERT_INT_EQ(db_token_revoke(db, 2, &was, &e), 0);
	ASSERT_TRUE(!was);
	ASSERT_INT_EQ(db_token_list(db, true, &t, &n, &e), 0);
	ASSERT_INT_EQ(n, 2);
	if (n == 2) {
		ASSERT_INT_EQ(t[0].id, 1);
		ASSERT_INT_EQ(t[1].id, 3);
	}
	free(t);
	t = NULL;
	ASSERT_INT_EQ(db_token_list(db, false, &t, &n, &e), 0);
	ASSERT_INT_EQ(n, 3);
	if (n == 3)
		ASSERT_INT_EQ(strlen(t[1].revoked_at), 20);
	free(t);
	t = NULL;
	ASSERT_SHELL(path, "SELECT id FROM tokens WHERE revoked_at IS NOT "
	    "NULL;", "2");
	ASSERT_INT_EQ(db_token_revoke(db, 2, &was, &e), 0);
	ASSERT_TRUE(was);
	ASSERT_INT_EQ(db_token_revoke(db, 99, &was, &e), ERR_NOTFOUND);
	ASSERT_STR_EQ(e.where, "id");
	err_clear(&e);
	ASSERT_INT_EQ(revision(db), 0);
	TEST_DONE();
	db_close(db);
}

static void
test_audit(void)
{
	struct db_audit a;
	struct db *db = NULL;
	struct err e = { 0 };
	char path[128];

	new_path(path, sizeof(path));
	TEST_START("appends audit rows; no token and no revision are NULL");
	ASSERT_INT_EQ(db_open(path, &db, &e), 0);
	memset(&a, 0, sizeof(a));
	a.who = "local";
	a.client = "127.0.0.1";
	a.method = "PUT";
	a.path = "/v1/topology";
	a.status = 200;
	a.model_revision = 7;
	a.request_id = "abc-1";
	ASSERT_INT_EQ(db_audit_add(db, &a, &e), 0);
	a.who = "anonymous";
	a.client = NULL;
	a.method = "PATCH";
	a.path = "/v1/links/L1";
	a.status = 401;
	a.model_revision = 0;
	a.request_id = NULL;
	ASSERT_INT_EQ(db_audit_add(db, &a, &e), 0);
	a.who = "ops";
	a.token_id = 5;
	a.method = "POST";
	a.path = "/v1/whatif";
	a.status = 200;
	ASSERT_INT_EQ(db_audit_add(db, &a, &e), 0);
	ASSERT_SHELL(path, "SELECT id, who, quote(token_id), client, method, "
	    "path, status, quote(model_revision), request_id FROM audit "
	    "ORDER BY id;",
	    "1|local|NULL|127.0.0.1|PUT|/v1/topology|200|7|abc-1\n"
	    "2|anonymous|NULL||PATCH|/v1/links/L1|401|NULL|\n"
	    "3|ops|5||POST|/v1/whatif|200|NULL|");
	ASSERT_SHELL(path, "SELECT count(*) FROM audit WHERE at GLOB "
	    "'[0-9][0-9][0-9][0-9]-[0-9][0-9]-[0-9][0-9]T[0-9][0-9]:[0-9][0-9]"
	    ":[0-9][0-9]Z';", "3");
	ASSERT_INT_EQ(revision(db), 0);
	TEST_DONE();

	TEST_START("refuses an audit row without who, method or path");
	a.who = NULL;
	ASSERT_INT_EQ(db_audit_add(db, &a, &e), ERR_INVALID);
	err_clear(&e);
	ASSERT_SHELL(path, "SELECT count(*) FROM audit;", "3");
	TEST_DONE();
	db_close(db);
}

/*
 * db_open_tool() is for a second process beside the daemon: it must not
 * take the daemon's running sweep for one that was left behind.
 */
static void
test_open_tool(void)
{
	struct db *db = NULL;
	struct err e = { 0 };
	char path[128];
	int64_t id;

	new_path(path, sizeof(path));
	TEST_START("a tool's connection leaves running sweeps alone");
	ASSERT_INT_EQ(db_open(path, &db, &e), 0);
	ASSERT_INT_EQ(db_sweep_create(db, "links", 0, 0, 3, "{}", &id, &e), 0);
	db_close(db);
	db = NULL;
	ASSERT_INT_EQ(db_open_tool(path, &db, &e), 0);
	db_close(db);
	db = NULL;
	ASSERT_SHELL(path, "SELECT state FROM sweeps;", "running");
	ASSERT_INT_EQ(db_open(path, &db, &e), 0);
	ASSERT_SHELL(path, "SELECT state FROM sweeps;", "interrupted");
	db_close(db);
	TEST_DONE();
}

/* A schema 3 database gains the token and audit tables, data kept. */
static void
test_migrate_from_3(void)
{
	struct db_token *t = NULL;
	struct db *db = NULL;
	struct err e = { 0 };
	char path[128], want[32], *sql, *out;
	size_t n = 9;

	new_path(path, sizeof(path));
	TEST_START("migrates a schema 3 database: no tokens, no audit rows");
	sql = xasprintf("%s%s%sPRAGMA user_version = 3;\n"
	    "UPDATE meta SET value = 6 WHERE key = 'model_revision';\n",
	    schema_migrations[0], schema_migrations[1], schema_migrations[2]);
	out = shell(path, sql);
	ASSERT_STR_EQ(out, "");
	free(out);
	free(sql);
	ASSERT_INT_EQ(db_open(path, &db, &e), 0);
	snprintf(want, sizeof(want), "%zu", schema_migrations_n);
	ASSERT_SHELL(path, "PRAGMA user_version;", want);
	ASSERT_INT_EQ(revision(db), 6);
	ASSERT_INT_EQ(db_token_list(db, false, &t, &n, &e), 0);
	ASSERT_INT_EQ(n, 0);
	ASSERT_TRUE(t == NULL);
	ASSERT_SHELL(path, "SELECT count(*) FROM audit;", "0");
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
	test_tokens();
	test_audit();
	test_open_tool();
	test_migrate_from_3();
	rm_tmpdir();
	return tap_finish();
}
