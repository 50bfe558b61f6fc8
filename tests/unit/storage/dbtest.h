/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Helpers shared by the storage unit tests: a private temporary directory
   of database files, and the sqlite3 shell as an outside reader. */
#ifndef WEFT_TESTS_UNIT_STORAGE_DBTEST_H
#define WEFT_TESTS_UNIT_STORAGE_DBTEST_H

#include <dirent.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "../../tap.h"
#include "../../../daemon/base/xalloc.h"

/* mkdtemp() fills it in main(); each test binary has its own. */
static char tmpdir[] = "/tmp/weft-storage-test-XXXXXX";
static int seq;

static void
new_path(char *buf, size_t len)
{
	snprintf(buf, len, "%s/t%d.db", tmpdir, ++seq);
}

/*
 * Runs sql through the sqlite3 shell on path and returns its output (rows
 * one a line, columns split by '|', last newline removed); caller frees.
 */
static char *
shell(const char *path, const char *sql)
{
	char cmd[512], sqlpath[128], *out;
	size_t len = 0, cap = 256, got;
	FILE *f, *p;

	snprintf(sqlpath, sizeof(sqlpath), "%s/query.sql", tmpdir);
	if ((f = fopen(sqlpath, "w")) == NULL)
		return xstrdup("(cannot write query file)");
	fputs(sql, f);
	fclose(f);
	snprintf(cmd, sizeof(cmd), "/usr/bin/sqlite3 -batch -noheader -list "
	    "'%s' < '%s' 2>&1", path, sqlpath);
	if ((p = popen(cmd, "r")) == NULL)
		return xstrdup("(cannot run sqlite3)");
	out = xmalloc(cap);
	while ((got = fread(out + len, 1, cap - len - 1, p)) > 0) {
		len += got;
		if (cap - len < 2) {
			cap *= 2;
			out = xreallocarray(out, cap, 1);
		}
	}
	pclose(p);
	out[len] = '\0';
	while (len > 0 && out[len - 1] == '\n')
		out[--len] = '\0';
	return out;
}

#define ASSERT_SHELL(path, sql, want) do {				\
	char *_got = shell((path), (sql));				\
	ASSERT_STR_EQ(_got, (want));					\
	free(_got);							\
} while (0)

static void
rm_tmpdir(void)
{
	char path[512];
	struct dirent *de;
	DIR *d;

	if ((d = opendir(tmpdir)) == NULL)
		return;
	while ((de = readdir(d)) != NULL) {
		if (strcmp(de->d_name, ".") == 0 ||
		    strcmp(de->d_name, "..") == 0)
			continue;
		snprintf(path, sizeof(path), "%s/%s", tmpdir, de->d_name);
		unlink(path);
	}
	closedir(d);
	rmdir(tmpdir);
}

#endif /* WEFT_TESTS_UNIT_STORAGE_DBTEST_H */
