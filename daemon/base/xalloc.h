/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Allocation wrappers that abort on failure and check sizes for overflow. */
#ifndef WEFT_BASE_XALLOC_H
#define WEFT_BASE_XALLOC_H

#include <stddef.h>

/*
 * Each logs and aborts the process when memory runs out or n * size
 * overflows; callers check input-derived sizes against configured limits
 * before calling.  xmalloc(0) and friends return a valid unique pointer.
 */
void *xmalloc(size_t size);
void *xcalloc(size_t n, size_t size);
void *xreallocarray(void *p, size_t n, size_t size);
char *xstrdup(const char *s);
char *xstrndup(const char *s, size_t n);
/* printf into a new string; the caller frees it. */
char *xasprintf(const char *fmt, ...) __attribute__((format(printf, 1, 2)));

#endif /* WEFT_BASE_XALLOC_H */
