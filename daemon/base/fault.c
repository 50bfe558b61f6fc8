/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Fault injection points of test builds (make FAULTS=1): see fault.h. */

/*
 * DESIGN
 * Compiled only into test builds: the Makefile leaves this file out unless
 * FAULTS is set, and then defines WEFT_FAULTS everywhere.  Nothing is
 * cached: each check reads WEFT_FAULT and the file named by
 * WEFT_FAULT_FILE afresh, into buffers on the caller's stack, so there is
 * no shared state to lock and a change of the file counts from the next
 * check on.  A file larger than FAULT_FILE_MAX is read in part.
 */

#include <errno.h>
#include <fcntl.h>
#include <stdbool.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "fault.h"
#include "log.h"

#define FAULT_FILE_MAX	1024	/* bytes of WEFT_FAULT_FILE read */
#define FAULT_SEPS	" \t\r\n,"

/*
 * Looks for point in the specs of text (changed in place by strtok_r);
 * copies the argument of the first spec naming it into arg.
 */
static bool
find(char *text, const char *point, char *arg, size_t arglen)
{
	char *save = NULL, *tok, *colon;

	for (tok = strtok_r(text, FAULT_SEPS, &save); tok != NULL;
	    tok = strtok_r(NULL, FAULT_SEPS, &save)) {
		if ((colon = strchr(tok, ':')) != NULL)
			*colon = '\0';
		if (strcmp(tok, point) != 0)
			continue;
		if (arglen > 0)
			snprintf(arg, arglen, "%s", colon != NULL ?
			    colon + 1 : "");
		return true;
	}
	return false;
}

/* Reads at most FAULT_FILE_MAX bytes of path into buf; false if none. */
static bool
read_specs(const char *path, char *buf, size_t buflen)
{
	ssize_t n;
	size_t len = 0;
	int fd;

	if ((fd = open(path, O_RDONLY | O_CLOEXEC)) < 0)
		return false;
	while (len < buflen - 1) {
		n = read(fd, buf + len, buflen - 1 - len);
		if (n < 0 && errno == EINTR)
			continue;
		if (n <= 0)
			break;
		len += (size_t)n;
	}
	close(fd);
	buf[len] = '\0';
	return len > 0;
}

bool
fault_hit(const char *point, char *arg, size_t arglen)
{
	char buf[FAULT_FILE_MAX + 1];
	const char *env, *path;
	bool hit = false;

	if (arglen > 0)
		arg[0] = '\0';
	if ((env = getenv("WEFT_FAULT")) != NULL && env[0] != '\0') {
		snprintf(buf, sizeof(buf), "%s", env);
		hit = find(buf, point, arg, arglen);
	}
	if (!hit && (path = getenv("WEFT_FAULT_FILE")) != NULL &&
	    path[0] != '\0' && read_specs(path, buf, sizeof(buf)))
		hit = find(buf, point, arg, arglen);
	if (hit)
		log_warn("fault injected point=%s arg=%s", point,
		    arglen > 0 ? arg : "");
	return hit;
}
