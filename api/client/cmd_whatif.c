/* SPDX-License-Identifier: GPL-3.0-or-later */
/* weft whatif: a scenario's plan against the live one (POST /v1/whatif). */
#include <stdio.h>

#include <jansson.h>

#include "client.h"
#include "fetch.h"
#include "fmt.h"
#include "js.h"
#include "opt.h"
#include "show.h"
#include "table.h"

enum { O_FAIL_LINK, O_FAIL_NODE, O_FAIL_SRLG, O_SCALE, O_MATRIX,
	O_OBJECTIVE, O_HEADROOM, O_FORMULATION, O_TIME_LIMIT, O_TOP };

static const struct opt_def defs[] = {
	[O_FAIL_LINK] = { "fail-link", true },
	[O_FAIL_NODE] = { "fail-node", true },
	[O_FAIL_SRLG] = { "fail-srlg", true },
	[O_SCALE] = { "scale", true },
	[O_MATRIX] = { "matrix", true },
	[O_OBJECTIVE] = { "objective", true },
	[O_HEADROOM] = { "headroom", true },
	[O_FORMULATION] = { "formulation", true },
	[O_TIME_LIMIT] = { "time-limit", true },
	[O_TOP] = { "top", true },
	{ NULL, false },
};

static const char *const objectives[] = { "cost", "balance", "congestion" };
static const char *const formulations[] = { "path", "arc" };

/* Appends v to the array member key of obj, creating it. */
static void
add_to(json_t *obj, const char *key, json_t *v)
{
	json_t *a = json_object_get(obj, key);

	if (a == NULL) {
		a = json_array();
		json_object_set_new(obj, key, a);
	}
	json_array_append_new(a, v);
}

/*
 * Builds the request from the command line into *bodyp; returns 0 or
 * RC_USAGE.  *topp gets --top.
 */
static int
request(int argc, char **argv, json_t **bodyp, long *topp)
{
	json_t *body = json_object(), *fail = json_object();
	json_t *pol = json_object();
	struct opts o;
	const char *v;
	double x;
	long n;
	int k, i, r = 0;

	opt_init(&o, argc, argv);
	while (r == 0 && (k = opt_next(&o, defs, &v)) != OPT_END) {
		switch (k) {
		case OPT_BAD:
			r = RC_USAGE;
			break;
		case OPT_ARG:
			r = msg_usage("whatif takes options only (\"%s\")", v);
			break;
		case O_FAIL_LINK:
			add_to(fail, "links", json_string(v));
			break;
		case O_FAIL_NODE:
			add_to(fail, "nodes", json_string(v));
			break;
		case O_FAIL_SRLG:
			if ((r = opt_long("--fail-srlg", v, 0, 4294967295L,
			    &n)) == 0)
				add_to(fail, "srlgs", json_integer(n));
			break;
		case O_SCALE:
			if ((r = opt_num("--scale", v, 0, 1e6, &x)) == 0)
				json_object_set_new(body, "scale",
				    json_real(x));
			break;
		case O_MATRIX:
			json_object_set_new(body, "matrix", json_string(v));
			break;
		case O_OBJECTIVE:
			if ((r = opt_word("--objective", v, objectives, 3,
			    &i)) == 0)
				json_object_set_new(pol, "objective",
				    json_string(objectives[i]));
			break;
		case O_HEADROOM:
			if ((r = opt_num("--headroom", v, 1e-9, 1, &x)) == 0)
				json_object_set_new(pol, "headroom",
				    json_real(x));
			break;
		case O_FORMULATION:
			if ((r = opt_word("--formulation", v, formulations, 2,
			    &i)) == 0)
				json_object_set_new(pol, "formulation",
				    json_string(formulations[i]));
			break;
		case O_TIME_LIMIT:
			if ((r = opt_num("--time-limit", v, 1e-3, 86400,
			    &x)) == 0)
				json_object_set_new(body, "time_limit_s",
				    json_real(x));
			break;
		case O_TOP:
			r = opt_long("--top", v, 1, 100000, topp);
			break;
		}
	}
	if (json_object_size(fail) > 0)
		json_object_set(body, "fail", fail);
	if (json_object_size(pol) > 0)
		json_object_set(body, "policy", pol);
	json_decref(fail);
	json_decref(pol);
	if (r != 0) {
		json_decref(body);
		body = NULL;
	}
	*bodyp = body;
	return r;
}

