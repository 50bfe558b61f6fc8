/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The model snapshot file: the live model and its plan's figures in one. */

/*
 * DESIGN
 * The parts the API already reads ("topology", "policy", "matrix") are
 * written back to text and handed to their own decoders, so a snapshot
 * is held to exactly the rules of PUT /v1/topology, PUT /v1/policy and
 * PUT /v1/matrices; jansson writes reals with 17 significant digits, so
 * every number survives the round trip unchanged.  A decoder's where is
 * prefixed with the member it came from.
 */

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <jansson.h>

#include "codec_snapshot.h"
#include "codec_json.h"
#include "codec_model.h"
#include "codec_strict.h"
#include "../daemon/base/err.h"
#include "../daemon/engine/model.h"
#include "../daemon/engine/scenario.h"

static const char *const top_keys[] = { "format", "version",
	"model_revision", "plan_revision", "topology", "policy", "matrix",
	"plan", NULL };

/* Runs a member through its API decoder; where gets the member's name. */
typedef int part_fn(const char *text, size_t len, void *out,
    struct err *e);

static int
topology_part(const char *text, size_t len, void *out, struct err *e)
{
	return codec_topology_decode(text, len, out, e);
}

static int
policy_part(const char *text, size_t len, void *out, struct err *e)
{
	return codec_policy_decode(text, len, out, e);
}

/* out: a struct matrix_out, its name the policy's matrix. */
struct matrix_out {
	const char *name;
	struct matrix *mx;
};

static int
matrix_part(const char *text, size_t len, void *out, struct err *e)
{
	struct matrix_out *mo = out;

	return codec_matrix_decode(text, len, mo->name, &mo->mx, e);
}

static int
part(json_t *j, const char *key, part_fn *fn, void *out, struct err *e)
{
	json_t *v = json_object_get(j, key);
	struct err le = { 0 };
	char *text, w[ERR_WHERE_MAX];
	int r;

	if (!json_is_object(v))
		return err_set(e, ERR_INVALID, key, v == NULL ? "required" :
		    "must be an object");
	if ((text = json_dumps(v, JSON_COMPACT | JSON_ENCODE_ANY)) == NULL)
		return err_set(e, ERR_NOMEM, key, "cannot copy the member");
	r = fn(text, strlen(text), out, &le);
	free(text);
	if (r != 0)
		return err_set(e, r, codec_path(w, sizeof(w), key, le.where),
		    "%s", le.msg);
	return 0;
}

/* An integer revision >= 1, member key of j at base. */
static int
revision(json_t *j, const char *base, const char *key, int64_t *revp,
    struct err *e)
{
	json_t *v = json_object_get(j, key);
	char w[ERR_WHERE_MAX];

	if (!json_is_integer(v) || json_integer_value(v) < 1)
		return err_set(e, ERR_INVALID, codec_path(w, sizeof(w), base,
		    key), "must be an integer >= 1");
	*revp = (int64_t)json_integer_value(v);
	return 0;
}

/* The plan summary's figures (other members are ignored). */
static int
plan_part(json_t *j, struct snapshot *s, struct err *e)
{
	json_t *p = json_object_get(j, "plan");
	const char *status = NULL, *form = NULL;
	int64_t rev, mrev;
	int r;

	if (!json_is_object(p))
		return err_set(e, ERR_INVALID, "plan", p == NULL ? "required" :
		    "must be an object");
	if ((r = codec_get_str(p, "status", "plan", true, false, &status,
	    e)) != 0 ||
	    (r = codec_get_str(p, "formulation", "plan", true, false, &form,
	    e)) != 0 ||
	    (r = codec_get_num(p, "max_utilization", "plan", true, 0, false,
	    HUGE_VAL, &s->max_util, NULL, e)) != 0 ||
	    (r = codec_get_num(p, "carried_bps", "plan", true, 0, false,
	    HUGE_VAL, &s->carried_bps, NULL, e)) != 0 ||
	    (r = codec_get_num(p, "unserved_bps", "plan", true, 0, false,
	    HUGE_VAL, &s->unserved_bps, NULL, e)) != 0 ||
	    (r = codec_get_num(p, "total_cost", "plan", true, 0, false,
	    HUGE_VAL, &s->total_cost, NULL, e)) != 0 ||
	    (r = revision(p, "plan", "revision", &rev, e)) != 0 ||
	    (r = revision(p, "plan", "model_revision", &mrev, e)) != 0)
		return r;
	if (strcmp(status, "optimal") != 0 && strcmp(status, "partial") != 0 &&
	    strcmp(status, "empty") != 0)
		return err_set(e, ERR_INVALID, "plan.status", "\"%s\": no "
		    "optimum to check against (optimal, partial or empty "
		    "expected)", status);
	if (strlen(form) >= sizeof(s->formulation))
		return err_set(e, ERR_INVALID, "plan.formulation", "not a "
		    "formulation");
	if (rev != s->plan_revision)
		return err_set(e, ERR_INVALID, "plan.revision", "%lld differs "
		    "from plan_revision %lld", (long long)rev,
		    (long long)s->plan_revision);
	if (mrev != s->model_revision)
		return err_set(e, ERR_INVALID, "plan.model_revision", "%lld "
		    "differs from model_revision %lld: the plan is not of "
		    "this model", (long long)mrev,
		    (long long)s->model_revision);
	snprintf(s->plan_status, sizeof(s->plan_status), "%s", status);
	snprintf(s->formulation, sizeof(s->formulation), "%s", form);
	return 0;
}

