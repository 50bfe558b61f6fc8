/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Aligned text tables: cells added one by one, printed in columns. */
#ifndef WEFT_CLIENT_TABLE_H
#define WEFT_CLIENT_TABLE_H

/*
 * A table has a fixed number of columns, each aligned left ('l') or right
 * ('r').  Cells are added in reading order; a row is complete after ncols
 * cells.  Widths count UTF-8 characters, so ids with accents line up.
 * Columns are separated by two spaces; trailing blanks are not printed.
 */

#include <stdio.h>

struct table;

/*
 * A new table with ncols columns; align holds one 'l' or 'r' per column;
 * heads, when not NULL, holds ncols header texts (printed first).
 * Free it with table_free().
 */
struct table *table_new(int ncols, const char *align,
    const char *const *heads);

/* Frees t (NULL ok). */
void table_free(struct table *t);

/* Appends one cell, printf-style (the text is copied). */
void table_cell(struct table *t, const char *fmt, ...)
    __attribute__((format(printf, 2, 3)));

/* The number of complete rows added so far. */
int table_rows(const struct table *t);

/* Prints t to f, each line starting with indent. */
void table_print(const struct table *t, FILE *f, const char *indent);

#endif /* WEFT_CLIENT_TABLE_H */
