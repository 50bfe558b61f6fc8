/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Link loads, one row per link direction, sorted by utilisation. */

/*
 * DESIGN
 * GET /v1/plan/loads lists links in topology order, each with its a_to_b
 * and b_to_a directions.  Operators look for the busiest directions, so
 * the view flattens the list to directions and sorts by utilisation,
 * then by load, then topology order (a stable order for equal rows).  A
 * down link's directions carry nothing and sort as utilisation 0.  The
 * JSON view keeps the daemon's numbers as they came (copied json_t
 * values), so a script gets exactly what GET /v1/plan/loads said.
 */

#include <math.h>
#include <stdbool.h>
#include <stdio.h>
#include <stdlib.h>

#include <jansson.h>

#include "show.h"
#include "client.h"
#include "fmt.h"
#include "js.h"
#include "table.h"
#include "../../daemon/base/xalloc.h"

struct dir {
	const json_t *link;	/* borrowed: the link's object */
	const json_t *d;	/* borrowed: its a_to_b or b_to_a object */
	bool reverse;		/* b_to_a */
	size_t order;		/* position in the daemon's list */
	double util, load;	/* sort keys; NAN read as 0 */
};

static double
key(double x)
{
	return isfinite(x) ? x : 0;
}

/* Most utilised first, or least with *(bool *)asc; then topology order. */
static int
cmp_dir(const void *x, const void *y, void *asc)
{
	const struct dir *a = x, *b = y;
	int s = *(bool *)asc ? 1 : -1;

	if (a->util != b->util)
		return a->util < b->util ? -s : s;
	if (a->load != b->load)
		return a->load < b->load ? -s : s;
	return a->order < b->order ? -1 : a->order > b->order ? 1 : 0;
}

static json_t *
dir_json(const struct dir *d)
{
	static const char *const copy[] = { "load_bps", "utilization",
		"headroom_bps", "shadow_price", "saturated" };
	const json_t *l = d->link;
	json_t *j;
	size_t i;

	j = json_pack("{s:s, s:s, s:s, s:s}", "link", js_str(l, "id", "?"),
	    "from", js_str(l, d->reverse ? "b" : "a", "?"),
	    "to", js_str(l, d->reverse ? "a" : "b", "?"),
	    "state", js_str(l, "state", "?"));
	if (j == NULL)
		return NULL;
	json_object_set(j, "capacity_bps", json_object_get(l,
	    "capacity_bps") != NULL ? json_object_get(l, "capacity_bps") :
	    json_null());
	for (i = 0; i < sizeof(copy) / sizeof(copy[0]); i++)
		json_object_set(j, copy[i], json_object_get(d->d, copy[i]) !=
		    NULL ? json_object_get(d->d, copy[i]) : json_null());
	return j;
}

static int
print_json(const json_t *loads, const struct dir *dirs, size_t n, FILE *f)
{
	json_t *j, *arr = json_array();
	size_t i;
	int r;

	for (i = 0; i < n; i++)
		json_array_append_new(arr, dir_json(&dirs[i]));
	j = json_pack("{s:I, s:I, s:O, s:o}",
	    "revision", (json_int_t)js_int(loads, "revision", 0),
	    "model_revision", (json_int_t)js_int(loads, "model_revision", 0),
	    "max_utilization", json_object_get(loads, "max_utilization") !=
	    NULL ? json_object_get(loads, "max_utilization") : json_null(),
	    "directions", arr);
	r = js_print(j, f);
	json_decref(j);
	return r;
}

static void
print_table(const json_t *loads, const struct dir *dirs, size_t n,
    size_t all, FILE *f)
{
	static const char *const heads[] = { "LINK", "FROM", "TO", "CAPACITY",
		"LOAD", "UTIL", "HEADROOM", "STATE" };
	struct table *t = table_new(8, "lllrrrrl", heads);
	char b[FMT_LEN];
	size_t i;

	for (i = 0; i < n; i++) {
		const json_t *l = dirs[i].link, *d = dirs[i].d;

		table_cell(t, "%s", js_str(l, "id", "?"));
		table_cell(t, "%s", js_str(l, dirs[i].reverse ? "b" : "a",
		    "?"));
		table_cell(t, "%s", js_str(l, dirs[i].reverse ? "a" : "b",
		    "?"));
		table_cell(t, "%s", fmt_bps(b, js_num(l, "capacity_bps")));
		table_cell(t, "%s", fmt_bps(b, js_num(d, "load_bps")));
		table_cell(t, "%s", fmt_pct(b, js_num(d, "utilization")));
		table_cell(t, "%s", fmt_bps(b, js_num(d, "headroom_bps")));
		table_cell(t, "%s%s", js_str(l, "state", "?"),
		    js_bool(d, "saturated") ? ", saturated" : "");
	}
	fprintf(f, "plan revision %lld (model revision %lld), max "
	    "utilisation %s; %zu of %zu link directions\n",
	    js_int(loads, "revision", 0), js_int(loads, "model_revision", 0),
	    fmt_pct(b, js_num(loads, "max_utilization")), n, all);
	table_print(t, f, "");
	table_free(t);
}

int
show_loads(const struct cli *c, const json_t *loads, long top,
    bool ascending, FILE *f)
{
	json_t *links = js_arr(loads, "links"), *l;
	struct dir *dirs;
	size_t i, n = 0, shown;
	int k, r = 0;

	dirs = xcalloc(2 * json_array_size(links) + 1, sizeof(*dirs));
	json_array_foreach(links, i, l) {
		for (k = 0; k < 2; k++) {
			json_t *d = js_obj(l, k == 0 ? "a_to_b" : "b_to_a");

			if (d == NULL)
				continue;
			dirs[n].link = l;
			dirs[n].d = d;
			dirs[n].reverse = k == 1;
			dirs[n].order = n;
			dirs[n].util = key(js_num(d, "utilization"));
			dirs[n].load = key(js_num(d, "load_bps"));
			n++;
		}
	}
	qsort_r(dirs, n, sizeof(*dirs), cmp_dir, &ascending);
	shown = top > 0 && (size_t)top < n ? (size_t)top : n;
	if (c->json)
		r = print_json(loads, dirs, shown, f);
	else
		print_table(loads, dirs, shown, n, f);
	free(dirs);
	return r;
}
