/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Messages for people: one line each on stderr, prefixed "weft: ". */
#include <stdarg.h>
#include <stdio.h>

#include "client.h"

static void
vmsg(const char *fmt, va_list ap)
{
	/* Progress output on a terminal may have left a line open. */
	fflush(stdout);
	fputs("weft: ", stderr);
	vfprintf(stderr, fmt, ap);
	fputc('\n', stderr);
}

void
msg(const char *fmt, ...)
{
	va_list ap;

	va_start(ap, fmt);
	vmsg(fmt, ap);
	va_end(ap);
}

int
msg_usage(const char *fmt, ...)
{
	va_list ap;

	va_start(ap, fmt);
	vmsg(fmt, ap);
	va_end(ap);
	return RC_USAGE;
}
