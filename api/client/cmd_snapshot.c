/* SPDX-License-Identifier: GPL-3.0-or-later */
/* weft snapshot: the live model and its plan's figures as one file. */

/*
 * DESIGN
 * The snapshot (format in api/codec_snapshot.h, docs/operations.md) is
 * put together from the API's own reads: GET /v1/health, /v1/plan,
 * /v1/topology, /v1/policy, /v1/matrices and the policy's matrix.  Those
 * are separate requests, so a write between them could mix two model
 * revisions.  The reads are therefore bracketed by two health reads: the
 * snapshot is kept only when the published plan reflects the newest model
 * revision (plan_current) and neither revision moved in between;
 * otherwise it tries again, a bounded number of times.  The file is
 * written beside its final name and renamed, so a reader never sees half
 * a snapshot.
 */

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <jansson.h>

#include "client.h"
#include "fetch.h"
#include "js.h"
#include "opt.h"
#include "wait.h"
#include "../codec_snapshot.h"

#define TRIES		20	/* rounds of reads before giving up */
#define TRY_PAUSE_S	0.5	/* between rounds */

enum { O_OUTPUT };

static const struct opt_def defs[] = {
	[O_OUTPUT] = { "output", true },
	{ NULL, false },
};

/* Whether matrix name is among GET /v1/matrices' list. */
static bool
listed(const json_t *list, const char *name)
{
	json_t *v;
	size_t i;

	json_array_foreach(js_arr(list, "matrices"), i, v)
		if (strcmp(js_str(v, "name", ""), name) == 0)
			return true;
	return false;
}

/*
 * One round of reads.  Returns RC_OK with *snapp (new) when consistent,
 * RC_OK with *snapp NULL when the model moved (try again), or an exit
 * code.
 */
static int
round_once(const struct cli *c, json_t **snapp, const char **whyp)
{
	struct answer h1 = { 0 }, h2 = { 0 }, pl = { 0 }, tp = { 0 },
	    po = { 0 }, ml = { 0 }, mx = { 0 };
	const char *name;
	char *esc, path[512];
	json_t *matrix = NULL;
	int r;

	*snapp = NULL;
	*whyp = NULL;
	if ((r = fetch_get(c, "/v1/health", &h1)) != RC_OK)
		goto out;
	if (js_int(h1.json, "plan_revision", 0) < 1) {
		*whyp = "no plan has been published yet";
		goto out;
	}
	if (!js_bool(h1.json, "plan_current")) {
		*whyp = "the published plan is not of the newest model "
		    "revision (a re-solve is pending or failed)";
		goto out;
	}
	if ((r = fetch_get(c, "/v1/plan", &pl)) != RC_OK ||
	    (r = fetch_get(c, "/v1/topology", &tp)) != RC_OK ||
	    (r = fetch_get(c, "/v1/policy", &po)) != RC_OK ||
	    (r = fetch_get(c, "/v1/matrices", &ml)) != RC_OK)
		goto out;
	name = js_str(po.json, "matrix", NULL);
	if (name != NULL && listed(ml.json, name)) {
		esc = fetch_escape(name);
		snprintf(path, sizeof(path), "/v1/matrices/%s", esc);
		free(esc);
		if ((r = fetch_get(c, path, &mx)) != RC_OK)
			goto out;
		matrix = json_incref(mx.json);
	} else
		matrix = json_null();
	if ((r = fetch_get(c, "/v1/health", &h2)) != RC_OK)
		goto out;
	if (js_int(h1.json, "model_revision", 0) !=
	    js_int(h2.json, "model_revision", -1) ||
	    js_int(h1.json, "plan_revision", 0) !=
	    js_int(h2.json, "plan_revision", -1) ||
	    js_int(pl.json, "revision", 0) !=
	    js_int(h1.json, "plan_revision", -1) ||
	    js_int(pl.json, "model_revision", 0) !=
	    js_int(h1.json, "model_revision", -1)) {
		*whyp = "the model changed while it was read";
		goto out;
	}
	*snapp = json_pack("{s:s, s:i, s:I, s:I, s:O, s:O, s:O, s:O}",
	    "format", CODEC_SNAPSHOT_FORMAT, "version",
	    CODEC_SNAPSHOT_VERSION, "model_revision",
	    (json_int_t)js_int(h1.json, "model_revision", 0),
	    "plan_revision", (json_int_t)js_int(h1.json, "plan_revision", 0),
	    "topology", tp.json, "policy", po.json, "matrix", matrix,
	    "plan", pl.json);
	if (*snapp == NULL) {
		msg("cannot assemble the snapshot");
		r = RC_FAILED;
	}
out:
	json_decref(matrix);
	answer_clear(&h1);
	answer_clear(&h2);
	answer_clear(&pl);
	answer_clear(&tp);
	answer_clear(&po);
	answer_clear(&ml);
	answer_clear(&mx);
	return r;
}

/* Writes snap to path ("-": stdout), through a temporary file. */
static int
write_out(const json_t *snap, const char *path)
{
	char *tmp;
	size_t n;
	int r = RC_FAILED;

	if (strcmp(path, "-") == 0) {
		if (json_dumpf(snap, stdout, JSON_COMPACT) != 0 ||
		    fputc('\n', stdout) == EOF || fflush(stdout) != 0) {
			msg("cannot write the snapshot to standard output");
			return RC_FAILED;
		}
		return RC_OK;
	}
	n = strlen(path) + 8;
	tmp = malloc(n);
	if (tmp == NULL) {
		msg("out of memory");
		return RC_FAILED;
	}
	snprintf(tmp, n, "%s.tmp", path);
	if (json_dump_file(snap, tmp, JSON_COMPACT) != 0)
		msg("cannot write %s", tmp);
	else if (rename(tmp, path) != 0)
		msg("cannot rename %s to %s", tmp, path);
	else
		r = RC_OK;
	if (r != RC_OK)
		remove(tmp);
	free(tmp);
	return r;
}

int
cmd_snapshot(const struct cli *c, int argc, char **argv)
{
	const char *v, *out = "-", *why = NULL;
	json_t *snap = NULL;
	struct opts o;
	int k, r = RC_FAILED, i;

	opt_init(&o, argc, argv);
	while ((k = opt_next(&o, defs, &v)) != OPT_END) {
		if (k == OPT_BAD)
			return RC_USAGE;
		if (k == OPT_ARG)
			return msg_usage("snapshot takes no arguments, only "
			    "--output FILE");
		if (v[0] == '\0')
			return msg_usage("--output: a file name is needed");
		out = v;
	}
	for (i = 0; i < TRIES; i++) {
		if (i > 0)
			wait_sleep(TRY_PAUSE_S);
		if ((r = round_once(c, &snap, &why)) != RC_OK)
			return r;
		if (snap != NULL)
			break;
	}
	if (snap == NULL) {
		msg("no consistent snapshot after %d tries: %s", TRIES,
		    why != NULL ? why : "?");
		return RC_FAILED;
	}
	r = write_out(snap, out);
	json_decref(snap);
	return r;
}
