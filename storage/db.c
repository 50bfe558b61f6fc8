/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Opening the database: pragmas, migrations, the model revision, helpers. */

/*
 * DESIGN
 * db_open() makes one connection (SQLITE_OPEN_NOMUTEX: the caller keeps it
 * on one thread at a time), waits up to DB_BUSY_MS for locks, turns on WAL,
 * synchronous=FULL and foreign keys, then applies the migrations compiled in
 * from storage/schema/ (schema.h).  PRAGMA user_version counts the
 * migrations applied; each one runs in its own IMMEDIATE transaction that
 * also sets user_version, so a crash mid-migration leaves the previous
 * version intact and two processes opening the same new file cannot both
 * migrate it.  The model revision lives in meta under "model_revision";
 * every model write adds exactly one inside its own transaction
 * (db_begin_change), so a revision names exactly one committed state.
 * A sweep left "running" in the file belongs to a process that is gone,
 * unless this process has the file open already (a second connection,
 * opened by another thread while a sweep runs): open_files counts this
 * process's connections per file (device and inode, so two spellings of
 * one path are one file), and only the first connection marks such sweeps
 * "interrupted".
 */

#include <sys/stat.h>
#include <sys/types.h>

#include <pthread.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <sqlite3.h>

#include "db.h"
#include "db_internal.h"
#include "schema.h"
#include "../daemon/base/err.h"
#include "../daemon/base/fault.h"
#include "../daemon/base/xalloc.h"

/* ---- helpers shared by the query files ---- */

int
db_fail(struct db *db, int rc, const char *what, struct err *e)
{
	const char *why = NULL;
	int code = ERR_DB;

	switch (rc & 0xff) {
	case SQLITE_BUSY:
	case SQLITE_LOCKED:
		code = ERR_BUSY;
		why = "the database is locked by another connection";
		break;
	case SQLITE_FULL:
		why = "the disk or the database is full";
		break;
	case SQLITE_READONLY:
		why = "the database is read-only";
		break;
	case SQLITE_IOERR:
		why = "input/output error on the database file";
		break;
	case SQLITE_CORRUPT:
	case SQLITE_NOTADB:
		why = "the file is damaged or not a weft database";
		break;
	default:
		break;
	}
	if (why != NULL)
		return err_set(e, code, NULL, "%s: %s (%s)", what, why,
		    db != NULL && db->sq != NULL ? sqlite3_errmsg(db->sq) :
		    sqlite3_errstr(rc));
	return err_set(e, code, NULL, "%s: %s", what,
	    db != NULL && db->sq != NULL ? sqlite3_errmsg(db->sq) :
	    sqlite3_errstr(rc));
}

int
db_prepare(struct db *db, const char *sql, sqlite3_stmt **stp, struct err *e)
{
	int rc;

	*stp = NULL;
	rc = sqlite3_prepare_v2(db->sq, sql, -1, stp, NULL);
	if (rc != SQLITE_OK) {
		sqlite3_finalize(*stp);
		*stp = NULL;
		return db_fail(db, rc, "preparing a statement", e);
	}
	return 0;
}

int
db_exec(struct db *db, const char *sql, struct err *e)
{
	sqlite3_stmt *st = NULL;
	int r, rc;

	if ((r = db_prepare(db, sql, &st, e)) != 0)
		return r;
	while ((rc = sqlite3_step(st)) == SQLITE_ROW)
		;
	r = 0;
	if (rc != SQLITE_DONE)
		r = db_fail(db, rc, sql, e);
	sqlite3_finalize(st);
	return r;
}

int
db_step(struct db *db, sqlite3_stmt *st, bool *rowp, const char *what,
    struct err *e)
{
	int rc;

	if (rowp != NULL)
		*rowp = false;
	rc = sqlite3_step(st);
	if (rc == SQLITE_DONE)
		return 0;
	if (rc == SQLITE_ROW && rowp != NULL) {
		*rowp = true;
		return 0;
	}
	return db_fail(db, rc, what, e);
}

int
db_run_key(struct db *db, const char *sql, const char *key, bool *rowp,
    const char *what, struct err *e)
{
	sqlite3_stmt *st = NULL;
	int r = ERR_INTERNAL, rc;

	if (rowp != NULL)
		*rowp = false;
	if ((r = db_prepare(db, sql, &st, e)) != 0)
		goto out;
	if ((rc = sqlite3_bind_text(st, 1, key, -1, SQLITE_STATIC)) !=
	    SQLITE_OK) {
		r = db_fail(db, rc, what, e);
		goto out;
	}
	r = db_step(db, st, rowp, what, e);
out:
	sqlite3_finalize(st);
	return r;
}

