/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Online backup: SQLite's backup API into a checked, renamed copy. */

/*
 * DESIGN
 * See backup.h.  The source is opened without SQLITE_OPEN_CREATE and
 * with PRAGMA query_only, and without migrations (db_open() would migrate
 * and mark sweeps interrupted: a backup must change nothing).  It is
 * opened for writing all the same (SQLite falls back to read-only when
 * the file is not writable): when no daemon has the file open, the
 * backup's connection is the last one to close and removes the -wal and
 * -shm files it had to create, as a read-only one could not.  It must be a weft database (a meta table with the
 * model revision); its schema version may be newer than this program
 * knows, since copying pages does not depend on it.  The destination is
 * a fresh temporary file (mkstemp, mode 0600: the database holds the
 * network) in the destination's directory, so the final rename stays in
 * one file system.  A busy source (a lock held past the busy timeout) is
 * tried again a few times before giving up.
 */

#include <sys/stat.h>
#include <sys/types.h>

#include <errno.h>
#include <fcntl.h>
#include <libgen.h>
#include <limits.h>
#include <stdbool.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include <sqlite3.h>

#include "backup.h"
#include "db.h"
#include "db_internal.h"
#include "../daemon/base/err.h"
#include "../daemon/base/xalloc.h"

#define BACKUP_BUSY_TRIES	20	/* backup steps tried on a busy source */
#define BACKUP_BUSY_WAIT_MS	250	/* the wait between them */

/* Opens a bare connection (no pragmas, no migrations). */
static int
conn_open(const char *path, int flags, struct db **dbp, struct err *e)
{
	struct db *db;
	int rc;

	*dbp = NULL;
	db = xcalloc(1, sizeof(*db));
	rc = sqlite3_open_v2(path, &db->sq, flags | SQLITE_OPEN_NOMUTEX, NULL);
	if (rc != SQLITE_OK) {
		if (db->sq == NULL) {
			free(db);
			return err_set(e, ERR_NOMEM, NULL,
			    "no memory to open %s", path);
		}
		rc = err_set(e, (rc & 0xff) == SQLITE_CANTOPEN ? ERR_IO :
		    ERR_DB, NULL, "cannot open %s: %s", path,
		    sqlite3_errmsg(db->sq));
		db_close(db);
		return rc;
	}
	sqlite3_extended_result_codes(db->sq, 1);
	sqlite3_busy_timeout(db->sq, DB_BUSY_MS);
	*dbp = db;
	return 0;
}

/*
 * Runs sql (our own text, no parameters) and copies the first column of
 * its first row as text into out ("" when there is no row).
 */
static int
first_text(struct db *db, const char *sql, char *out, size_t outlen,
    struct err *e)
{
	sqlite3_stmt *st = NULL;
	const unsigned char *s;
	bool row;
	int r;

	out[0] = '\0';
	if ((r = db_prepare(db, sql, &st, e)) != 0)
		return r;
	if ((r = db_step(db, st, &row, sql, e)) == 0 && row &&
	    (s = sqlite3_column_text(st, 0)) != NULL)
		snprintf(out, outlen, "%s", (const char *)s);
	sqlite3_finalize(st);
	return r;
}

/* Reads the schema version, page size and model revision of db. */
static int
describe(struct db *db, const char *path, struct db_backup_info *info,
    struct err *e)
{
	char buf[64];
	int r;

	if ((r = first_text(db, "PRAGMA user_version", buf, sizeof(buf),
	    e)) != 0)
		return r;
	info->schema_version = strtol(buf, NULL, 10);
	if ((r = first_text(db, "PRAGMA page_size", buf, sizeof(buf), e)) != 0)
		return r;
	info->page_size = strtol(buf, NULL, 10);
	if (info->schema_version < 1 || first_text(db, "SELECT value FROM "
	    "meta WHERE key = 'model_revision'", buf, sizeof(buf), NULL) != 0 ||
	    buf[0] == '\0')
		return err_set(e, ERR_DB, NULL, "%s is not a weft database",
		    path);
	info->model_revision = strtoll(buf, NULL, 10);
	return 0;
}

/* Copies every page of src into dst in one step (see DESIGN). */
static int
copy(struct db *src, struct db *dst, struct db_backup_info *info,
    struct err *e)
{
	sqlite3_backup *b;
	int rc, tries;

