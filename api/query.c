/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The values of query parameters: checked, converted, named in errors. */

#include <errno.h>
#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "query.h"
#include "../daemon/base/err.h"
#include "../daemon/engine/plan.h"

int
query_poll(const char *wait, const char *after, double max_s,
    double *wait_sp, int64_t *afterp, bool *has_afterp, struct err *e)
{
	char *end;
	double w;
	long long x;

	*wait_sp = 0;
	*afterp = 0;
	*has_afterp = false;
	if (wait == NULL) {
		if (after != NULL)
			return err_set(e, ERR_INVALID, "after", "after is "
			    "only valid with wait");
		return 0;
	}
	errno = 0;
	w = strtod(wait, &end);
	if (wait[0] == '\0' || *end != '\0' || errno != 0 || !isfinite(w) ||
	    w <= 0 || w > max_s)
		return err_set(e, ERR_INVALID, "wait", "the query parameter "
		    "wait must be a number of seconds above 0 and at most %g "
		    "(long_poll_max_s)", max_s);
	if (after != NULL) {
		errno = 0;
		x = strtoll(after, &end, 10);
		if (after[0] < '0' || after[0] > '9' || *end != '\0' ||
		    errno != 0)
			return err_set(e, ERR_INVALID, "after", "the query "
			    "parameter after must be a plan revision (an "
			    "integer >= 0)");
		*afterp = x;
		*has_afterp = true;
	}
	*wait_sp = w;
	return 0;
}

int
query_from(const char *from, int64_t *revp, struct err *e)
{
	char *end;
	long long x;

	*revp = 0;
	if (from == NULL)
		return err_set(e, ERR_INVALID, "from", "the query parameter "
		    "from (a plan revision) is required");
	errno = 0;
	x = strtoll(from, &end, 10);
	if (from[0] == '\0' || *end != '\0' || errno != 0 || x < 1)
		return err_set(e, ERR_INVALID, "from", "the query parameter "
		    "from must be a plan revision, an integer >= 1");
	*revp = x;
	return 0;
}

int
query_export(const char *format, const char *stage, enum export_format *fmtp,
    int *stagep, struct err *e)
{
	char *end;
	long x;

	*fmtp = EXPORT_LP;
	*stagep = -1;
	if (format != NULL && strcmp(format, "lp") != 0) {
		if (strcmp(format, "mps") != 0)
			return err_set(e, ERR_INVALID, "format", "the query "
			    "parameter format must be \"lp\" or \"mps\"");
		*fmtp = EXPORT_MPS;
	}
	if (stage != NULL) {
		errno = 0;
		x = strtol(stage, &end, 10);
		if (stage[0] == '\0' || *end != '\0' || errno != 0 || x < -1 ||
		    x >= PLAN_STAGES_MAX)
			return err_set(e, ERR_INVALID, "stage", "the query "
			    "parameter stage must be an integer from -1 (the "
			    "last stage) to %d", PLAN_STAGES_MAX - 1);
		*stagep = (int)x;
	}
	return 0;
}

/*
 * Reads the decimal digits from s up to stop (NUL or a '.'), no sign, at
 * least one digit, into *xp; false when they do not fit in max.
 */
static bool
digits(const char *s, const char **endp, unsigned long long max,
    unsigned long long *xp)
{
	unsigned long long x = 0;
	const char *p = s;

	for (; *p >= '0' && *p <= '9'; p++) {
		if (x > (max - (unsigned long long)(*p - '0')) / 10)
			return false;
		x = x * 10 + (unsigned long long)(*p - '0');
	}
	*endp = p;
	*xp = x;
	return p != s;
}

int
query_page(const char *limit, const char *after, size_t *limitp,
    bool *has_afterp, int64_t *revp, size_t *indexp, struct err *e)
{
	unsigned long long x, k;
	const char *end;

	*limitp = 0;
	*has_afterp = false;
	*revp = 0;
	*indexp = 0;
	if (limit != NULL) {
		if (!digits(limit, &end, QUERY_LIMIT_MAX, &x) || *end != '\0' ||
		    x < 1)
			return err_set(e, ERR_INVALID, "limit", "the query "
			    "parameter limit must be an integer from 1 to %d",
			    QUERY_LIMIT_MAX);
		*limitp = (size_t)x;
	}
	if (after != NULL) {
		if (!digits(after, &end, INT64_MAX, &x) || *end != '.' ||
		    x < 1 || !digits(end + 1, &end, SIZE_MAX / 2, &k) ||
		    *end != '\0')
			return err_set(e, ERR_INVALID, "after", "the query "
			    "parameter after must be a cursor as a reply's "
			    "\"next\" gives it");
		*revp = (int64_t)x;
		*indexp = (size_t)k;
		*has_afterp = true;
	}
	return 0;
}