#ifdef WEFT_FAULTS
/*
 * Test builds: the SQLite result an injected fault at point stands for,
 * named by its argument (the result's name, or the errno a file system
 * gives for it); SQLITE_IOERR for any other argument, SQLITE_OK while the
 * point is off.
 */
static int
fault_rc(const char *point)
{
	static const struct {
		const char *arg;
		int rc;
	} rcs[] = {
		{ "FULL", SQLITE_FULL }, { "ENOSPC", SQLITE_FULL },
		{ "READONLY", SQLITE_READONLY }, { "EROFS", SQLITE_READONLY },
		{ "IOERR", SQLITE_IOERR }, { "EIO", SQLITE_IOERR },
		{ "BUSY", SQLITE_BUSY }, { "CORRUPT", SQLITE_CORRUPT },
	};
	char arg[16];
	size_t i;

	if (!fault_hit(point, arg, sizeof(arg)))
		return SQLITE_OK;
	for (i = 0; i < sizeof(rcs) / sizeof(rcs[0]); i++)
		if (strcmp(arg, rcs[i].arg) == 0)
			return rcs[i].rc;
	return SQLITE_IOERR;
}
#endif

int
db_begin(struct db *db, bool write, struct err *e)
{
#ifdef WEFT_FAULTS
	int rc;

	/* Before the transaction: db_begin for writes, db_read for reads. */
	if ((rc = fault_rc(write ? "db_begin" : "db_read")) != SQLITE_OK)
		return db_fail(NULL, rc, write ? "starting a write transaction "
		    "(injected fault)" : "starting a read transaction "
		    "(injected fault)", e);
#endif
	return db_exec(db, write ? "BEGIN IMMEDIATE" : "BEGIN DEFERRED", e);
}

int
db_commit(struct db *db, struct err *e)
{
#ifdef WEFT_FAULTS
	int rc;

	/*
	 * After the writes of a write transaction, in place of its COMMIT:
	 * the caller's db_rollback() then undoes them, as after a real
	 * failed commit.  Read transactions commit as usual.
	 */
	if (sqlite3_txn_state(db->sq, NULL) == SQLITE_TXN_WRITE &&
	    (rc = fault_rc("db_commit")) != SQLITE_OK)
		return db_fail(NULL, rc, "committing a write transaction "
		    "(injected fault)", e);
#endif
	return db_exec(db, "COMMIT", e);
}

void
db_rollback(struct db *db)
{
	if (db == NULL || db->sq == NULL || sqlite3_get_autocommit(db->sq))
		return;
	(void)db_exec(db, "ROLLBACK", NULL);
}

int
db_read_revision(struct db *db, int64_t *revp, struct err *e)
{
	sqlite3_stmt *st = NULL;
	int r, rc;

	*revp = 0;
	if ((r = db_prepare(db,
	    "SELECT value FROM meta WHERE key = 'model_revision'", &st, e)) != 0)
		return r;
	rc = sqlite3_step(st);
	if (rc == SQLITE_ROW) {
		*revp = sqlite3_column_int64(st, 0);
		r = 0;
	} else if (rc == SQLITE_DONE)
		r = err_set(e, ERR_DB, NULL,
		    "the meta table has no model_revision row");
	else
		r = db_fail(db, rc, "reading the model revision", e);
	sqlite3_finalize(st);
	return r;
}

int
db_begin_change(struct db *db, int64_t *revp, struct err *e)
{
	int r;

	*revp = 0;
	if ((r = db_begin(db, true, e)) != 0)
		return r;
	if ((r = db_exec(db, "UPDATE meta SET value = value + 1 "
	    "WHERE key = 'model_revision'", e)) != 0)
		return r;
	if (sqlite3_changes(db->sq) != 1)
		return err_set(e, ERR_DB, NULL,
		    "the meta table has no model_revision row");
	return db_read_revision(db, revp, e);
}

int
db_check_name(const char *name, const char *where, struct err *e)
{
	if (name == NULL || name[0] == '\0')
		return err_set(e, ERR_INVALID, where, "empty name");
	if (strlen(name) > DB_NAME_MAX)
		return err_set(e, ERR_INVALID, where,
		    "name longer than %d bytes", DB_NAME_MAX);
	return 0;
}