	if ((b = sqlite3_backup_init(dst->sq, "main", src->sq, "main")) ==
	    NULL)
		return db_fail(dst, sqlite3_extended_errcode(dst->sq),
		    "starting the backup", e);
	for (tries = 1;; tries++) {
		rc = sqlite3_backup_step(b, -1);
		if (rc == SQLITE_DONE)
			break;
		if (((rc & 0xff) == SQLITE_BUSY || (rc & 0xff) ==
		    SQLITE_LOCKED) && tries < BACKUP_BUSY_TRIES) {
			sqlite3_sleep(BACKUP_BUSY_WAIT_MS);
			continue;
		}
		(void)sqlite3_backup_finish(b);
		return db_fail(dst, rc, "copying the database", e);
	}
	info->pages = sqlite3_backup_pagecount(b);
	if ((rc = sqlite3_backup_finish(b)) != SQLITE_OK)
		return db_fail(dst, rc, "finishing the backup", e);
	return 0;
}

/* fsync()s the file or directory at path. */
static int
sync_path(const char *path, struct err *e)
{
	int fd, r = 0;

	if ((fd = open(path, O_RDONLY | O_CLOEXEC)) < 0)
		return err_set(e, ERR_IO, NULL, "cannot open %s: %s", path,
		    strerror(errno));
	if (fsync(fd) != 0)
		r = err_set(e, ERR_IO, NULL, "cannot sync %s: %s", path,
		    strerror(errno));
	close(fd);
	return r;
}

/* Removes the temporary copy and whatever SQLite left beside it. */
static void
remove_tmp(const char *tmp)
{
	static const char *const sfx[] = { "", "-journal", "-wal", "-shm" };
	char path[PATH_MAX + 16];
	size_t i;

	for (i = 0; i < sizeof(sfx) / sizeof(sfx[0]); i++) {
		snprintf(path, sizeof(path), "%s%s", tmp, sfx[i]);
		(void)unlink(path);
	}
}

int
db_backup(const char *src, const char *dst, struct db_backup_info *info,
    struct err *e)
{
	struct db_backup_info copied;
	struct db *s = NULL, *d = NULL;
	struct stat sb;
	char tmp[PATH_MAX], dir[PATH_MAX], check[256];
	bool made = false;
	int fd, r = ERR_INTERNAL;

	memset(info, 0, sizeof(*info));
	memset(&copied, 0, sizeof(copied));
	if (stat(src, &sb) != 0) {
		r = err_set(e, ERR_IO, NULL, "%s: %s", src, strerror(errno));
		goto out;
	}
	if ((size_t)snprintf(tmp, sizeof(tmp), "%s.tmp-XXXXXX", dst) >=
	    sizeof(tmp) || (size_t)snprintf(dir, sizeof(dir), "%s", dst) >=
	    sizeof(dir)) {
		r = err_set(e, ERR_IO, NULL, "destination path too long");
		goto out;
	}
	if ((r = conn_open(src, SQLITE_OPEN_READWRITE, &s, e)) != 0 ||
	    (r = first_text(s, "PRAGMA query_only = 1", check, sizeof(check),
	    e)) != 0 || (r = describe(s, src, info, e)) != 0)
		goto out;
	if ((fd = mkstemp(tmp)) < 0) {
		r = err_set(e, ERR_IO, NULL, "cannot create a file beside %s: "
		    "%s", dst, strerror(errno));
		goto out;
	}
	close(fd);
	made = true;
	if ((r = conn_open(tmp, SQLITE_OPEN_READWRITE, &d, e)) != 0 ||
	    (r = copy(s, d, info, e)) != 0)
		goto out;
	db_close(s);
	s = NULL;

	/* The copy must stand on its own before it replaces anything. */
	if ((r = first_text(d, "PRAGMA integrity_check", check, sizeof(check),
	    e)) != 0)
		goto out;
	if (strcmp(check, "ok") != 0) {
		r = err_set(e, ERR_DB, NULL, "the copy fails the integrity "
		    "check: %s", check);
		goto out;
	}
	if ((r = describe(d, tmp, &copied, e)) != 0)
		goto out;
	info->model_revision = copied.model_revision;
	info->schema_version = copied.schema_version;
	db_close(d);
	d = NULL;
	if ((r = sync_path(tmp, e)) != 0)
		goto out;
	if (rename(tmp, dst) != 0) {
		r = err_set(e, ERR_IO, NULL, "cannot rename the copy to %s: %s",
		    dst, strerror(errno));
		goto out;
	}
	made = false;
	r = sync_path(dirname(dir), e);
out:
	db_close(d);
	db_close(s);
	if (made)
		remove_tmp(tmp);
	return r;
}
