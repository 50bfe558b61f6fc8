/* SPDX-License-Identifier: GPL-3.0-or-later */
/* What storage's query files share: the connection and SQL helpers. */
#ifndef WEFT_STORAGE_DB_INTERNAL_H
#define WEFT_STORAGE_DB_INTERNAL_H

/*
 * Private to storage/: only files in this directory include it, and so
 * only they see sqlite3.h.  All helpers take struct err *e last and return
 * 0 or a negative ERR_ code with detail in e, like the public calls.
 */

#include <sys/types.h>

#include <stdbool.h>
#include <stdint.h>

#include <sqlite3.h>

struct err;

#define DB_BUSY_MS	5000	/* how long a statement waits for a lock */
#define DB_NAME_MAX	128	/* longest matrix name, bytes */

struct db {
	sqlite3 *sq;		/* owned: one connection, one thread at a time */
	bool counted;		/* counted in db.c's open files (dev, ino) */
	dev_t dev;		/* the database file, when counted */
	ino_t ino;
};

/*
 * Records the SQLite failure rc of the last call on db as an error in e
 * (what says which step failed) and returns its code: ERR_BUSY for a lock
 * held past DB_BUSY_MS, ERR_DB for everything else, with a plain sentence
 * for a full disk, a read-only file and an I/O error.
 */
int db_fail(struct db *db, int rc, const char *what, struct err *e);

/* Prepares one statement of sql into *stp (NULL on failure). */
int db_prepare(struct db *db, const char *sql, sqlite3_stmt **stp,
    struct err *e);

/* Runs fixed SQL without parameters that returns no rows we need. */
int db_exec(struct db *db, const char *sql, struct err *e);

/*
 * Steps st once.  With rowp, both a row (*rowp true) and the end of the
 * rows (*rowp false) are success; without, only the end is.  Anything
 * else is db_fail() with what naming the step.  st stays the caller's.
 */
int db_step(struct db *db, sqlite3_stmt *st, bool *rowp, const char *what,
    struct err *e);

/*
 * Prepares sql, binds key to ?1 (text, borrowed for the call; NULL binds
 * SQL NULL), steps it once as db_step() does and finalizes it: one lookup
 * or one deletion by a name or id.  A failure to bind or step is reported
 * under what.
 */
int db_run_key(struct db *db, const char *sql, const char *key, bool *rowp,
    const char *what, struct err *e);

/*
 * Opens a transaction: for writes BEGIN IMMEDIATE (takes the write lock
 * now, so validation and the write see the same state), for reads BEGIN
 * DEFERRED (one consistent snapshot across several SELECTs).
 */
int db_begin(struct db *db, bool write, struct err *e);

/* Commits the open transaction. */
int db_commit(struct db *db, struct err *e);

/*
 * Rolls the open transaction back; does nothing when none is open (SQLite
 * may already have rolled back after some errors).  Errors are ignored:
 * the caller is already reporting the first one.
 */
void db_rollback(struct db *db);

/*
 * Opens the write transaction of a model change (db_begin(db, true)) and
 * adds one to the model revision in it, returning the new value in *revp.
 * Every model write starts here, so a revision names one committed state.
 * On failure, as after any failure in a transaction, the caller calls
 * db_rollback().
 */
int db_begin_change(struct db *db, int64_t *revp, struct err *e);

/* Reads the model revision (inside or outside a transaction). */
int db_read_revision(struct db *db, int64_t *revp, struct err *e);

/*
 * Checks a matrix name: non-NULL, 1..DB_NAME_MAX bytes.  Returns 0 or
 * ERR_INVALID under where.
 */
int db_check_name(const char *name, const char *where, struct err *e);

/* Column text copied into a new string, or NULL for an SQL NULL. */
char *db_column_strdup(sqlite3_stmt *st, int col);

/*
 * Inside a write transaction: replaces matrix name (its row, stamped with
 * revision rev, and all its demands, in mx's order) with mx.  Checks
 * nothing: the caller has validated mx and its node ids.
 */
struct matrix;
int db_write_matrix(struct db *db, const char *name, const struct matrix *mx,
    int64_t rev, struct err *e);

/*
 * Reads matrix name with its demands in stored order.  *mxp is new and
 * the caller's, or NULL when no such matrix is stored (not an error).
 */
int db_read_matrix(struct db *db, const char *name, struct matrix **mxp,
    struct err *e);

/*
 * Reads the stored policy into p (clearing what p held); the default
 * policy (policy_default()) when none is stored.
 */
struct policy;
int db_read_policy(struct db *db, struct policy *p, struct err *e);

/*
 * Sets every sweep still "running" to "interrupted", finished_at now: the
 * process that ran them is gone.  db_open() calls it for the first
 * connection of this process to a file.
 */
int db_sweeps_interrupt(struct db *db, struct err *e);

#endif /* WEFT_STORAGE_DB_INTERNAL_H */
