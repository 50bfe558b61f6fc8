/* SPDX-License-Identifier: GPL-3.0-or-later */
/* weftd token add|list|revoke: make, list and revoke API tokens. */

/*
 * DESIGN
 * A short-lived process beside the daemon: it opens the database with
 * db_open_tool() (a running daemon's sweeps are left alone), does one
 * thing and exits.  The token is made by api/auth.c (getrandom(), a
 * salt, SHA-256), stored as selector, salt and hash only, printed once
 * and wiped from memory.  Messages for people go to standard error, so a
 * script can capture the token alone: TOKEN=$(weftd token add ...).
 */

#include <errno.h>
#include <stdbool.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "tokencmd.h"
#include "base/err.h"
#include "../api/auth.h"
#include "../storage/db.h"

static int
usage(void)
{
	fprintf(stderr,
	    "usage: weftd token add --db file --role read|operate|admin "
	    "[--name name]\n"
	    "       weftd token list --db file\n"
	    "       weftd token revoke --db file id\n");
	return 2;
}

/* A name: 1..DB_TOKEN_NAME_MAX of A-Z a-z 0-9 . _ - @, not reserved. */
static bool
name_ok(const char *s)
{
	size_t n = strlen(s);

	if (n == 0 || n > DB_TOKEN_NAME_MAX ||
	    strspn(s, "ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz"
	    "0123456789._-@") != n)
		return false;
	/* The audit log's words for requests without a good token. */
	return strcmp(s, "local") != 0 && strcmp(s, "anonymous") != 0 &&
	    strcmp(s, "invalid") != 0;
}

static int
cmd_add(struct db *db, const char *role_s, const char *name)
{
	char text[AUTH_TOKEN_LEN + 1], selector[AUTH_SELECTOR_LEN + 1];
	uint8_t salt[AUTH_SALT_LEN], hash[32];
	enum auth_role role;
	struct err e = { 0 };
	int64_t id;
	int rc = 1;

	if (role_s == NULL || auth_role_parse(role_s, &role) != 0) {
		fprintf(stderr, "weftd token add: --role must be read, "
		    "operate or admin\n");
		return 2;
	}
	if (name != NULL && !name_ok(name)) {
		fprintf(stderr, "weftd token add: --name takes 1 to %d of "
		    "A-Z a-z 0-9 . _ - @ (not local, anonymous or invalid)\n",
		    DB_TOKEN_NAME_MAX);
		return 2;
	}
	if (auth_token_make(text, selector, salt, hash, &e) != 0 ||
	    db_token_add(db, selector, auth_role_str(role), name, salt, hash,
	    &id, &e) != 0) {
		fprintf(stderr, "weftd token add: %s\n", e.msg);
		goto out;
	}
	if (printf("%s\n", text) < 0 || fflush(stdout) != 0) {
		fprintf(stderr, "weftd token add: cannot write the token: %s "
		    "(token %lld is stored; revoke it)\n", strerror(errno),
		    (long long)id);
		goto out;
	}
	fprintf(stderr, "weftd: token %lld (%s%s%s) made; it is shown only "
	    "this once\n", (long long)id, auth_role_str(role),
	    name != NULL ? ", " : "", name != NULL ? name : "");
	rc = 0;
out:
	explicit_bzero(text, sizeof(text));
	return rc;
}

static int
cmd_list(struct db *db)
{
	struct db_token *t = NULL;
	struct err e = { 0 };
	size_t n, i;

	if (db_token_list(db, false, &t, &n, &e) != 0) {
		fprintf(stderr, "weftd token list: %s\n", e.msg);
		return 1;
	}
	printf("%-6s %-8s %-24s %-21s %s\n", "ID", "ROLE", "NAME", "CREATED",
	    "REVOKED");
	for (i = 0; i < n; i++)
		printf("%-6lld %-8s %-24s %-21s %s\n", (long long)t[i].id,
		    t[i].role, t[i].name[0] != '\0' ? t[i].name : "-",
		    t[i].created_at, t[i].revoked_at[0] != '\0' ?
		    t[i].revoked_at : "-");
	free(t);
	return fflush(stdout) == 0 ? 0 : 1;
}

static int
cmd_revoke(struct db *db, const char *id_s)
{
	struct err e = { 0 };
	long long id;
	bool was;
	char *end;

	errno = 0;
	id = id_s != NULL ? strtoll(id_s, &end, 10) : 0;
	if (id_s == NULL || errno != 0 || end == id_s || *end != '\0' ||
	    id <= 0) {
		fprintf(stderr, "weftd token revoke: give the token's id (see "
		    "weftd token list)\n");
		return 2;
	}
	if (db_token_revoke(db, id, &was, &e) != 0) {
		fprintf(stderr, "weftd token revoke: %s\n", e.msg);
		return 1;
	}
	fprintf(stderr, "weftd: token %lld %s\n", id, was ?
	    "was revoked already" : "revoked");
	return 0;
}

int
tokencmd_main(int argc, char **argv)
{
	const char *cmd, *dbpath = NULL, *role = NULL, *name = NULL;
	const char *arg = NULL;
	struct err e = { 0 };
	struct db *db = NULL;
	int i, rc;

	if (argc < 2)
		return usage();
	cmd = argv[1];
	for (i = 2; i < argc; i++) {
		const char *a = argv[i], **dst = NULL, *v;
		size_t klen;

		if (strncmp(a, "--", 2) != 0) {
			if (arg != NULL)
				return usage();
			arg = a;
			continue;
		}
		klen = strcspn(a + 2, "=");
		if (klen == 2 && strncmp(a + 2, "db", 2) == 0)
			dst = &dbpath;
		else if (klen == 4 && strncmp(a + 2, "role", 4) == 0)
			dst = &role;
		else if (klen == 4 && strncmp(a + 2, "name", 4) == 0)
			dst = &name;
		else
			return usage();
		if (a[2 + klen] == '=')
			v = a + 3 + klen;
		else if (i + 1 < argc)
			v = argv[++i];
		else
			return usage();
		*dst = v;
	}
	if (dbpath == NULL || dbpath[0] == '\0')
		return usage();
	if (strcmp(cmd, "add") == 0) {
		if (arg != NULL)
			return usage();
	} else if (strcmp(cmd, "list") == 0) {
		if (arg != NULL || role != NULL || name != NULL)
			return usage();
	} else if (strcmp(cmd, "revoke") == 0) {
		if (arg == NULL || role != NULL || name != NULL)
			return usage();
	} else
		return usage();
	if (db_open_tool(dbpath, &db, &e) != 0) {
		fprintf(stderr, "weftd token %s: database %s: %s\n", cmd,
		    dbpath, e.msg);
		return 1;
	}
	if (strcmp(cmd, "add") == 0)
		rc = cmd_add(db, role, name);
	else if (strcmp(cmd, "list") == 0)
		rc = cmd_list(db);
	else
		rc = cmd_revoke(db, arg);
	db_close(db);
	return rc;
}
