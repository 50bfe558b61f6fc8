/* SPDX-License-Identifier: GPL-3.0-or-later */
/* weft policy: show the routing policy, or change some of its members. */

/*
 * DESIGN
 * PUT /v1/policy replaces the whole policy, so a change reads the stored
 * policy, sets the members given on the command line and puts it back;
 * the daemon checks the values.
 */

#include <stdio.h>

#include <jansson.h>

#include "client.h"
#include "fetch.h"
#include "fmt.h"
#include "js.h"
#include "opt.h"
#include "table.h"
#include "wait.h"

enum { O_OBJECTIVE, O_HEADROOM, O_MATRIX, O_NO_MATRIX, O_FORMULATION,
	O_GAP_TARGET, O_KEEP_PATHS, O_WAIT };

static const struct opt_def defs[] = {
	[O_OBJECTIVE] = { "objective", true },
	[O_HEADROOM] = { "headroom", true },
	[O_MATRIX] = { "matrix", true },
	[O_NO_MATRIX] = { "no-matrix", false },
	[O_FORMULATION] = { "formulation", true },
	[O_GAP_TARGET] = { "gap-target", true },
	[O_KEEP_PATHS] = { "keep-paths", true },
	[O_WAIT] = { "wait", false },
	{ NULL, false },
};

static const char *const yesno[] = { "no", "yes" };

static void
print_policy(const json_t *p)
{
	struct table *t = table_new(2, "ll", NULL);
	char b[FMT_LEN];

	table_cell(t, "objective");
	table_cell(t, "%s", js_str(p, "objective", "?"));
	table_cell(t, "headroom");
	table_cell(t, "%s of every capacity", fmt_pct(b, js_num(p,
	    "headroom")));
	table_cell(t, "matrix");
	table_cell(t, "%s", js_str(p, "matrix", "(none)"));
	table_cell(t, "formulation");
	table_cell(t, "%s", js_str(p, "formulation", "?"));
	table_cell(t, "balance tolerance");
	table_cell(t, "%s", fmt_num(b, js_num(p, "balance_tolerance")));
	table_cell(t, "gap target");
	table_cell(t, "%s", fmt_num(b, js_num(p, "gap_target")));
	table_cell(t, "keep paths");
	table_cell(t, "%s (tolerance %s)", js_bool(p, "keep_paths") ? "yes" :
	    "no", fmt_num(b, js_num(p, "keep_paths_tolerance")));
	table_print(t, stdout, "");
	table_free(t);
}

int
cmd_policy(const struct cli *c, int argc, char **argv)
{
	struct answer a = { 0 }, w = { 0 };
	struct opts o;
	json_t *set;
	const char *v;
	bool wait = false;
	int k, i, r;

	set = json_object();
	opt_init(&o, argc, argv);
	while ((k = opt_next(&o, defs, &v)) != OPT_END) {
		r = 0;
		switch (k) {
		case OPT_BAD:
			r = RC_USAGE;
			break;
		case OPT_ARG:
			r = msg_usage("policy takes options only (\"%s\")", v);
			break;
		case O_OBJECTIVE:
		case O_HEADROOM:
		case O_FORMULATION:
		case O_GAP_TARGET:
			r = opt_member(defs[k].name, v, set);
			break;
		case O_MATRIX:
			json_object_set_new(set, "matrix", json_string(v));
			break;
		case O_NO_MATRIX:
			json_object_set_new(set, "matrix", json_null());
			break;
		case O_KEEP_PATHS:
			if ((r = opt_word("--keep-paths", v, yesno, 2,
			    &i)) == 0)
				json_object_set_new(set, "keep_paths",
				    json_boolean(i == 1));
			break;
		case O_WAIT:
			wait = true;
			break;
		}
		if (r != 0)
			goto out;
	}
	if ((r = fetch_get(c, "/v1/policy", &a)) != RC_OK)
		goto out;
	if (json_object_size(set) == 0) {
		if (wait)
			r = msg_usage("policy: --wait is for a change");
		else if (c->json)
			answer_print(&a);
		else
			print_policy(a.json);
		goto out;
	}
	json_object_update(a.json, set);
	if ((r = fetch_json(c, "PUT", "/v1/policy", a.json, &w)) != RC_OK)
		goto out;
	if (!c->json)
		print_policy(a.json);
	r = wait_changed(c, &w, wait, "policy stored");
out:
	json_decref(set);
	answer_clear(&a);
	answer_clear(&w);
	return r;
}
