/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Aligned text tables: cells added one by one, printed in columns. */
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "table.h"
#include "../../daemon/base/xalloc.h"

struct table {
	int ncols;
	char *align;		/* owned: 'l' or 'r' per column */
	char **cells;		/* owned: header cells first, if any */
	size_t n, cap;		/* cells added, room */
	int head_rows;		/* 1 when there is a header */
};

/* Characters in UTF-8 text s: bytes that do not continue a sequence. */
static size_t
width(const char *s)
{
	size_t w = 0;

	for (; *s != '\0'; s++)
		if (((unsigned char)*s & 0xc0) != 0x80)
			w++;
	return w;
}

static void
push(struct table *t, char *cell)
{
	if (t->n == t->cap) {
		t->cap = t->cap == 0 ? 64 : 2 * t->cap;
		t->cells = xreallocarray(t->cells, t->cap, sizeof(*t->cells));
	}
	t->cells[t->n++] = cell;
}

struct table *
table_new(int ncols, const char *align, const char *const *heads)
{
	struct table *t = xcalloc(1, sizeof(*t));
	int i;

	t->ncols = ncols;
	t->align = xstrdup(align);
	if (heads != NULL) {
		for (i = 0; i < ncols; i++)
			push(t, xstrdup(heads[i]));
		t->head_rows = 1;
	}
	return t;
}

void
table_free(struct table *t)
{
	size_t i;

	if (t == NULL)
		return;
	for (i = 0; i < t->n; i++)
		free(t->cells[i]);
	free(t->cells);
	free(t->align);
	free(t);
}

void
table_cell(struct table *t, const char *fmt, ...)
{
	va_list ap;
	char *s;
	int len;

	va_start(ap, fmt);
	len = vsnprintf(NULL, 0, fmt, ap);
	va_end(ap);
	s = xmalloc(len < 0 ? 1 : (size_t)len + 1);
	s[0] = '\0';
	va_start(ap, fmt);
	if (len >= 0)
		vsnprintf(s, (size_t)len + 1, fmt, ap);
	va_end(ap);
	push(t, s);
}

int
table_rows(const struct table *t)
{
	return (int)(t->n / (size_t)t->ncols) - t->head_rows;
}

void
table_print(const struct table *t, FILE *f, const char *indent)
{
	size_t *w, i, rows, r, pad;
	int k, last;

	w = xcalloc((size_t)t->ncols, sizeof(*w));
	rows = t->n / (size_t)t->ncols;
	for (i = 0; i < rows * (size_t)t->ncols; i++)
		if (width(t->cells[i]) > w[i % (size_t)t->ncols])
			w[i % (size_t)t->ncols] = width(t->cells[i]);
	for (r = 0; r < rows; r++) {
		fputs(indent, f);
		/* The last non-empty cell ends the line: no trailing blanks. */
		for (last = t->ncols - 1; last > 0 &&
		    t->cells[r * (size_t)t->ncols + (size_t)last][0] == '\0';
		    last--)
			;
		for (k = 0; k <= last; k++) {
			const char *s = t->cells[r * (size_t)t->ncols +
			    (size_t)k];

			pad = w[k] - width(s);
			if (k > 0)
				fputs("  ", f);
			if (t->align[k] == 'r')
				fprintf(f, "%*s%s", (int)pad, "", s);
			else if (k < last)
				fprintf(f, "%s%*s", s, (int)pad, "");
			else
				fputs(s, f);
		}
		fputc('\n', f);
	}
	free(w);
}