char *
db_column_strdup(sqlite3_stmt *st, int col)
{
	const unsigned char *s;

	s = sqlite3_column_text(st, col);
	return s != NULL ? xstrdup((const char *)s) : NULL;
}

/* ---- connections of this process, per file ---- */

struct open_file {
	dev_t dev;
	ino_t ino;
	int n;			/* connections open, >= 1 */
	struct open_file *next;	/* owned */
};

static pthread_mutex_t open_mu = PTHREAD_MUTEX_INITIALIZER;
static struct open_file *open_files;	/* guarded by open_mu */

/*
 * Counts db as a connection to the file at path; when it is the first of
 * this process, marks the file's running sweeps interrupted first (under
 * open_mu, so two threads opening at once agree on which is first).  A
 * path stat() cannot see (SQLite's ":memory:") is private to db: it
 * counts as first and is not counted.
 */
static int
count_open(struct db *db, const char *path, struct err *e)
{
	struct open_file *f;
	struct stat sb;
	int r = ERR_INTERNAL;

	if (stat(path, &sb) != 0)
		return db_sweeps_interrupt(db, e);
	pthread_mutex_lock(&open_mu);
	for (f = open_files; f != NULL; f = f->next)
		if (f->dev == sb.st_dev && f->ino == sb.st_ino)
			break;
	if (f == NULL) {
		if ((r = db_sweeps_interrupt(db, e)) != 0)
			goto out;
		f = xcalloc(1, sizeof(*f));
		f->dev = sb.st_dev;
		f->ino = sb.st_ino;
		f->next = open_files;
		open_files = f;
	}
	f->n++;
	db->counted = true;
	db->dev = sb.st_dev;
	db->ino = sb.st_ino;
	r = 0;
out:
	pthread_mutex_unlock(&open_mu);
	return r;
}

static void
count_close(struct db *db)
{
	struct open_file **fp, *f;

	if (!db->counted)
		return;
	pthread_mutex_lock(&open_mu);
	for (fp = &open_files; (f = *fp) != NULL; fp = &f->next)
		if (f->dev == db->dev && f->ino == db->ino)
			break;
	if (f != NULL && --f->n == 0) {
		*fp = f->next;
		free(f);
	}
	pthread_mutex_unlock(&open_mu);
	db->counted = false;
}

/* ---- open, pragmas, migrations ---- */

/*
 * Runs a PRAGMA and copies the first column of its first row (if any) into
 * out.  PRAGMA takes no bound parameters, so sql is always our own text.
 */
static int
pragma(struct db *db, const char *sql, char *out, size_t outlen,
    struct err *e)
{
	sqlite3_stmt *st = NULL;
	const unsigned char *s;
	int r, rc;

	if (out != NULL && outlen > 0)
		out[0] = '\0';
	if ((r = db_prepare(db, sql, &st, e)) != 0)
		return r;
	while ((rc = sqlite3_step(st)) == SQLITE_ROW) {
		s = sqlite3_column_text(st, 0);
		if (out != NULL && outlen > 0 && out[0] == '\0' && s != NULL)
			snprintf(out, outlen, "%s", (const char *)s);
	}
	r = 0;
	if (rc != SQLITE_DONE)
		r = db_fail(db, rc, sql, e);
	sqlite3_finalize(st);
	return r;
}

/* Runs every statement of a migration script in turn. */
static int
exec_script(struct db *db, const char *sql, int version, struct err *e)
{
	sqlite3_stmt *st = NULL;
	const char *tail = sql, *next;
	char what[64];
	int r = ERR_INTERNAL, rc;

	snprintf(what, sizeof(what), "applying schema migration %d", version);
	while (*tail != '\0') {
		rc = sqlite3_prepare_v2(db->sq, tail, -1, &st, &next);
		if (rc != SQLITE_OK) {
			r = db_fail(db, rc, what, e);
			goto out;
		}
		if (st == NULL)		/* only comments or blanks were left */
			break;
		while ((rc = sqlite3_step(st)) == SQLITE_ROW)
			;
		if (rc != SQLITE_DONE) {
			r = db_fail(db, rc, what, e);
			goto out;
		}
		sqlite3_finalize(st);
		st = NULL;
		tail = next;
	}
	r = 0;
out:
	sqlite3_finalize(st);
	return r;
}

