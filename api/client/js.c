/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Reading the daemon's JSON: members by name, with safe defaults. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <jansson.h>

#include "js.h"

double
js_num(const json_t *o, const char *key)
{
	json_t *v = o != NULL ? json_object_get(o, key) : NULL;

	return json_is_number(v) ? json_number_value(v) : NAN;
}

long long
js_int(const json_t *o, const char *key, long long def)
{
	json_t *v = o != NULL ? json_object_get(o, key) : NULL;

	return json_is_integer(v) ? (long long)json_integer_value(v) : def;
}

const char *
js_str(const json_t *o, const char *key, const char *def)
{
	json_t *v = o != NULL ? json_object_get(o, key) : NULL;

	return json_is_string(v) ? json_string_value(v) : def;
}

bool
js_bool(const json_t *o, const char *key)
{
	return o != NULL && json_is_true(json_object_get(o, key));
}

json_t *
js_arr(const json_t *o, const char *key)
{
	json_t *v = o != NULL ? json_object_get(o, key) : NULL;

	return json_is_array(v) ? v : NULL;
}

json_t *
js_obj(const json_t *o, const char *key)
{
	json_t *v = o != NULL ? json_object_get(o, key) : NULL;

	return json_is_object(v) ? v : NULL;
}

int
js_print(const json_t *j, FILE *f)
{
	char *s;

	if (j == NULL || (s = json_dumps(j, JSON_COMPACT | JSON_ENCODE_ANY |
	    JSON_REAL_PRECISION(17))) == NULL)
		return -1;
	fputs(s, f);
	fputc('\n', f);
	free(s);
	return 0;
}

char *
js_join(const json_t *a, const char *sep, char *buf, size_t n)
{
	size_t i, len = 0, add;
	const char *s;

	buf[0] = '\0';
	for (i = 0; a != NULL && i < json_array_size(a); i++) {
		s = json_is_string(json_array_get(a, i)) ?
		    json_string_value(json_array_get(a, i)) : "?";
		add = (i > 0 ? strlen(sep) : 0) + strlen(s);
		/* Keep room for "..." after what fits. */
		if (len + add + 4 > n) {
			snprintf(buf + len, n - len, "%s...", i > 0 ? sep : "");
			break;
		}
		len += (size_t)snprintf(buf + len, n - len, "%s%s",
		    i > 0 ? sep : "", s);
	}
	return buf;
}
