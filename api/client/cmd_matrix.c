/* SPDX-License-Identifier: GPL-3.0-or-later */
/* weft matrix list|put|rm: the stored traffic matrices. */

/*
 * DESIGN
 * matrix put sends a JSON file as it is (the body of PUT
 * /v1/matrices/NAME, docs/api.md), so the daemon alone judges it.  A CSV
 * file in the network format (docs/csv-format.md) is read with the
 * engine's own reader, csvnet_parse(), and only its demands are sent, in
 * the file's order, as that JSON body: a spreadsheet that keeps the whole
 * network can update the matrix without touching the topology.  The
 * reader resolves demand ends against the file's node rows, so the CSV
 * must have them (the network file does).
 */

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <jansson.h>

#include "client.h"
#include "fetch.h"
#include "file.h"
#include "fmt.h"
#include "js.h"
#include "opt.h"
#include "table.h"
#include "wait.h"
#include "../../daemon/base/err.h"
#include "../../daemon/base/xalloc.h"
#include "../../daemon/engine/csvnet.h"
#include "../../daemon/engine/model.h"

int
cmd_matrix_list(const struct cli *c, int argc, char **argv)
{
	static const char *const heads[] = { "NAME", "DEMANDS", "TOTAL",
		"PLANNED" };
	static const struct opt_def defs[] = { { NULL, false } };
	struct answer a = { 0 }, p = { 0 };
	struct table *t;
	struct opts o;
	const char *v, *planned;
	json_t *m;
	char b[FMT_LEN];
	size_t i;
	int k, r;

	opt_init(&o, argc, argv);
	if ((k = opt_next(&o, defs, &v)) != OPT_END)
		return k == OPT_BAD ? RC_USAGE :
		    msg_usage("matrix list takes no arguments");
	if ((r = fetch_get(c, "/v1/matrices", &a)) != RC_OK)
		goto out;
	if (c->json) {
		answer_print(&a);
		goto out;
	}
	if ((r = fetch_get(c, "/v1/policy", &p)) != RC_OK)
		goto out;
	planned = js_str(p.json, "matrix", "");
	t = table_new(4, "lrrl", heads);
	json_array_foreach(js_arr(a.json, "matrices"), i, m) {
		table_cell(t, "%s", js_str(m, "name", "?"));
		table_cell(t, "%lld", js_int(m, "demands", 0));
		table_cell(t, "%s", fmt_bps(b, js_num(m, "total_bps")));
		table_cell(t, "%s", strcmp(js_str(m, "name", ""), planned) ==
		    0 ? "yes" : "");
	}
	table_print(t, stdout, "");
	table_free(t);
out:
	answer_clear(&a);
	answer_clear(&p);
	return r;
}

/*
 * The demands of a network CSV text as the JSON body of PUT
 * /v1/matrices; NULL with the reason said when the text does not parse.
 */
static char *
csv_body(const char *path, const char *text, size_t len)
{
	struct model *m = NULL;
	struct matrix *mx = NULL;
	struct err e = { 0 };
	json_t *arr, *j;
	char *body = NULL;
	size_t i;

	if (csvnet_parse(text, len, &m, &e) != 0) {
		msg("%s: %s: %s", path, e.where, e.msg);
		return NULL;
	}
	mx = model_get_matrix(m, NULL);
	arr = json_array();
	for (i = 0; i < mx->n; i++)
		json_array_append_new(arr, json_pack("{s:s, s:s, s:f, s:i}",
		    "src", mx->entries[i].src, "dst", mx->entries[i].dst,
		    "rate_bps", mx->entries[i].rate_bps,
		    "priority", mx->entries[i].priority));
	j = json_pack("{s:o}", "demands", arr);
	if (j != NULL)
		body = json_dumps(j, JSON_COMPACT | JSON_REAL_PRECISION(17));
	if (body == NULL)
		msg("%s: cannot write the matrix as JSON", path);
	json_decref(j);
	matrix_free(mx);
	model_free(m);
	return body;
}

int
cmd_matrix_put(const struct cli *c, int argc, char **argv)
{
	enum { O_FORMAT, O_WAIT };
	static const struct opt_def defs[] = {
		[O_FORMAT] = { "format", true },
		[O_WAIT] = { "wait", false },
		{ NULL, false },
	};
	static const char *const formats[] = { "json", "csv" };
	struct answer a = { 0 };
	struct opts o;
	const char *v, *pos[2] = { NULL, NULL };
	char *text = NULL, *body = NULL, *path = NULL, *e;
	size_t len;
	bool wait = false;
	int k, n = 0, fmt = -1, r;

	opt_init(&o, argc, argv);
	while ((k = opt_next(&o, defs, &v)) != OPT_END) {
		if (k == OPT_BAD)
			return RC_USAGE;
		if (k == O_FORMAT && (r = opt_word("--format", v, formats, 2,
		    &fmt)) != 0)
			return r;
		if (k == O_WAIT)
			wait = true;
		if (k == OPT_ARG) {
			if (n == 2)
				return msg_usage("matrix put takes NAME FILE");
			pos[n++] = v;
		}
	}
	if (n != 2)
		return msg_usage("matrix put needs NAME FILE");
	if (fmt < 0)
		fmt = strcmp(file_format(pos[1]), "csv") == 0 ? 1 : 0;
	if ((r = file_read(pos[1], &text, &len)) != 0)
		goto out;
	if (fmt == 1 && (body = csv_body(pos[1], text, len)) == NULL) {
		r = RC_REFUSED;
		goto out;
	}
	e = fetch_escape(pos[0]);
	path = xasprintf("/v1/matrices/%s", e);
	free(e);
	r = fetch(c, "PUT", path, "application/json", body != NULL ? body :
	    text, body != NULL ? strlen(body) : len, &a);
	if (r == RC_OK)
		r = wait_changed(c, &a, wait, "matrix %s: %lld demands",
		    js_str(a.json, "name", pos[0]), js_int(a.json, "demands", 0));
out:
	free(text);
	free(body);
	free(path);
	answer_clear(&a);
	return r;
}

int
cmd_matrix_rm(const struct cli *c, int argc, char **argv)
{
	static const struct opt_def defs[] = { { NULL, false } };
	struct answer a = { 0 };
	struct opts o;
	const char *v, *name = NULL;
	char *path, *e;
	int k, r;

	opt_init(&o, argc, argv);
	while ((k = opt_next(&o, defs, &v)) != OPT_END) {
		if (k == OPT_BAD)
			return RC_USAGE;
		if (name != NULL)
			return msg_usage("matrix rm takes one matrix name");
		name = v;
	}
	if (name == NULL)
		return msg_usage("matrix rm needs a matrix name");
	e = fetch_escape(name);
	path = xasprintf("/v1/matrices/%s", e);
	free(e);
	if ((r = fetch(c, "DELETE", path, NULL, NULL, 0, &a)) == RC_OK) {
		if (c->json)
			answer_print(&a);
		else
			printf("matrix %s removed (model revision %lld)\n",
			    name, js_int(a.json, "model_revision", 0));
	}
	free(path);
	answer_clear(&a);
	return r;
}
