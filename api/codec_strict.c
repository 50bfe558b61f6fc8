/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Strict JSON reading shared by the decoders. */

#include <math.h>
#include <stdio.h>
#include <string.h>

#include <jansson.h>

#include "codec_strict.h"
#include "codec_model.h"
#include "../daemon/base/err.h"
#include "../daemon/engine/model.h"

/*
 * Scans text for [ and { nesting outside strings.  Returns 0 or
 * ERR_INVALID with where "line:col" of the bracket that goes too deep.
 */
static int
check_depth(const char *text, size_t len, struct err *e)
{
	size_t i, line = 1, col = 0;
	int depth = 0;
	bool in_str = false, esc = false;

	for (i = 0; i < len; i++) {
		col++;
		if (text[i] == '\n') {
			line++;
			col = 0;
		}
		if (in_str) {
			if (esc)
				esc = false;
			else if (text[i] == '\\')
				esc = true;
			else if (text[i] == '"')
				in_str = false;
			continue;
		}
		switch (text[i]) {
		case '"':
			in_str = true;
			break;
		case '[':
		case '{':
			if (++depth > CODEC_DEPTH_MAX) {
				char w[48];

				snprintf(w, sizeof(w), "%zu:%zu", line, col);
				return err_set(e, ERR_INVALID, w, "JSON nested "
				    "deeper than %d levels", CODEC_DEPTH_MAX);
			}
			break;
		case ']':
		case '}':
			depth--;
			break;
		}
	}
	return 0;
}

/*
 * Parses text as one JSON object.  Returns 0 with *jp (json_decref) or
 * ERR_INVALID with where "line:col" (not JSON) or "" (not an object).
 */
int
codec_parse_object(const char *text, size_t len, json_t **jp, struct err *e)
{
	json_error_t je;
	json_t *j;
	char w[48];
	int r;

	*jp = NULL;
	if (text == NULL || len == 0)
		return err_set(e, ERR_INVALID, "", "the body is empty; a JSON "
		    "object is expected");
	if ((r = check_depth(text, len, e)) != 0)
		return r;
	j = json_loadb(text, len, JSON_REJECT_DUPLICATES, &je);
	if (j == NULL) {
		snprintf(w, sizeof(w), "%d:%d", je.line, je.column);
		return err_set(e, ERR_INVALID, w, "not valid JSON: %s",
		    je.text);
	}
	if (!json_is_object(j)) {
		json_decref(j);
		return err_set(e, ERR_INVALID, "", "a JSON object is expected");
	}
	*jp = j;
	return 0;
}

/* Writes "base.key" (or "key" when base is "") into w, cut to fit n. */
const char *
codec_path(char *w, size_t n, const char *base, const char *key)
{
	const char *parts[3] = { base, base[0] != '\0' ? "." : "", key };
	const char *s;
	size_t i = 0, k;

	for (k = 0; k < 3; k++)
		for (s = parts[k]; *s != '\0' && i + 1 < n; s++)
			w[i++] = *s;
	w[i] = '\0';
	return w;
}

/* Rejects members of obj not named in keys (NULL-terminated). */
int
codec_check_keys(json_t *obj, const char *const *keys, const char *base,
    struct err *e)
{
	const char *key;
	json_t *v;
	char w[ERR_WHERE_MAX];
	size_t i;

	json_object_foreach(obj, key, v) {
		for (i = 0; keys[i] != NULL; i++)
			if (strcmp(key, keys[i]) == 0)
				break;
		if (keys[i] == NULL)
			return err_set(e, ERR_INVALID, codec_path(w, sizeof(w), base,
			    key), "unknown field");
	}
	return 0;
}

/* Checks an id's form: 1..MODEL_ID_MAX bytes, no control chars, no '/'. */
int
codec_check_id(const char *s, const char *where, struct err *e)
{
	size_t i, n = strlen(s);

	if (n == 0)
		return err_set(e, ERR_INVALID, where, "must not be empty");
	if (n > MODEL_ID_MAX)
		return err_set(e, ERR_INVALID, where, "longer than %d bytes",
		    MODEL_ID_MAX);
	for (i = 0; i < n; i++)
		if ((unsigned char)s[i] < 0x20 || s[i] == 0x7f || s[i] == '/')
			return err_set(e, ERR_INVALID, where, "must not "
			    "contain control characters or '/'");
	return 0;
}

/*
 * Gets string member key of obj into *sp (borrowed from obj).  Absent (or
 * null when nullable): *sp NULL, an error only when required.
 */
int
codec_get_str(json_t *obj, const char *key, const char *base, bool required,
    bool nullable, const char **sp, struct err *e)
{
	json_t *v = json_object_get(obj, key);
	char w[ERR_WHERE_MAX];

	*sp = NULL;
	if (v == NULL || (nullable && json_is_null(v))) {
		if (required && v == NULL)
			return err_set(e, ERR_INVALID, codec_path(w, sizeof(w), base,
			    key), "required field is missing");
		return 0;
	}
	if (!json_is_string(v))
		return err_set(e, ERR_INVALID, codec_path(w, sizeof(w), base, key),
		    "must be a string");
	/* jansson allows no NUL inside strings without JSON_ALLOW_NUL. */
	*sp = json_string_value(v);
	return 0;
}

/*
 * Gets number member key into *xp, checking lo <= x <= hi (lo < x when
 * lo_open).  Absent: *xp untouched, *hasp false, an error when required.
 */
int
codec_get_num(json_t *obj, const char *key, const char *base, bool required,
    double lo, bool lo_open, double hi, double *xp, bool *hasp,
    struct err *e)
{
	json_t *v = json_object_get(obj, key);
	char w[ERR_WHERE_MAX];
	double x;

	if (hasp != NULL)
		*hasp = false;
	codec_path(w, sizeof(w), base, key);
	if (v == NULL) {
		if (required)
			return err_set(e, ERR_INVALID, w,
			    "required field is missing");
		return 0;
	}
	if (!json_is_number(v))
		return err_set(e, ERR_INVALID, w, "must be a number");
	x = json_number_value(v);
	if (!isfinite(x) || x > hi || x < lo || (lo_open && x == lo))
		return err_set(e, ERR_INVALID, w, "%.17g is out of range: "
		    "must be %s %g and <= %g", x, lo_open ? ">" : ">=", lo,
		    hi);
	*xp = x;
	if (hasp != NULL)
		*hasp = true;
	return 0;
}
