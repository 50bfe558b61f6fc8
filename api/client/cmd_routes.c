/* SPDX-License-Identifier: GPL-3.0-or-later */
/* weft routes SRC DST: the paths the published plan gives one demand. */

/*
 * DESIGN
 * GET /v1/plan/routes?src=SRC&dst=DST lists the planned demands from SRC
 * to DST with their paths (every priority, and a pair the matrix repeats,
 * as often as it appears), so only those cross the network however large
 * the plan; the command filters again, for a daemon that predates the
 * filters.  The JSON view is the daemon's document with only those
 * routes, so it has the daemon's shape.
 */

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <jansson.h>

#include "client.h"
#include "fetch.h"
#include "fmt.h"
#include "js.h"
#include "opt.h"
#include "table.h"
#include "../../daemon/base/xalloc.h"

static const struct opt_def defs[] = { { NULL, false } };

/* Node ids of path p joined by " > ", into buf. */
static char *
hops(const json_t *p, char *buf, size_t n)
{
	return js_join(js_arr(p, "nodes"), " > ", buf, n);
}

static void
print_route(const json_t *rt, FILE *f)
{
	static const char *const heads[] = { "RATE", "SHARE", "HOPS", "PATH",
		"LINKS" };
	json_t *paths = js_arr(rt, "paths"), *p;
	struct table *t = table_new(5, "rrrll", heads);
	char b1[FMT_LEN], b2[FMT_LEN], b3[FMT_LEN], list[2048];
	double rate = js_num(rt, "rate_bps");
	size_t i;

	fprintf(f, "%s -> %s, priority %lld: demand %s, carried %s, "
	    "unserved %s, %zu path%s\n", js_str(rt, "src", "?"),
	    js_str(rt, "dst", "?"), js_int(rt, "priority", 0),
	    fmt_bps(b1, rate), fmt_bps(b2, js_num(rt, "carried_bps")),
	    fmt_bps(b3, js_num(rt, "unserved_bps")), json_array_size(paths),
	    json_array_size(paths) == 1 ? "" : "s");
	json_array_foreach(paths, i, p) {
		table_cell(t, "%s", fmt_bps(b1, js_num(p, "rate_bps")));
		table_cell(t, "%s", fmt_pct(b2, rate > 0 ?
		    js_num(p, "rate_bps") / rate : 0));
		table_cell(t, "%zu", json_array_size(js_arr(p, "links")));
		table_cell(t, "%s", hops(p, list, sizeof(list)));
		table_cell(t, "%s", js_join(js_arr(p, "links"), ",", list,
		    sizeof(list)));
	}
	if (table_rows(t) > 0)
		table_print(t, f, "  ");
	table_free(t);
}

int
cmd_routes(const struct cli *c, int argc, char **argv)
{
	struct answer a = { 0 };
	struct opts o;
	const char *v, *ends[2] = { NULL, NULL };
	json_t *all, *rt, *keep = NULL, *j;
	char *e1, *e2, *path;
	size_t i;
	int k, n = 0, r;

	opt_init(&o, argc, argv);
	while ((k = opt_next(&o, defs, &v)) != OPT_END) {
		if (k == OPT_BAD)
			return RC_USAGE;
		if (n == 2)
			return msg_usage("routes takes two node ids, SRC DST");
		ends[n++] = v;
	}
	if (n != 2)
		return msg_usage("routes needs two node ids, SRC DST");
	e1 = fetch_escape(ends[0]);
	e2 = fetch_escape(ends[1]);
	path = xasprintf("/v1/plan/routes?src=%s&dst=%s", e1, e2);
	free(e1);
	free(e2);
	r = fetch_get(c, path, &a);
	free(path);
	if (r != RC_OK)
		goto out;
	all = js_arr(a.json, "routes");
	keep = json_array();
	json_array_foreach(all, i, rt)
		if (strcmp(js_str(rt, "src", ""), ends[0]) == 0 &&
		    strcmp(js_str(rt, "dst", ""), ends[1]) == 0)
			json_array_append(keep, rt);
	if (json_array_size(keep) == 0) {
		msg("plan revision %lld has no demand from %s to %s",
		    js_int(a.json, "revision", 0), ends[0], ends[1]);
		r = RC_REFUSED;
		goto out;
	}
	r = RC_OK;
	json_array_foreach(keep, i, rt)
		if (js_num(rt, "unserved_bps") > 0)
			r = RC_PARTIAL;
	if (c->json) {
		j = json_pack("{s:I, s:I, s:O}", "revision",
		    (json_int_t)js_int(a.json, "revision", 0),
		    "model_revision", (json_int_t)js_int(a.json,
		    "model_revision", 0), "routes", keep);
		if (js_print(j, stdout) != 0) {
			msg("cannot write the JSON");
			r = RC_FAILED;
		}
		json_decref(j);
		goto out;
	}
	printf("plan revision %lld (model revision %lld)\n",
	    js_int(a.json, "revision", 0), js_int(a.json, "model_revision", 0));
	json_array_foreach(keep, i, rt)
		print_route(rt, stdout);
out:
	json_decref(keep);
	answer_clear(&a);
	return r;
}