static int
migrate(struct db *db, struct err *e)
{
	char buf[32], sql[64];
	long version;
	int r = ERR_INTERNAL;

	for (;;) {
		/* Read the version under the write lock: another process may
		   have migrated between our open and this transaction. */
		if ((r = db_begin(db, true, e)) != 0)
			goto out;
		if ((r = pragma(db, "PRAGMA user_version", buf, sizeof(buf),
		    e)) != 0)
			goto out;
		version = strtol(buf, NULL, 10);
		if (version < 0 || (size_t)version > schema_migrations_n) {
			r = err_set(e, ERR_DB, NULL, "database schema version "
			    "%ld is newer than this program knows (%zu)",
			    version, schema_migrations_n);
			goto out;
		}
		if ((size_t)version == schema_migrations_n)
			break;
		if ((r = exec_script(db, schema_migrations[version],
		    (int)version + 1, e)) != 0)
			goto out;
		snprintf(sql, sizeof(sql), "PRAGMA user_version = %ld",
		    version + 1);
		if ((r = pragma(db, sql, NULL, 0, e)) != 0)
			goto out;
		if ((r = db_commit(db, e)) != 0)
			goto out;
	}
	if ((r = db_commit(db, e)) != 0)
		goto out;
	r = 0;
out:
	if (r != 0)
		db_rollback(db);
	return r;
}

/*
 * Opens the connection; with recover, counts it among this process's
 * connections and, as the first, marks left-over running sweeps
 * interrupted (db_open); without, does neither (db_open_tool).
 */
static int
open_db(const char *path, bool recover, struct db **dbp, struct err *e)
{
	struct db *db = NULL;
	char buf[32];
	int r = ERR_INTERNAL, rc;

	*dbp = NULL;
	if (path == NULL || path[0] == '\0') {
		r = err_set(e, ERR_IO, NULL, "no database path given");
		goto out;
	}
	db = xcalloc(1, sizeof(*db));
	rc = sqlite3_open_v2(path, &db->sq, SQLITE_OPEN_READWRITE |
	    SQLITE_OPEN_CREATE | SQLITE_OPEN_NOMUTEX, NULL);
	if (rc != SQLITE_OK) {
		if (db->sq == NULL) {
			r = err_set(e, ERR_NOMEM, NULL,
			    "no memory to open the database");
			goto out;
		}
		r = err_set(e, (rc & 0xff) == SQLITE_CANTOPEN ? ERR_IO :
		    ERR_DB, NULL, "cannot open database %s: %s", path,
		    sqlite3_errmsg(db->sq));
		goto out;
	}
	sqlite3_extended_result_codes(db->sq, 1);
	sqlite3_busy_timeout(db->sq, DB_BUSY_MS);

	/* The first statement reads the file: a non-database fails here. */
	if ((r = pragma(db, "PRAGMA journal_mode = WAL", buf, sizeof(buf),
	    e)) != 0)
		goto out;
	if (strcmp(buf, "wal") != 0) {
		r = err_set(e, ERR_DB, NULL, "database %s: cannot use "
		    "write-ahead logging (journal mode is %s)", path, buf);
		goto out;
	}
	if ((r = pragma(db, "PRAGMA synchronous = FULL", NULL, 0, e)) != 0)
		goto out;
	if ((r = pragma(db, "PRAGMA foreign_keys = ON", NULL, 0, e)) != 0)
		goto out;
	/* A build without foreign key support ignores the pragma. */
	if ((r = pragma(db, "PRAGMA foreign_keys", buf, sizeof(buf), e)) != 0)
		goto out;
	if (strcmp(buf, "1") != 0) {
		r = err_set(e, ERR_DB, NULL,
		    "this SQLite does not enforce foreign keys");
		goto out;
	}
	if ((r = migrate(db, e)) != 0 ||
	    (recover && (r = count_open(db, path, e)) != 0))
		goto out;

	*dbp = db;
	db = NULL;
	r = 0;
out:
	db_close(db);
	return r;
}

int
db_open(const char *path, struct db **dbp, struct err *e)
{
	return open_db(path, true, dbp, e);
}

int
db_open_tool(const char *path, struct db **dbp, struct err *e)
{
	return open_db(path, false, dbp, e);
}

void
db_close(struct db *db)
{
	if (db == NULL)
		return;
	count_close(db);
	/* All statements are finalized by the calls that made them, so
	   sqlite3_close() cannot be left busy. */
	sqlite3_close(db->sq);
	free(db);
}

int
db_revision(struct db *db, int64_t *revp, struct err *e)
{
	return db_read_revision(db, revp, e);
}
