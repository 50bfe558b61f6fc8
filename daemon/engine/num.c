/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Strict decimal numbers for the importers: what strtod() may be given. */

#include <math.h>
#include <stdbool.h>
#include <stdlib.h>
#include <string.h>

#include "num.h"
#include "../base/err.h"

/* At most 40 bytes of the text, for messages. */
#define SHOW(s, len)	(int)((len) > 40 ? 40 : (len)), (s)

static const struct {
	char suffix;
	double scale;
} si[] = {
	{ 'k', 1e3 }, { 'K', 1e3 }, { 'M', 1e6 }, { 'G', 1e9 }, { 'T', 1e12 },
};

int
num_parse(const char *s, size_t len, unsigned flags, const char *what,
    double *vp, struct err *e)
{
	char buf[NUM_MAX + 1], *end;
	double scale = 1;
	size_t i = 0, n = len, k;
	bool digits = false;

	*vp = 0;
	if ((flags & NUM_SI) != 0 && n > 0) {
		for (k = 0; k < sizeof(si) / sizeof(si[0]); k++) {
			if (s[n - 1] == si[k].suffix) {
				scale = si[k].scale;
				n--;
				break;
			}
		}
	}
	if (n > NUM_MAX)
		return err_set(e, ERR_INVALID, NULL, "%s: number too long",
		    what);
	if (i < n && (s[i] == '-' || s[i] == '+')) {
		if (s[i] == '-' && (flags & NUM_SIGNED) == 0)
			return err_set(e, ERR_INVALID, NULL,
			    "%s must not be negative: \"%.*s\"", what,
			    SHOW(s, len));
		i++;
	}
	for (; i < n; i++) {
		char ch = s[i];

		if (ch >= '0' && ch <= '9')
			digits = true;
		else if (ch == '.')
			;
		else if ((ch == 'e' || ch == 'E') && digits && i + 1 < n) {
			if (s[i + 1] == '-' || s[i + 1] == '+')
				i++;
		} else
			break;
	}
	if (i != n || !digits)
		return err_set(e, ERR_INVALID, NULL, "%s: not a number%s: "
		    "\"%.*s\"", what, (flags & NUM_SI) != 0 ?
		    " (SI suffixes: k, M, G, T)" : "", SHOW(s, len));
	/* strtod() wants a C string; the checks above bounded its length. */
	memcpy(buf, s, n);
	buf[n] = '\0';
	*vp = strtod(buf, &end);
	if (*end != '\0' || !isfinite(*vp) || !isfinite(*vp * scale))
		return err_set(e, ERR_INVALID, NULL,
		    "%s: not a finite number: \"%.*s\"", what, SHOW(s, len));
	*vp *= scale;
	return 0;
}
