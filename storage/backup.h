/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Online backup of a weft database, while the daemon goes on writing. */
#ifndef WEFT_STORAGE_BACKUP_H
#define WEFT_STORAGE_BACKUP_H

/*
 * DESIGN
 * SQLite's backup API copies every page of the source inside one read
 * transaction: in WAL mode that is a snapshot of the last commit before
 * the copy began, taken while the daemon's connections go on reading and
 * writing (a reader never blocks the writer).  The copy is made in one
 * step on purpose: a copy made in several steps starts over whenever
 * another connection commits, and on a busy daemon it might never end.
 * The copy goes to a temporary file beside the destination, is checked
 * (PRAGMA integrity_check), synced, and renamed over the destination, so
 * the destination is either the old file or a whole checked copy.
 */

#include <stdint.h>

struct err;

/* What a backup copied (read from the copy). */
struct db_backup_info {
	int64_t model_revision;	/* the copy's model revision */
	long schema_version;	/* the copy's user_version */
	long pages;		/* pages copied */
	long page_size;		/* bytes per page */
};

/*
 * Copies the weft database at src (never created, its content never
 * changed) to dst, replacing dst if it exists.  Returns 0 with *info
 * filled, ERR_IO (src missing or unreadable, dst not writable), ERR_DB
 * (SQLite failed, or src is not a weft database), ERR_BUSY (src locked
 * past the busy timeout), with detail in e.  Any thread; not used by the
 * daemon itself.
 */
int db_backup(const char *src, const char *dst, struct db_backup_info *info,
    struct err *e);

#endif /* WEFT_STORAGE_BACKUP_H */
