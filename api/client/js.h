/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Reading the daemon's JSON: members by name, with safe defaults. */
#ifndef WEFT_CLIENT_JS_H
#define WEFT_CLIENT_JS_H

/*
 * The daemon's replies are documented (docs/api.md), but the client
 * should not crash on a reply from another version: every accessor takes
 * any json_t (NULL too) and gives a default when the member is missing or
 * of another type.  Pointers returned are borrowed from o.
 */

#include <stdbool.h>
#include <stdio.h>

#include <jansson.h>

/* Member key of o as a number (integer or real); NAN when absent. */
double js_num(const json_t *o, const char *key);

/* Member key of o as an integer; def when absent or not an integer. */
long long js_int(const json_t *o, const char *key, long long def);

/* Member key of o as a string; def when absent or not a string. */
const char *js_str(const json_t *o, const char *key, const char *def);

/* Member key of o as a boolean; false when absent. */
bool js_bool(const json_t *o, const char *key);

/* Member key of o if it is an array (object), else NULL. */
json_t *js_arr(const json_t *o, const char *key);
json_t *js_obj(const json_t *o, const char *key);

/*
 * Prints j to f as one line of compact JSON with reals at 17 significant
 * digits, as the daemon writes them, so every number reads back exactly.
 * Returns 0, or -1 when j could not be written.
 */
int js_print(const json_t *j, FILE *f);

/*
 * Joins the strings of array a (NULL ok) with sep into buf of size n,
 * ending with "..." when they do not all fit.  Returns buf.
 */
char *js_join(const json_t *a, const char *sep, char *buf, size_t n);

#endif /* WEFT_CLIENT_JS_H */
