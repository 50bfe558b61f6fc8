/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Levelled logging to stderr; the service manager adds timestamps. */
#include <stdarg.h>
#include <stdio.h>
#include <string.h>

#include "log.h"
#include "err.h"

enum log_level log_level_cur = LOG_LVL_INFO;

static const char *const names[] = { "error", "warn", "info", "debug" };

void
log_set_level(enum log_level lvl)
{
	log_level_cur = lvl;
}

int
log_level_parse(const char *s, enum log_level *lvlp)
{
	size_t i;

	for (i = 0; i < sizeof(names) / sizeof(names[0]); i++) {
		if (strcmp(s, names[i]) == 0) {
			*lvlp = (enum log_level)i;
			return 0;
		}
	}
	return ERR_INVALID;
}

void
log_write(enum log_level lvl, const char *file, int line, const char *func,
    const char *fmt, ...)
{
	char buf[2048];
	va_list ap;
	int n;

	n = snprintf(buf, sizeof(buf), "weftd: %s: ", names[lvl]);
	va_start(ap, fmt);
	vsnprintf(buf + n, sizeof(buf) - (size_t)n, fmt, ap);
	va_end(ap);
	/* One line per event, however the message was built. */
	buf[strcspn(buf, "\n")] = '\0';
	if (log_level_cur >= LOG_LVL_DEBUG)
		fprintf(stderr, "%s (%s:%d %s)\n", buf, file, line, func);
	else
		fprintf(stderr, "%s\n", buf);
}
