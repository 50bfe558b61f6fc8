/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Allocation wrappers: abort on exhaustion, refuse overflowing sizes. */
#include <stdarg.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "xalloc.h"

static void
die(const char *what, size_t n, size_t size)
{
	fprintf(stderr, "weft: %s: cannot allocate %zu x %zu bytes\n", what, n,
	    size);
	abort();
}

void *
xmalloc(size_t size)
{
	void *p = malloc(size == 0 ? 1 : size);

	if (p == NULL)
		die("xmalloc", 1, size);
	return p;
}

void *
xcalloc(size_t n, size_t size)
{
	void *p;

	if (n == 0 || size == 0)
		n = size = 1;
	if ((p = calloc(n, size)) == NULL)
		die("xcalloc", n, size);
	return p;
}

void *
xreallocarray(void *p, size_t n, size_t size)
{
	void *q;

	if (size != 0 && n > SIZE_MAX / size)
		die("xreallocarray", n, size);
	if ((q = realloc(p, n * size == 0 ? 1 : n * size)) == NULL)
		die("xreallocarray", n, size);
	return q;
}

char *
xstrdup(const char *s)
{
	return xstrndup(s, strlen(s));
}

char *
xstrndup(const char *s, size_t n)
{
	char *p = xmalloc(n + 1);

	memcpy(p, s, n);
	p[n] = '\0';
	return p;
}

char *
xasprintf(const char *fmt, ...)
{
	va_list ap;
	char *p;
	int n;

	va_start(ap, fmt);
	n = vsnprintf(NULL, 0, fmt, ap);
	va_end(ap);
	if (n < 0)
		die("xasprintf", 1, 0);
	p = xmalloc((size_t)n + 1);
	va_start(ap, fmt);
	vsnprintf(p, (size_t)n + 1, fmt, ap);
	va_end(ap);
	return p;
}
