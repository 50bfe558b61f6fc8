/* SPDX-License-Identifier: GPL-3.0-or-later */
/* weft sweep report ID: a finished sweep's worst cases per link. */

/*
 * DESIGN
 * The daemon builds the report (docs/api.md, Sweeps); the client names
 * each scenario by what it fails, looked up in the results by index, and
 * cuts the lists to --top rows.
 */

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <jansson.h>

#include "sweep.h"
#include "client.h"
#include "fetch.h"
#include "fmt.h"
#include "js.h"
#include "opt.h"
#include "show.h"
#include "table.h"
#include "../../daemon/base/xalloc.h"

/* What scenario idx of sweep sw fails, into buf; "scenario N" if unknown. */
static char *
scenario(const json_t *sw, long long idx, char *buf, size_t n)
{
	json_t *res = js_arr(sw, "results"), *v;
	size_t i;

	/* Results come by index; scan only when that does not hold. */
	v = idx >= 0 ? json_array_get(res, (size_t)idx) : NULL;
	if (js_int(v, "index", -1) != idx) {
		v = NULL;
		for (i = 0; i < json_array_size(res) && v == NULL; i++)
			if (js_int(json_array_get(res, i), "index", -1) == idx)
				v = json_array_get(res, i);
	}
	if (v == NULL || show_fail(js_obj(v, "fail"), buf, n)[0] == '\0')
		snprintf(buf, n, "scenario %lld", idx);
	return buf;
}

int
sweep_rc(const json_t *sw)
{
	const char *state = js_str(sw, "state", "");
	json_t *rep = js_obj(sw, "report");

	if (strcmp(state, "running") == 0)
		return RC_OK;
	if (strcmp(state, "done") != 0 && strcmp(state, "cancelled") != 0)
		return RC_FAILED;
	if (json_array_size(js_arr(rep, "unserved")) > 0)
		return RC_PARTIAL;
	return strcmp(state, "done") == 0 ? RC_OK : RC_FAILED;
}

void
sweep_summary(const json_t *sw, FILE *f)
{
	json_t *rep = js_obj(sw, "report"), *worst, *us;
	char what[512], b[FMT_LEN];

	if (js_str(sw, "error", NULL) != NULL)
		fprintf(f, "the sweep failed: %s\n", js_str(sw, "error", ""));
	if (rep == NULL) {
		if (strcmp(js_str(sw, "state", ""), "running") == 0)
			fprintf(f, "no report yet: %lld of %lld scenarios "
			    "done\n", js_int(sw, "done", 0),
			    js_int(sw, "total", 0));
		return;
	}
	worst = js_obj(rep, "worst_max_utilization");
	if (worst != NULL)
		fprintf(f, "worst max utilisation %s, with %s down "
		    "(scenario %lld)\n", fmt_pct(b, js_num(worst, "value")),
		    scenario(sw, js_int(worst, "index", -1), what,
		    sizeof(what)), js_int(worst, "index", -1));
	us = js_arr(rep, "unserved");
	if (json_array_size(us) == 0)
		fprintf(f, "no scenario leaves traffic unserved\n");
	else
		fprintf(f, "%zu scenario%s leave%s traffic unserved; the "
		    "worst, %s, leaves %s\n", json_array_size(us),
		    json_array_size(us) == 1 ? "" : "s",
		    json_array_size(us) == 1 ? "s" : "",
		    scenario(sw, js_int(json_array_get(us, 0), "index", -1),
		    what, sizeof(what)),
		    fmt_bps(b, js_num(json_array_get(us, 0), "unserved_bps")));
}

/* A row of the unserved scenarios; ctx is the sweep. */
static void
unserved_row(struct table *t, const json_t *v, const void *ctx)
{
	char what[512], b[FMT_LEN];

	table_cell(t, "%lld", js_int(v, "index", -1));
	table_cell(t, "%s", scenario(ctx, js_int(v, "index", -1), what,
	    sizeof(what)));
	table_cell(t, "%s", fmt_bps(b, js_num(v, "unserved_bps")));
	table_cell(t, "%s", fmt_pct(b, js_num(v, "max_utilization")));
}

