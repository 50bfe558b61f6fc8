/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Reading a whole local file (a network, a matrix) into memory. */
#include <errno.h>
#include <stdbool.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>

#include "file.h"
#include "client.h"
#include "../../daemon/base/xalloc.h"

int
file_read(const char *path, char **bufp, size_t *lenp)
{
	FILE *f;
	char *buf = NULL;
	size_t len = 0, cap = 0, got;
	bool is_stdin = strcmp(path, "-") == 0;
	int r;

	r = RC_USAGE;
	*bufp = NULL;
	*lenp = 0;
	if ((f = is_stdin ? stdin : fopen(path, "rb")) == NULL) {
		msg("%s: %s", path, strerror(errno));
		return RC_USAGE;
	}
	for (;;) {
		if (cap - len < 65536) {
			cap = cap == 0 ? 65536 : 2 * cap;
			buf = xreallocarray(buf, cap + 1, 1);
		}
		got = fread(buf + len, 1, cap - len, f);
		len += got;
		if (len > FILE_MAX) {
			msg("%s: larger than %lu bytes", path, FILE_MAX);
			goto out;
		}
		if (got == 0)
			break;
	}
	if (ferror(f)) {
		msg("%s: read error: %s", path, strerror(errno));
		goto out;
	}
	buf[len] = '\0';
	*bufp = buf;
	*lenp = len;
	buf = NULL;
	r = 0;
out:
	if (!is_stdin)
		fclose(f);
	free(buf);
	return r;
}

const char *
file_format(const char *path)
{
	size_t n = strlen(path);

	return n >= 4 && strcasecmp(path + n - 4, ".csv") == 0 ? "csv" :
	    "sndlib";
}
