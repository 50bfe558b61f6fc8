/* SPDX-License-Identifier: GPL-3.0-or-later */
/* weft status: the daemon's revisions and the published plan's summary. */
#include <stdio.h>

#include <jansson.h>

#include "client.h"
#include "fetch.h"
#include "js.h"
#include "opt.h"
#include "show.h"

static const struct opt_def defs[] = { { NULL, false } };

/* The daemon line and, when the last solve failed, why. */
static void
health(const struct cli *c, const json_t *h)
{
	const json_t *s = js_obj(h, "solver");

	printf("daemon %s: model revision %lld, plan revision %lld%s\n",
	    c->url, js_int(h, "model_revision", 0),
	    js_int(h, "plan_revision", 0),
	    js_bool(h, "plan_current") ? " (current)" :
	    " (a re-solve is pending)");
	if (js_bool(s, "last_solve_failed"))
		printf("the solve of model revision %lld failed: %s\n",
		    js_int(s, "failed_model_revision", 0),
		    js_str(s, "last_error", "?"));
}

int
cmd_status(const struct cli *c, int argc, char **argv)
{
	struct answer h = { 0 }, p = { 0 };
	struct opts o;
	const char *v;
	json_t *j;
	int k, r;

	opt_init(&o, argc, argv);
	if ((k = opt_next(&o, defs, &v)) != OPT_END)
		return k == OPT_BAD ? RC_USAGE :
		    msg_usage("status takes no arguments");
	if ((r = fetch_get(c, "/v1/health", &h)) != RC_OK ||
	    (r = fetch_get(c, "/v1/plan", &p)) != RC_OK)
		goto out;
	if (c->json) {
		j = json_pack("{s:O, s:O}", "health", h.json, "plan", p.json);
		if (js_print(j, stdout) != 0)
			msg("cannot write the JSON");
		json_decref(j);
	} else {
		health(c, h.json);
		show_plan(p.json, stdout);
	}
	r = show_plan_rc(p.json);
	if (r == RC_OK && js_bool(js_obj(h.json, "solver"),
	    "last_solve_failed"))
		r = RC_FAILED;
out:
	answer_clear(&h);
	answer_clear(&p);
	return r;
}
