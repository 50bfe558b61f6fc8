/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Reading a stored survivability report back, for the report chart. */

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include <jansson.h>

#include "codec_report.h"
#include "../daemon/base/err.h"
#include "../daemon/base/xalloc.h"

/* Member key of o as a double, NaN when absent or not a number. */
static double
num(const json_t *o, const char *key)
{
	const json_t *v = json_object_get(o, key);

	return json_is_number(v) ? json_number_value(v) : NAN;
}

/* Member key of o as a new string, "" when absent or not a string. */
static char *
str(const json_t *o, const char *key)
{
	const json_t *v = json_object_get(o, key);

	return xstrdup(json_is_string(v) ? json_string_value(v) : "");
}

/* Member key of o as an index, -1 when absent or not an integer. */
static long
idx(const json_t *o, const char *key)
{
	const json_t *v = json_object_get(o, key);

	return json_is_integer(v) ? (long)json_integer_value(v) : -1;
}

int
codec_report_decode(const char *text, struct report **rp, struct err *e)
{
	json_t *j, *links, *v, *w;
	json_error_t je;
	struct report *rep = NULL;
	struct report_dir *d;
	size_t i;
	int r = ERR_INTERNAL;

	*rp = NULL;
	if ((j = json_loads(text, 0, &je)) == NULL) {
		err_set(e, r, NULL, "stored report: %s", je.text);
		goto out;
	}
	links = json_object_get(j, "links");
	if (!json_is_object(j) || !json_is_array(links)) {
		err_set(e, r, NULL, "stored report has no links array");
		goto out;
	}
	rep = xcalloc(1, sizeof(*rep));
	rep->headroom = num(j, "headroom");
	w = json_object_get(j, "worst_max_utilization");
	rep->worst_max_util = num(w, "value");
	rep->worst_max_index = idx(w, "index");
	v = json_object_get(j, "unserved");
	rep->n_unserved = json_is_array(v) ? json_array_size(v) : 0;
	rep->n_dirs = json_array_size(links);
	rep->dirs = xcalloc(rep->n_dirs + 1, sizeof(*rep->dirs));
	json_array_foreach(links, i, v) {
		d = &rep->dirs[i];
		d->link = str(v, "link");
		d->from = str(v, "from");
		d->to = str(v, "to");
		d->capacity_bps = num(v, "capacity_bps");
		d->worst_load_bps = num(v, "worst_load_bps");
		d->worst_util = num(v, "worst_utilization");
		d->worst_index = idx(v, "worst_index");
	}
	*rp = rep;
	rep = NULL;
	r = 0;
out:
	json_decref(j);
	codec_report_free(rep);
	return r;
}

void
codec_report_free(struct report *r)
{
	size_t i;

	if (r == NULL)
		return;
	for (i = 0; i < r->n_dirs; i++) {
		free(r->dirs[i].link);
		free(r->dirs[i].from);
		free(r->dirs[i].to);
	}
	free(r->dirs);
	free(r);
}
