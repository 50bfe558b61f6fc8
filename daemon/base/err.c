/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Error code texts and the error detail setter. */
#include <stdarg.h>
#include <stdio.h>
#include <string.h>

#include "err.h"

static const struct {
	int code;
	const char *word;	/* stable, for clients */
	const char *text;	/* for people */
} errs[] = {
	{ 0, "ok", "success" },
	{ ERR_INTERNAL, "internal", "internal error" },
	{ ERR_NOMEM, "no_memory", "out of memory" },
	{ ERR_INVALID, "invalid", "invalid input" },
	{ ERR_NOTFOUND, "not_found", "not found" },
	{ ERR_CONFLICT, "conflict", "conflicts with stored state" },
	{ ERR_TOOBIG, "too_big", "exceeds a configured limit" },
	{ ERR_BUSY, "busy", "busy, try again later" },
	{ ERR_IO, "io", "input/output error" },
	{ ERR_DB, "database", "database error" },
	{ ERR_SOLVER, "solver", "LP solver failure" },
	{ ERR_TIMEOUT, "timeout", "time limit reached" },
	{ ERR_MEDIATYPE, "unsupported_media_type", "unsupported content type" },
	{ ERR_METHOD, "method_not_allowed", "method not allowed" },
	{ ERR_UNAUTHORIZED, "unauthorized", "authentication required" },
	{ ERR_FORBIDDEN, "forbidden", "the token's role does not allow this" },
};

static int
find(int code)
{
	size_t i;

	for (i = 0; i < sizeof(errs) / sizeof(errs[0]); i++)
		if (errs[i].code == code)
			return (int)i;
	return 1;	/* unknown codes read as internal */
}

const char *
err_str(int code)
{
	return errs[find(code)].text;
}

const char *
err_word(int code)
{
	return errs[find(code)].word;
}

int
err_set(struct err *e, int code, const char *where, const char *fmt, ...)
{
	va_list ap;

	if (e == NULL || e->code != 0)
		return code;
	e->code = code;
	snprintf(e->where, sizeof(e->where), "%s", where != NULL ? where : "");
	va_start(ap, fmt);
	vsnprintf(e->msg, sizeof(e->msg), fmt, ap);
	va_end(ap);
	/* One line only: a message may quote input. */
	e->msg[strcspn(e->msg, "\r\n")] = '\0';
	return code;
}

void
err_clear(struct err *e)
{
	if (e == NULL)
		return;
	e->code = 0;
	e->where[0] = '\0';
	e->msg[0] = '\0';
}