/* The live plan and the scenario's side by side. */
static void
compare(const json_t *w, FILE *f)
{
	static const char *const heads[] = { "", "LIVE", "SCENARIO" };
	const json_t *cmp = js_obj(w, "compare"), *sc = js_obj(w, "scenario");
	const json_t *live = js_obj(cmp, "live"), *scen = js_obj(cmp,
	    "scenario");
	struct table *t = table_new(3, "lrr", heads);
	char b1[FMT_LEN], b2[FMT_LEN], list[1024];
	double moved = js_num(cmp, "moved_bps");

	js_join(js_arr(sc, "failed_links"), ", ", list, sizeof(list));
	fprintf(f, "scenario on model revision %lld (live plan revision "
	    "%lld): failed links %s; demand %s\n",
	    js_int(w, "model_revision", 0), js_int(w, "plan_revision", 0),
	    list[0] != '\0' ? list : "none",
	    fmt_bps(b1, js_num(sc, "demand_bps")));
	table_cell(t, "status");
	table_cell(t, "-");
	table_cell(t, "%s", js_str(js_obj(w, "plan"), "status", "?"));
	table_cell(t, "max utilisation");
	table_cell(t, "%s", fmt_pct(b1, js_num(live, "max_utilization")));
	table_cell(t, "%s", fmt_pct(b2, js_num(scen, "max_utilization")));
	table_cell(t, "carried");
	table_cell(t, "%s", fmt_bps(b1, js_num(live, "carried_bps")));
	table_cell(t, "%s", fmt_bps(b2, js_num(scen, "carried_bps")));
	table_cell(t, "unserved");
	table_cell(t, "%s", fmt_bps(b1, js_num(live, "unserved_bps")));
	table_cell(t, "%s", fmt_bps(b2, js_num(scen, "unserved_bps")));
	table_cell(t, "total cost");
	table_cell(t, "%s", fmt_num(b1, js_num(live, "total_cost")));
	table_cell(t, "%s", fmt_num(b2, js_num(scen, "total_cost")));
	table_cell(t, "moved");
	table_cell(t, "%s", "");
	table_cell(t, "%s", moved >= 0 ? fmt_bps(b1, moved) : "-");
	table_print(t, f, "");
	table_free(t);
}

static void
rising(const json_t *w, long top, FILE *f)
{
	static const char *const heads[] = { "LINK", "FROM", "TO", "LIVE",
		"SCENARIO", "RISE" };
	json_t *arr = js_arr(w, "rising_links"), *v;
	struct table *t;
	char b[FMT_LEN];
	size_t i;

	if (json_array_size(arr) == 0)
		return;
	fprintf(f, "link directions whose utilisation rises most:\n");
	t = table_new(6, "lllrrr", heads);
	json_array_foreach(arr, i, v) {
		if ((long)i == top)
			break;
		table_cell(t, "%s", js_str(v, "link", "?"));
		table_cell(t, "%s", js_str(v, "from", "?"));
		table_cell(t, "%s", js_str(v, "to", "?"));
		table_cell(t, "%s", fmt_pct(b, js_num(v, "live_utilization")));
		table_cell(t, "%s", fmt_pct(b, js_num(v, "utilization")));
		table_cell(t, "%s", fmt_pct(b, js_num(v, "rise")));
	}
	table_print(t, f, "  ");
	table_free(t);
}

static void
unserved(const json_t *w, long top, FILE *f)
{
	static const char *const heads[] = { "SRC", "DST", "PRIO", "RATE",
		"UNSERVED", "CUT OFF" };
	json_t *arr = js_arr(w, "unserved_demands"), *v;
	struct table *t;
	char b[FMT_LEN];
	size_t i;

	if (json_array_size(arr) == 0)
		return;
	fprintf(f, "demands left unserved: %lld, most unserved first:\n",
	    js_int(w, "unserved_demands_total", 0));
	t = table_new(6, "llrrrl", heads);
	json_array_foreach(arr, i, v) {
		if ((long)i == top)
			break;
		table_cell(t, "%s", js_str(v, "src", "?"));
		table_cell(t, "%s", js_str(v, "dst", "?"));
		table_cell(t, "%lld", js_int(v, "priority", 0));
		table_cell(t, "%s", fmt_bps(b, js_num(v, "rate_bps")));
		table_cell(t, "%s", fmt_bps(b, js_num(v, "unserved_bps")));
		table_cell(t, "%s", js_bool(v, "cut_off") ? "yes" : "no");
	}
	table_print(t, f, "  ");
	table_free(t);
}

int
cmd_whatif(const struct cli *c, int argc, char **argv)
{
	struct answer a = { 0 };
	json_t *body;
	long top = 10;
	int r;

	if ((r = request(argc, argv, &body, &top)) != 0)
		return r;
	r = fetch_json(c, "POST", "/v1/whatif", body, &a);
	json_decref(body);
	if (r != RC_OK)
		goto out;
	if (c->json)
		answer_print(&a);
	else {
		compare(a.json, stdout);
		rising(a.json, top, stdout);
		unserved(a.json, top, stdout);
		if (js_obj(js_obj(a.json, "plan"), "explain") != NULL) {
			printf("the scenario's plan:\n");
			show_plan(js_obj(a.json, "plan"), stdout);
		}
	}
	r = show_plan_rc(js_obj(a.json, "plan"));
out:
	answer_clear(&a);
	return r;
}
