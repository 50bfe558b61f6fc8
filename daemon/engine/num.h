/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Strict decimal numbers for the importers: what strtod() may be given. */
#ifndef WEFT_ENGINE_NUM_H
#define WEFT_ENGINE_NUM_H

#include <stddef.h>

struct err;

#define NUM_MAX		63	/* longest number, bytes, without a suffix */

/* Flags for num_parse(). */
enum {
	NUM_SIGNED = 1 << 0,	/* a leading '-' is allowed */
	NUM_SI = 1 << 1,	/* one trailing k or K, M, G or T scales the
				   number by 1e3, 1e6, 1e9 or 1e12 */
};

/*
 * Reads s[0 .. len-1] (need not be NUL-terminated; nothing past len is
 * read) as a finite decimal number into *vp.  Accepted are at most NUM_MAX
 * bytes of an optional sign ('-' only with NUM_SIGNED), then digits and
 * points, with an exponent ('e' or 'E', optionally signed) after a digit,
 * then with NUM_SI an optional suffix.  The text is checked before
 * strtod() sees it, so "nan", "inf" and hex floats never get in; strtod()
 * must then read all of it, and the (scaled) value must be finite.
 *
 * Returns 0, or ERR_INVALID with *vp unspecified and a sentence in e that
 * starts with what and quotes at most 40 bytes of the text ("rate: not a
 * finite number: \"1e999\""); e's where is left for the caller to fill.
 * Any thread may call it.
 */
int num_parse(const char *s, size_t len, unsigned flags, const char *what,
    double *vp, struct err *e);

#endif /* WEFT_ENGINE_NUM_H */
