/* SPDX-License-Identifier: GPL-3.0-or-later */
/* weft loads: the published plan's link directions by utilisation. */

/*
 * DESIGN
 * --link and --node become the daemon's filters (GET /v1/plan/loads?
 * link=ID&node=ID), so only those links cross the network.
 */

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "client.h"
#include "fetch.h"
#include "opt.h"
#include "show.h"
#include "../../daemon/base/xalloc.h"

enum { O_TOP, O_ASC, O_LINK, O_NODE };

static const struct opt_def defs[] = {
	[O_TOP] = { "top", true },
	[O_ASC] = { "ascending", false },
	[O_LINK] = { "link", true },
	[O_NODE] = { "node", true },
	{ NULL, false },
};

/* Appends "&key=escaped value" (or "?key=...") to the path *pp. */
static void
add_param(char **pp, const char *key, const char *value)
{
	char *e = fetch_escape(value), *p;

	p = xasprintf("%s%c%s=%s", *pp, strchr(*pp, '?') != NULL ? '&' :
	    '?', key, e);
	free(e);
	free(*pp);
	*pp = p;
}

int
cmd_loads(const struct cli *c, int argc, char **argv)
{
	struct answer a = { 0 };
	struct opts o;
	const char *v, *link = NULL, *node = NULL;
	char *path;
	long top = 0;
	bool asc = false;
	int k, r;

	opt_init(&o, argc, argv);
	while ((k = opt_next(&o, defs, &v)) != OPT_END) {
		if (k == OPT_BAD)
			return RC_USAGE;
		if (k == OPT_ARG)
			return msg_usage("loads takes no arguments (\"%s\")",
			    v);
		if (k == O_TOP && (r = opt_long("--top", v, 1, 100000000L,
		    &top)) != 0)
			return r;
		if (k == O_ASC)
			asc = true;
		if (k == O_LINK)
			link = v;
		if (k == O_NODE)
			node = v;
	}
	path = xstrdup("/v1/plan/loads");
	if (link != NULL)
		add_param(&path, "link", link);
	if (node != NULL)
		add_param(&path, "node", node);
	r = fetch_get(c, path, &a);
	free(path);
	if (r != RC_OK)
		goto out;
	if (show_loads(c, a.json, top, asc, stdout) != 0) {
		msg("cannot write the JSON");
		r = RC_FAILED;
	}
out:
	answer_clear(&a);
	return r;
}
