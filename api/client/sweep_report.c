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

static void
unserved(const json_t *sw, long top, FILE *f)
{
	static const char *const heads[] = { "SCENARIO", "FAILS", "UNSERVED",
		"MAX UTIL" };
	json_t *us = js_arr(js_obj(sw, "report"), "unserved"), *v;
	struct table *t;
	char what[512], b[FMT_LEN];
	size_t i;

	if (json_array_size(us) == 0)
		return;
	fprintf(f, "scenarios that leave traffic unserved, worst first:\n");
	t = table_new(4, "rlrr", heads);
	json_array_foreach(us, i, v) {
		if ((long)i == top)
			break;
		table_cell(t, "%lld", js_int(v, "index", -1));
		table_cell(t, "%s", scenario(sw, js_int(v, "index", -1), what,
		    sizeof(what)));
		table_cell(t, "%s", fmt_bps(b, js_num(v, "unserved_bps")));
		table_cell(t, "%s", fmt_pct(b, js_num(v, "max_utilization")));
	}
	table_print(t, f, "  ");
	table_free(t);
}

static void
links(const json_t *sw, long top, FILE *f)
{
	static const char *const heads[] = { "LINK", "FROM", "TO", "CAPACITY",
		"LIVE LOAD", "WORST LOAD", "WORST UTIL", "WORST WHEN",
		"NEEDED" };
	json_t *ls = js_arr(js_obj(sw, "report"), "links"), *v;
	struct table *t;
	char what[512], b[FMT_LEN];
	size_t i;

	if (json_array_size(ls) == 0)
		return;
	fprintf(f, "link directions by worst-case utilisation (%zu of %zu):\n",
	    top > 0 && (size_t)top < json_array_size(ls) ? (size_t)top :
	    json_array_size(ls), json_array_size(ls));
	t = table_new(9, "lllrrrrlr", heads);
	json_array_foreach(ls, i, v) {
		if ((long)i == top)
			break;
		table_cell(t, "%s", js_str(v, "link", "?"));
		table_cell(t, "%s", js_str(v, "from", "?"));
		table_cell(t, "%s", js_str(v, "to", "?"));
		table_cell(t, "%s", fmt_bps(b, js_num(v, "capacity_bps")));
		table_cell(t, "%s", fmt_bps(b, js_num(v, "live_load_bps")));
		table_cell(t, "%s", fmt_bps(b, js_num(v, "worst_load_bps")));
		table_cell(t, "%s", fmt_pct(b, js_num(v, "worst_utilization")));
		table_cell(t, "%s", scenario(sw, js_int(v, "worst_index", -1),
		    what, sizeof(what)));
		table_cell(t, "%s", fmt_bps(b, js_num(v,
		    "needed_capacity_bps")));
	}
	table_print(t, f, "  ");
	table_free(t);
}

int
cmd_sweep_report(const struct cli *c, int argc, char **argv)
{
	enum { O_TOP };
	static const struct opt_def defs[] = {
		[O_TOP] = { "top", true },
		{ NULL, false },
	};
	struct answer a = { 0 };
	struct opts o;
	const char *v, *id = NULL;
	char *path = NULL, b[FMT_LEN], b2[FMT_LEN];
	json_t *rep;
	long top = 20, n;
	int k, r;

	opt_init(&o, argc, argv);
	while ((k = opt_next(&o, defs, &v)) != OPT_END) {
		if (k == OPT_BAD)
			return RC_USAGE;
		if (k == O_TOP) {
			if ((r = opt_long("--top", v, 1, 100000000L,
			    &top)) != 0)
				return r;
		} else if (id != NULL)
			return msg_usage("sweep report takes one sweep id");
		else
			id = v;
	}
	if (id == NULL)
		return msg_usage("sweep report needs a sweep id");
	if ((r = opt_long("sweep id", id, 1, 0x7fffffffL, &n)) != 0)
		return r;
	path = xasprintf("/v1/sweeps/%ld", n);
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
	unserved(a.json, top, stdout);
	links(a.json, top, stdout);
out:
	free(path);
	answer_clear(&a);
	return r;
}
