/* SPDX-License-Identifier: GPL-3.0-or-later */
/* weft sweep start|list|cancel|rm: survivability sweeps on the daemon. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <jansson.h>

#include "sweep.h"
#include "client.h"
#include "fetch.h"
#include "js.h"
#include "opt.h"
#include "show.h"
#include "table.h"
#include "../../daemon/base/xalloc.h"

static const char *const kinds[] = { "links", "nodes", "srlgs",
	"link-pairs" };

int
sweep_id(const char *what, int argc, char **argv,
    const struct opt_def *defs, sweep_opt_fn *fn, void *arg, long long *idp)
{
	static const struct opt_def none[] = { { NULL, false } };
	struct opts o;
	const char *v, *id = NULL;
	long n;
	int k, r;

	opt_init(&o, argc, argv);
	while ((k = opt_next(&o, defs != NULL ? defs : none, &v)) != OPT_END) {
		if (k == OPT_BAD)
			return RC_USAGE;
		if (k >= 0) {
			if ((r = fn(k, v, arg)) != 0)
				return r;
		} else if (id != NULL)
			return msg_usage("sweep %s takes one sweep id", what);
		else
			id = v;
	}
	if (id == NULL)
		return msg_usage("sweep %s needs a sweep id", what);
	if ((r = opt_long("sweep id", id, 1, 0x7fffffffL, &n)) != 0)
		return r;
	*idp = n;
	return 0;
}

int
cmd_sweep_start(const struct cli *c, int argc, char **argv)
{
	enum { O_SCALE, O_TIME_LIMIT, O_WATCH, O_INTERVAL };
	static const struct opt_def defs[] = {
		[O_SCALE] = { "scale", true },
		[O_TIME_LIMIT] = { "time-limit", true },
		[O_WATCH] = { "watch", false },
		[O_INTERVAL] = { "interval", true },
		{ NULL, false },
	};
	struct answer a = { 0 };
	struct opts o;
	json_t *body;
	const char *v;
	double interval = SWEEP_INTERVAL_S;
	bool watch = false;
	int k, i, r = 0;

	body = json_object();
	opt_init(&o, argc, argv);
	while (r == 0 && (k = opt_next(&o, defs, &v)) != OPT_END) {
		switch (k) {
		case OPT_BAD:
			r = RC_USAGE;
			break;
		case OPT_ARG:
			if (json_object_get(body, "kind") != NULL)
				r = msg_usage("sweep start takes one kind");
			else if ((r = opt_word("sweep kind", v, kinds, 4,
			    &i)) == 0)
				json_object_set_new(body, "kind",
				    json_string(kinds[i]));
			break;
		case O_SCALE:
		case O_TIME_LIMIT:
			r = opt_member(defs[k].name, v, body);
			break;
		case O_WATCH:
			watch = true;
			break;
		case O_INTERVAL:
			r = opt_num("--interval", v, 0.05, 3600, &interval);
			break;
		}
	}
	if (r == 0 && json_object_get(body, "kind") == NULL)
		r = msg_usage("sweep start needs a kind: links, nodes, srlgs "
		    "or link-pairs");
	if (r != 0)
		goto out;
	if ((r = fetch_json(c, "POST", "/v1/sweeps", body, &a)) != RC_OK)
		goto out;
	/* With --watch --json, the final document is the only output. */
	if (c->json && !watch)
		answer_print(&a);
	else if (!c->json)
		printf("sweep %lld started: %s, %lld scenarios\n",
		    js_int(a.json, "id", 0), js_str(body, "kind", "?"),
		    js_int(a.json, "total", 0));
	if (watch)
		r = sweep_watch(c, js_int(a.json, "id", 0), interval);
out:
	json_decref(body);
	answer_clear(&a);
	return r;
}

int
cmd_sweep_list(const struct cli *c, int argc, char **argv)
{
	static const char *const heads[] = { "ID", "KIND", "STATE", "DONE",
		"TOTAL", "CREATED", "FINISHED" };
	static const struct opt_def defs[] = { { NULL, false } };
	struct answer a = { 0 };
	struct table *t;
	struct opts o;
	const char *v;
	json_t *s;
	size_t i;
	int k, r;

	opt_init(&o, argc, argv);
	if ((k = opt_next(&o, defs, &v)) != OPT_END)
		return k == OPT_BAD ? RC_USAGE :
		    msg_usage("sweep list takes no arguments");
	if ((r = fetch_get(c, "/v1/sweeps", &a)) != RC_OK)
		goto out;
	if (c->json) {
		answer_print(&a);
		goto out;
	}
	t = table_new(7, "rllrrll", heads);
	json_array_foreach(js_arr(a.json, "sweeps"), i, s) {
		table_cell(t, "%lld", js_int(s, "id", 0));
		table_cell(t, "%s", js_str(s, "kind", "?"));
		table_cell(t, "%s", js_str(s, "state", "?"));
		table_cell(t, "%lld", js_int(s, "done", 0));
		table_cell(t, "%lld", js_int(s, "total", 0));
		table_cell(t, "%s", js_str(s, "created_at", "-"));
		table_cell(t, "%s", js_str(s, "finished_at", "-"));
	}
	table_print(t, stdout, "");
	table_free(t);
out:
	answer_clear(&a);
	return r;
}

/* What a command on one sweep prints for people: its answer j. */
typedef void said_fn(long long id, const json_t *j);

/*
 * "sweep <what> ID": sends method with no body to /v1/sweeps/ID and then
 * suffix; prints the answer's body with c->json, else said(ID, answer).
 * Returns the exit code.
 */
static int
act(const struct cli *c, const char *what, const char *method,
    const char *suffix, said_fn *said, int argc, char **argv)
{
	struct answer a = { 0 };
	long long id;
	char *path;
	int r;

	if ((r = sweep_id(what, argc, argv, NULL, NULL, NULL, &id)) != 0)
		return r;
	path = xasprintf("/v1/sweeps/%lld%s", id, suffix);
	if ((r = fetch(c, method, path, NULL, NULL, 0, &a)) == RC_OK) {
		if (c->json)
			answer_print(&a);
		else
			said(id, a.json);
	}
	free(path);
	answer_clear(&a);
	return r;
}

static void
cancelled(long long id, const json_t *j)
{
	printf("sweep %lld %s after %lld of %lld scenarios\n", id,
	    js_str(j, "state", "?"), js_int(j, "done", 0),
	    js_int(j, "total", 0));
}

static void
removed(long long id, const json_t *j)
{
	(void)j;
	printf("sweep %lld removed\n", id);
}

int
cmd_sweep_cancel(const struct cli *c, int argc, char **argv)
{
	return act(c, "cancel", "POST", "/cancel", cancelled, argc, argv);
}

int
cmd_sweep_rm(const struct cli *c, int argc, char **argv)
{
	return act(c, "rm", "DELETE", "", removed, argc, argv);
}
