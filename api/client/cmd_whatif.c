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
	long n;
	int k, r = 0;

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
		case O_TIME_LIMIT:
			r = opt_member(defs[k].name, v, body);
			break;
		case O_MATRIX:
			json_object_set_new(body, "matrix", json_string(v));
			break;
		case O_OBJECTIVE:
		case O_HEADROOM:
		case O_FORMULATION:
			r = opt_member(defs[k].name, v, pol);
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

/* A row of compare(): label, then member key of live and of scen. */
static void
side_by_side(struct table *t, const char *label,
    char *(*fmt)(char *, double), const json_t *live, const json_t *scen,
    const char *key)
{
	char b[FMT_LEN];

	table_cell(t, "%s", label);
	table_cell(t, "%s", fmt(b, js_num(live, key)));
	table_cell(t, "%s", fmt(b, js_num(scen, key)));
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
	char b[FMT_LEN], list[1024];
	double moved = js_num(cmp, "moved_bps");

	js_join(js_arr(sc, "failed_links"), ", ", list, sizeof(list));
	fprintf(f, "scenario on model revision %lld (live plan revision "
	    "%lld): failed links %s; demand %s\n",
	    js_int(w, "model_revision", 0), js_int(w, "plan_revision", 0),
	    list[0] != '\0' ? list : "none",
	    fmt_bps(b, js_num(sc, "demand_bps")));
	table_cell(t, "status");
	table_cell(t, "-");
	table_cell(t, "%s", js_str(js_obj(w, "plan"), "status", "?"));
	side_by_side(t, "max utilisation", fmt_pct, live, scen,
	    "max_utilization");
	side_by_side(t, "carried", fmt_bps, live, scen, "carried_bps");
	side_by_side(t, "unserved", fmt_bps, live, scen, "unserved_bps");
	side_by_side(t, "total cost", fmt_num, live, scen, "total_cost");
	table_cell(t, "moved");
	table_cell(t, "%s", "");
	table_cell(t, "%s", moved >= 0 ? fmt_bps(b, moved) : "-");
	table_print(t, f, "");
	table_free(t);
}

static void
rising_row(struct table *t, const json_t *v, const void *ctx)
{
	char b[FMT_LEN];

	show_direction_row(t, v, ctx);
	table_cell(t, "%s", fmt_pct(b, js_num(v, "live_utilization")));
	table_cell(t, "%s", fmt_pct(b, js_num(v, "utilization")));
	table_cell(t, "%s", fmt_pct(b, js_num(v, "rise")));
}

static void
unserved_row(struct table *t, const json_t *v, const void *ctx)
{
	char b[FMT_LEN];

	show_demand_row(t, v, ctx);
	table_cell(t, "%s", fmt_bps(b, js_num(v, "unserved_bps")));
	table_cell(t, "%s", js_bool(v, "cut_off") ? "yes" : "no");
}

/* The link directions that rise most, the demands left unserved. */
static void
lists(const json_t *w, long top, FILE *f)
{
	static const char *const rh[] = { "LINK", "FROM", "TO", "LIVE",
		"SCENARIO", "RISE" };
	static const char *const uh[] = { "SRC", "DST", "PRIO", "RATE",
		"UNSERVED", "CUT OFF" };
	static const struct show_cols rising = { "lllrrr", rh, rising_row };
	static const struct show_cols unserved = { "llrrrl", uh,
		unserved_row };

	show_list(f, &rising, js_arr(w, "rising_links"), top, NULL,
	    "link directions whose utilisation rises most:");
	show_list(f, &unserved, js_arr(w, "unserved_demands"), top, NULL,
	    "demands left unserved: %lld, most unserved first:",
	    js_int(w, "unserved_demands_total", 0));
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
		lists(a.json, top, stdout);
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
