/* SPDX-License-Identifier: GPL-3.0-or-later */
/* weft solve FILE: plan a network file offline, with the daemon's engine. */

/*
 * DESIGN
 * No daemon is involved: the file is read by the engine's own parsers
 * (sndlib_parse(), csvnet_parse()), the policy comes from the command
 * line (the defaults are those of a fresh daemon: cost, headroom 1, path
 * formulation), engine_solve() plans it, and api/codec_plan.c renders
 * the plan exactly as the daemon renders a published one.  So --json
 * prints GET /v1/plan's document, byte for byte what a daemon would serve
 * for the same model, with revision 0 (it is never published) and matrix
 * null.  The client links codec_plan.o and codec_json.o alone, not
 * libapi.a, whose other objects need libmicrohttpd and the service.
 * GLPK's per-thread state is released before returning
 * (engine_thread_done()).
 */

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <jansson.h>

#include "client.h"
#include "file.h"
#include "js.h"
#include "opt.h"
#include "show.h"
#include "../../daemon/base/err.h"
#include "../../daemon/base/log.h"
#include "../../daemon/engine/csvnet.h"
#include "../../daemon/engine/engine.h"
#include "../../daemon/engine/model.h"
#include "../../daemon/engine/plan.h"
#include "../../daemon/engine/sndlib.h"
#include "../codec_plan.h"

enum { O_FORMAT, O_OBJECTIVE, O_HEADROOM, O_FORMULATION, O_TIME_LIMIT,
	O_LOADS, O_TOP };

static const struct opt_def defs[] = {
	[O_FORMAT] = { "format", true },
	[O_OBJECTIVE] = { "objective", true },
	[O_HEADROOM] = { "headroom", true },
	[O_FORMULATION] = { "formulation", true },
	[O_TIME_LIMIT] = { "time-limit", true },
	[O_LOADS] = { "loads", false },
	[O_TOP] = { "top", true },
	{ NULL, false },
};

static const char *const formats[] = { "sndlib", "csv" };
static const char *const objectives[] = { "cost", "balance", "congestion" };
static const char *const formulations[] = { "path", "arc", "potential" };

struct job {
	const char *file;
	int format;		/* index in formats, -1: from the name */
	struct policy pol;	/* objective, headroom, formulation used */
	double time_limit_s;	/* 0: none */
	bool loads;
	long top;
};

static int
args(int argc, char **argv, struct job *jb)
{
	struct opts o;
	const char *v;
	double x;
	int k, i, r = 0;

	opt_init(&o, argc, argv);
	while (r == 0 && (k = opt_next(&o, defs, &v)) != OPT_END) {
		switch (k) {
		case OPT_BAD:
			return RC_USAGE;
		case OPT_ARG:
			if (jb->file != NULL)
				return msg_usage("solve takes one file");
			jb->file = v;
			break;
		case O_FORMAT:
			r = opt_word("--format", v, formats, 2, &jb->format);
			break;
		case O_OBJECTIVE:
			if ((r = opt_word("--objective", v, objectives, 3,
			    &i)) == 0)
				r = objective_parse(objectives[i],
				    &jb->pol.objective) == 0 ? 0 : RC_USAGE;
			break;
		case O_HEADROOM:
			r = opt_num("--headroom", v, 1e-9, 1,
			    &jb->pol.headroom);
			break;
		case O_FORMULATION:
			if ((r = opt_word("--formulation", v, formulations, 3,
			    &i)) == 0)
				r = formulation_parse(formulations[i],
				    &jb->pol.formulation) == 0 ? 0 : RC_USAGE;
			break;
		case O_TIME_LIMIT:
			if ((r = opt_num("--time-limit", v, 1e-3, 86400,
			    &x)) == 0)
				jb->time_limit_s = x;
			break;
		case O_LOADS:
			jb->loads = true;
			break;
		case O_TOP:
			r = opt_long("--top", v, 1, 100000000L, &jb->top);
			break;
		}
	}
	if (r == 0 && jb->file == NULL)
		r = msg_usage("solve needs a network file");
	return r;
}

/* Prints the rendered texts as the command line asks. */
static int
print(const struct cli *c, const struct job *jb, const char *summary,
    const char *loads)
{
	json_t *s = NULL, *l = NULL, *both;
	int r = RC_FAILED;

	if (c->json && !jb->loads) {
		printf("%s\n", summary);
		return 0;
	}
	if ((s = json_loads(summary, 0, NULL)) == NULL ||
	    (l = json_loads(loads, 0, NULL)) == NULL) {
		msg("cannot read back the rendered plan");
		goto out;
	}
	if (c->json) {
		both = json_pack("{s:O, s:O}", "plan", s, "loads", l);
		r = js_print(both, stdout) == 0 ? 0 : RC_FAILED;
		json_decref(both);
		goto out;
	}
	printf("%s: %s\n", jb->file, "solved offline");
	show_plan(s, stdout);
	if (jb->loads)
		show_loads(c, l, jb->top, false, stdout);
	r = 0;
out:
	json_decref(s);
	json_decref(l);
	return r;
}

int
cmd_solve(const struct cli *c, int argc, char **argv)
{
	struct job jb = { .format = -1 };
	struct solve_opts so;
	struct model *m = NULL;
	struct plan *p = NULL;
	struct err e = { 0 };
	char *text = NULL, *sum = NULL, *routes = NULL, *loads = NULL;
	size_t len, sl, rl, ll;
	int r;

	policy_default(&jb.pol);
	if ((r = args(argc, argv, &jb)) != 0)
		goto out;
	if (jb.format < 0)
		jb.format = strcmp(file_format(jb.file), "csv") == 0 ? 1 : 0;
	if ((r = file_read(jb.file, &text, &len)) != 0)
		goto out;
	if ((jb.format == 0 ? sndlib_parse(text, len, &m, &e) :
	    csvnet_parse(text, len, &m, &e)) != 0) {
		msg("%s: %s: %s", jb.file, e.where, e.msg);
		r = RC_REFUSED;
		goto out;
	}
	m->policy.objective = jb.pol.objective;
	m->policy.headroom = jb.pol.headroom;
	m->policy.formulation = jb.pol.formulation;
	solve_opts_default(&so);
	so.time_limit_s = jb.time_limit_s;
	/* The engine logs through base/log.h; only its warnings matter here. */
	log_set_level(LOG_LVL_WARN);
	r = engine_solve(m, &so, &p, &e);
	engine_thread_done();
	if (r != 0) {
		msg("%s: the solve failed: %s%s%s", jb.file,
		    e.code != 0 ? e.msg : err_str(r),
		    e.where[0] != '\0' ? " at " : "", e.where);
		r = r == ERR_INVALID ? RC_REFUSED : RC_FAILED;
		goto out;
	}
	if (codec_plan_render(m, p, 0, &sum, &sl, &routes, &rl, &loads,
	    &ll) != 0) {
		msg("%s: the plan could not be rendered", jb.file);
		r = RC_FAILED;
		goto out;
	}
	if ((r = print(c, &jb, sum, loads)) != 0)
		goto out;
	r = p->status == PLAN_PARTIAL ? RC_PARTIAL : RC_OK;
out:
	policy_clear(&jb.pol);
	free(text);
	free(sum);
	free(routes);
	free(loads);
	plan_free(p);
	model_free(m);
	return r;
}
