/* SPDX-License-Identifier: GPL-3.0-or-later */
/* What the JSON encoders share: how a number and a whole text are written. */

#include <math.h>
#include <string.h>

#include <jansson.h>

#include "codec_json.h"

json_t *
codec_num(double x)
{
	return isfinite(x) ? json_real(x) : json_null();
}

char *
codec_dump(json_t *j, size_t *lenp)
{
	char *s = NULL;

	*lenp = 0;
	if (j != NULL)
		s = json_dumps(j, JSON_COMPACT | JSON_REAL_PRECISION(17));
	json_decref(j);
	if (s != NULL)
		*lenp = strlen(s);
	return s;
}

void
codec_append(json_t *arr, json_t *v, bool *okp)
{
	if (v == NULL || json_array_append_new(arr, v) != 0)
		*okp = false;
}