int
codec_snapshot_decode(const char *text, size_t len, struct snapshot *s,
    struct err *e)
{
	struct snapshot ns;
	struct matrix_out mo = { NULL, NULL };
	struct policy pol;
	json_t *j = NULL, *v;
	const char *fmt;
	int r;

	memset(s, 0, sizeof(*s));
	memset(&ns, 0, sizeof(ns));
	memset(&pol, 0, sizeof(pol));
	if ((r = codec_parse_object(text, len, &j, e)) != 0 ||
	    (r = codec_check_keys(j, top_keys, "", e)) != 0 ||
	    (r = codec_get_str(j, "format", "", true, false, &fmt, e)) != 0)
		goto out;
	if (strcmp(fmt, CODEC_SNAPSHOT_FORMAT) != 0) {
		r = err_set(e, ERR_INVALID, "format", "must be \"%s\"",
		    CODEC_SNAPSHOT_FORMAT);
		goto out;
	}
	v = json_object_get(j, "version");
	if (!json_is_integer(v) || json_integer_value(v) !=
	    CODEC_SNAPSHOT_VERSION) {
		r = err_set(e, ERR_INVALID, "version", "must be %d (this "
		    "program reads that version only)", CODEC_SNAPSHOT_VERSION);
		goto out;
	}
	if ((r = revision(j, "", "model_revision", &ns.model_revision, e)) != 0 ||
	    (r = revision(j, "", "plan_revision", &ns.plan_revision, e)) != 0 ||
	    (r = part(j, "topology", topology_part, &ns.model, e)) != 0 ||
	    (r = part(j, "policy", policy_part, &pol, e)) != 0)
		goto out;
	policy_clear(&ns.model->policy);
	ns.model->policy = pol;
	memset(&pol, 0, sizeof(pol));
	v = json_object_get(j, "matrix");
	if (v == NULL) {
		r = err_set(e, ERR_INVALID, "matrix", "required (null when "
		    "the policy's matrix does not exist)");
		goto out;
	}
	if (!json_is_null(v)) {
		/* The decoder holds "name" to the policy's matrix. */
		if ((mo.name = ns.model->policy.matrix) == NULL) {
			r = err_set(e, ERR_INVALID, "matrix", "must be null: "
			    "the policy names no matrix");
			goto out;
		}
		if ((r = part(j, "matrix", matrix_part, &mo, e)) != 0)
			goto out;
		model_use_matrix(ns.model, mo.mx);
	}
	if ((r = plan_part(j, &ns, e)) != 0)
		goto out;
	ns.model->revision = ns.model_revision;
	*s = ns;
	memset(&ns, 0, sizeof(ns));
	r = 0;
out:
	policy_clear(&pol);
	matrix_free(mo.mx);
	model_free(ns.model);
	json_decref(j);
	return r;
}

/* Text from one of the API's encoders, parsed back (NULL: it failed). */
static json_t *
reparse(char *text)
{
	json_t *j = text != NULL ? json_loads(text, 0, NULL) : NULL;

	free(text);
	return j;
}

char *
codec_snapshot_encode(const struct model *m, const char *summary_json,
    int64_t model_rev, int64_t plan_rev, size_t *lenp)
{
	struct matrix *mx = NULL;
	json_t *matrix;
	size_t len;

	*lenp = 0;
	if (m->policy.matrix != NULL) {
		mx = model_get_matrix(m, m->policy.matrix);
		matrix = reparse(codec_matrix_encode(mx, &len));
		matrix_free(mx);
	} else
		matrix = json_null();
	return codec_dump(json_pack("{s:s, s:i, s:I, s:I, s:o, s:o, s:o, "
	    "s:o}", "format", CODEC_SNAPSHOT_FORMAT, "version",
	    CODEC_SNAPSHOT_VERSION, "model_revision", (json_int_t)model_rev,
	    "plan_revision", (json_int_t)plan_rev, "topology",
	    reparse(codec_topology_encode(m, &len)), "policy",
	    reparse(codec_policy_encode(&m->policy, &len)), "matrix", matrix,
	    "plan", json_loads(summary_json, 0, NULL)), lenp);
}

void
codec_snapshot_clear(struct snapshot *s)
{
	model_free(s->model);
	memset(s, 0, sizeof(*s));
}
