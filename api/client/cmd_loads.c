/* SPDX-License-Identifier: GPL-3.0-or-later */
/* weft loads: the published plan's link directions by utilisation. */
#include <stdio.h>

#include "client.h"
#include "fetch.h"
#include "opt.h"
#include "show.h"

enum { O_TOP, O_ASC };

static const struct opt_def defs[] = {
	[O_TOP] = { "top", true },
	[O_ASC] = { "ascending", false },
	{ NULL, false },
};

int
cmd_loads(const struct cli *c, int argc, char **argv)
{
	struct answer a = { 0 };
	struct opts o;
	const char *v;
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
	}
	if ((r = fetch_get(c, "/v1/plan/loads", &a)) != RC_OK)
		goto out;
	if (show_loads(c, a.json, top, asc, stdout) != 0) {
		msg("cannot write the JSON");
		r = RC_FAILED;
	}
out:
	answer_clear(&a);
	return r;
}
