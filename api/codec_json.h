/* SPDX-License-Identifier: GPL-3.0-or-later */
/* What the JSON encoders share: how a number and a whole text are written. */
#ifndef WEFT_API_CODEC_JSON_H
#define WEFT_API_CODEC_JSON_H

/*
 * Only api/codec_*.c include this header; they include jansson.h first,
 * whose json_t is struct json_t, so no other file sees jansson.  Any
 * thread may call these functions.
 */

#include <stdbool.h>
#include <stddef.h>

struct json_t;

/*
 * Appends v to the array arr, stealing the reference to v; sets *okp to
 * false when v is NULL (a failed constructor) or the append fails, so a
 * whole document can be built first and checked once.
 */
void codec_append(struct json_t *arr, struct json_t *v, bool *okp);

/*
 * A new JSON real holding x, or JSON null when x is not finite (JSON has
 * no NaN or infinity); NULL when out of memory.
 */
struct json_t *codec_num(double x);

/*
 * Writes j as compact JSON with reals at 17 significant digits, so each
 * reads back to the same double, and drops the caller's reference to j.
 * Returns a new NUL-terminated text of *lenp bytes (free() it), or NULL
 * with *lenp 0 when j is NULL (a failed json_pack()) or writing fails.
 */
char *codec_dump(struct json_t *j, size_t *lenp);

#endif /* WEFT_API_CODEC_JSON_H */
