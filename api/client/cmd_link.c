/* SPDX-License-Identifier: GPL-3.0-or-later */
/* weft link show|up|down ID: one link, and taking it down or up. */
#include <stdio.h>
#include <stdlib.h>

#include <jansson.h>

#include "client.h"
#include "fetch.h"
#include "fmt.h"
#include "js.h"
#include "opt.h"
#include "table.h"
#include "wait.h"
#include "../../daemon/base/xalloc.h"

enum { O_WAIT };

static const struct opt_def defs[] = {
	[O_WAIT] = { "wait", false },
	{ NULL, false },
};

/* Reads the one link id (and --wait); returns 0 or RC_USAGE. */
static int
args(const char *what, int argc, char **argv, const char **idp,
    bool *waitp)
{
	struct opts o;
	const char *v;
	int k;

	*idp = NULL;
	*waitp = false;
	opt_init(&o, argc, argv);
	while ((k = opt_next(&o, defs, &v)) != OPT_END) {
		if (k == OPT_BAD)
			return RC_USAGE;
		if (k == O_WAIT)
			*waitp = true;
		else if (*idp != NULL)
			return msg_usage("link %s takes one link id", what);
		else
			*idp = v;
	}
	if (*idp == NULL)
		return msg_usage("link %s needs a link id", what);
	return 0;
}

int
cmd_link_show(const struct cli *c, int argc, char **argv)
{
	struct answer a = { 0 };
	struct table *t;
	const char *id;
	char *path, *e, b[FMT_LEN], list[1024];
	json_t *srlgs, *v;
	size_t i, len = 0;
	bool wait;
	int r;

	if ((r = args("show", argc, argv, &id, &wait)) != 0)
		return r;
	if (wait)
		return msg_usage("link show: --wait is for link up and down");
	e = fetch_escape(id);
	path = xasprintf("/v1/links/%s", e);
	free(e);
	if ((r = fetch_get(c, path, &a)) != RC_OK)
		goto out;
	if (c->json) {
		answer_print(&a);
		goto out;
	}
	list[0] = '\0';
	srlgs = js_arr(a.json, "srlgs");
	json_array_foreach(srlgs, i, v)
		if (len < sizeof(list))
			len += (size_t)snprintf(list + len, sizeof(list) - len,
			    "%s%lld", i > 0 ? ", " : "",
			    (long long)json_integer_value(v));
	t = table_new(2, "ll", NULL);
	table_cell(t, "link");
	table_cell(t, "%s", js_str(a.json, "id", "?"));
	table_cell(t, "ends");
	table_cell(t, "%s - %s", js_str(a.json, "a", "?"),
	    js_str(a.json, "b", "?"));
	table_cell(t, "state");
	table_cell(t, "%s", js_str(a.json, "state", "?"));
	table_cell(t, "capacity");
	table_cell(t, "%s per direction", fmt_bps(b, js_num(a.json,
	    "capacity_bps")));
	table_cell(t, "TE metric");
	table_cell(t, "%s", fmt_num(b, js_num(a.json, "te_metric")));
	table_cell(t, "SRLGs");
	table_cell(t, "%s", list[0] != '\0' ? list : "none");
	table_print(t, stdout, "");
	table_free(t);
out:
	free(path);
	answer_clear(&a);
	return r;
}

static int
set_state(const struct cli *c, const char *state, int argc, char **argv)
{
	struct answer a = { 0 };
	const char *id;
	char *path = NULL, *e;
	json_t *body;
	bool wait;
	int r;

	if ((r = args(state, argc, argv, &id, &wait)) != 0)
		return r;
	e = fetch_escape(id);
	path = xasprintf("/v1/links/%s", e);
	free(e);
	body = json_pack("{s:s}", "state", state);
	r = fetch_json(c, "PATCH", path, body, &a);
	json_decref(body);
	if (r == RC_OK)
		r = wait_changed(c, &a, wait, "link %s is %s", id, state);
	free(path);
	answer_clear(&a);
	return r;
}

int
cmd_link_up(const struct cli *c, int argc, char **argv)
{
	return set_state(c, "up", argc, argv);
}

int
cmd_link_down(const struct cli *c, int argc, char **argv)
{
	return set_state(c, "down", argc, argv);
}