/* A row of the link directions; ctx is the sweep. */
static void
link_row(struct table *t, const json_t *v, const void *ctx)
{
	char what[512], b[FMT_LEN];

	show_direction_row(t, v, ctx);
	table_cell(t, "%s", fmt_bps(b, js_num(v, "capacity_bps")));
	table_cell(t, "%s", fmt_bps(b, js_num(v, "live_load_bps")));
	table_cell(t, "%s", fmt_bps(b, js_num(v, "worst_load_bps")));
	table_cell(t, "%s", fmt_pct(b, js_num(v, "worst_utilization")));
	table_cell(t, "%s", scenario(ctx, js_int(v, "worst_index", -1), what,
	    sizeof(what)));
	table_cell(t, "%s", fmt_bps(b, js_num(v, "needed_capacity_bps")));
}

/* The scenarios that leave traffic unserved, the worst link loads. */
static void
lists(const json_t *sw, long top, FILE *f)
{
	static const char *const uh[] = { "SCENARIO", "FAILS", "UNSERVED",
		"MAX UTIL" };
	static const char *const lh[] = { "LINK", "FROM", "TO", "CAPACITY",
		"LIVE LOAD", "WORST LOAD", "WORST UTIL", "WORST WHEN",
		"NEEDED" };
	static const struct show_cols unserved = { "rlrr", uh, unserved_row };
	static const struct show_cols links = { "lllrrrrlr", lh, link_row };
	json_t *rep = js_obj(sw, "report"), *ls = js_arr(rep, "links");
	size_t n = json_array_size(ls);

	show_list(f, &unserved, js_arr(rep, "unserved"), top, sw,
	    "scenarios that leave traffic unserved, worst first:");
	show_list(f, &links, ls, top, sw,
	    "link directions by worst-case utilisation (%zu of %zu):",
	    top > 0 && (size_t)top < n ? (size_t)top : n, n);
}

/* --top, the only option of sweep report. */
static int
top_opt(int k, const char *val, void *arg)
{
	(void)k;
	return opt_long("--top", val, 1, 100000000L, arg);
}

int
cmd_sweep_report(const struct cli *c, int argc, char **argv)
{
	static const struct opt_def defs[] = {
		{ "top", true },
		{ NULL, false },
	};
	struct answer a = { 0 };
	char *path = NULL, b[FMT_LEN], b2[FMT_LEN];
	json_t *rep;
	long long id;
	long top = 20;
	int r;

	if ((r = sweep_id("report", argc, argv, defs, top_opt, &top,
	    &id)) != 0)
		return r;
	path = xasprintf("/v1/sweeps/%lld", id);
	if ((r = fetch_get(c, path, &a)) != RC_OK)
		goto out;
	r = sweep_rc(a.json);
	if (c->json) {
		answer_print(&a);
		goto out;
	}
	rep = js_obj(a.json, "report");
	printf("sweep %lld: %s, %s, %lld/%lld scenarios in %s; model revision "
	    "%lld, plan revision %lld%s%s\n", js_int(a.json, "id", 0),
	    js_str(a.json, "kind", "?"), js_str(a.json, "state", "?"),
	    js_int(a.json, "done", 0), js_int(a.json, "total", 0),
	    fmt_secs(b, js_num(a.json, "elapsed_s")),
	    js_int(a.json, "model_revision", 0),
	    js_int(a.json, "plan_revision", 0),
	    rep != NULL ? "; headroom " : "",
	    rep != NULL ? fmt_pct(b2, js_num(rep, "headroom")) : "");
	sweep_summary(a.json, stdout);
	lists(a.json, top, stdout);
out:
	free(path);
	answer_clear(&a);
	return r;
}
