/* SPDX-License-Identifier: GPL-3.0-or-later */
/* weft import FILE: replace the topology and one matrix from a file. */

/*
 * DESIGN
 * POST /v1/import takes the file as it is; the daemon parses it (SNDlib
 * native or weft's network CSV).  The format comes from --format or the
 * file name (".csv"), the matrix name from --matrix or the file's base
 * name without its extension.  The import leaves the policy alone; --use
 * then makes the imported matrix the planned one by reading the policy
 * and putting it back with that matrix (two requests: another client's
 * policy change in between would be overwritten, which --use accepts).
 */

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <jansson.h>

#include "client.h"
#include "fetch.h"
#include "file.h"
#include "js.h"
#include "opt.h"
#include "wait.h"
#include "../../daemon/base/xalloc.h"

enum { O_FORMAT, O_MATRIX, O_USE, O_WAIT };

static const struct opt_def defs[] = {
	[O_FORMAT] = { "format", true },
	[O_MATRIX] = { "matrix", true },
	[O_USE] = { "use", false },
	[O_WAIT] = { "wait", false },
	{ NULL, false },
};

/* The base name of path without directory and extension; caller frees. */
static char *
stem(const char *path)
{
	const char *b = strrchr(path, '/');
	char *s, *dot;

	s = xstrdup(b != NULL ? b + 1 : path);
	if ((dot = strrchr(s, '.')) != NULL && dot != s)
		*dot = '\0';
	return s;
}

/* PUT /v1/policy with the stored policy's members and matrix name. */
static int
use_matrix(const struct cli *c, const char *name, long long *revp)
{
	struct answer a = { 0 }, w = { 0 };
	int r;

	if ((r = fetch_get(c, "/v1/policy", &a)) != RC_OK)
		goto out;
	json_object_set_new(a.json, "matrix", json_string(name));
	if ((r = fetch_json(c, "PUT", "/v1/policy", a.json, &w)) != RC_OK)
		goto out;
	*revp = js_int(w.json, "model_revision", 0);
out:
	answer_clear(&a);
	answer_clear(&w);
	return r;
}

int
cmd_import(const struct cli *c, int argc, char **argv)
{
	static const char *const formats[] = { "sndlib", "csv" };
	struct answer a = { 0 };
	struct opts o;
	const char *v, *file = NULL, *format = NULL;
	char *matrix = NULL, *text = NULL, *path = NULL, *e;
	long long rev;
	size_t len;
	bool use = false, wait = false;
	int k, f, r;

	opt_init(&o, argc, argv);
	while ((k = opt_next(&o, defs, &v)) != OPT_END) {
		switch (k) {
		case OPT_BAD:
			r = RC_USAGE;
			goto out;
		case O_FORMAT:
			if ((r = opt_word("--format", v, formats, 2, &f)) != 0)
				goto out;
			format = formats[f];
			break;
		case O_MATRIX:
			free(matrix);
			matrix = xstrdup(v);
			break;
		case O_USE:
			use = true;
			break;
		case O_WAIT:
			wait = true;
			break;
		default:
			if (file != NULL) {
				r = msg_usage("import takes one file");
				goto out;
			}
			file = v;
		}
	}
	if (file == NULL) {
		r = msg_usage("import needs a file");
		goto out;
	}
	if (format == NULL)
		format = file_format(file);
	if (matrix == NULL)
		matrix = stem(strcmp(file, "-") == 0 ? "stdin" : file);
	if ((r = file_read(file, &text, &len)) != 0)
		goto out;
	e = fetch_escape(matrix);
	path = xasprintf("/v1/import?format=%s&matrix=%s", format, e);
	free(e);
	if ((r = fetch(c, "POST", path, strcmp(format, "csv") == 0 ?
	    "text/csv" : "text/plain", text, len, &a)) != RC_OK)
		goto out;
	rev = js_int(a.json, "model_revision", 0);
	if (c->json)
		answer_print(&a);
	else
		printf("imported %s as %s: %lld nodes, %lld links, %lld "
		    "demands in matrix %s (model revision %lld)\n", file,
		    format, js_int(a.json, "nodes", 0),
		    js_int(a.json, "links", 0), js_int(a.json, "demands", 0),
		    js_str(a.json, "matrix", matrix), rev);
	if (use) {
		if ((r = use_matrix(c, matrix, &rev)) != RC_OK)
			goto out;
		if (!c->json)
			printf("the policy now plans matrix %s (model "
			    "revision %lld)\n", matrix, rev);
	}
	r = wait ? wait_report(c, rev) : RC_OK;
out:
	free(matrix);
	free(text);
	free(path);
	answer_clear(&a);
	return r;
}
