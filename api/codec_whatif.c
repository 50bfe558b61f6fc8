/* SPDX-License-Identifier: GPL-3.0-or-later */
/* JSON <-> what-if: the scenario request and the answer. */

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <jansson.h>

#include "codec_whatif.h"
#include "codec_json.h"
#include "codec_model.h"
#include "codec_plan.h"
#include "codec_strict.h"
#include "../daemon/base/err.h"
#include "../daemon/base/xalloc.h"
#include "../daemon/engine/plan.h"
#include "../daemon/engine/scenario.h"

/* ---- decoding ---- */

static const char *const top_keys[] = { "fail", "scale", "scale_demands",
	"links", "add_links", "matrix", "policy", "time_limit_s", NULL };
static const char *const fail_keys[] = { "links", "nodes", "srlgs", NULL };
static const char *const scale_keys[] = { "from", "to", "factor", NULL };
static const char *const link_keys[] = { "id", "capacity_bps",
	"te_metric", "state", NULL };
static const char *const add_keys[] = { "id", "a", "b", "capacity_bps",
	"te_metric", "srlgs", NULL };
static const char *const policy_keys[] = { "objective", "headroom",
	"balance_tolerance", "formulation", "gap_target", "keep_paths",
	"keep_paths_tolerance", NULL };

/* Optional array member key of obj (at most max); NULL when absent. */
static int
opt_array(json_t *obj, const char *key, const char *base, size_t max,
    json_t **ap, struct err *e)
{
	json_t *v = json_object_get(obj, key);
	char w[ERR_WHERE_MAX];

	*ap = NULL;
	if (v == NULL)
		return 0;
	codec_path(w, sizeof(w), base, key);
	if (!json_is_array(v))
		return err_set(e, ERR_INVALID, w, "must be an array");
	if (json_array_size(v) > max)
		return err_set(e, ERR_TOOBIG, w, "%zu elements, more than the "
		    "limit of %zu", json_array_size(v), max);
	*ap = v;
	return 0;
}

/* An array of ids into a new array of copies. */
static int
ids(json_t *obj, const char *key, const char *base, char ***idsp,
    size_t *np, bool *hasp, struct err *e)
{
	json_t *a, *v;
	char w[ERR_WHERE_MAX], wi[ERR_WHERE_MAX + 24];
	size_t i;
	int r;

	*idsp = NULL;
	*np = 0;
	if (hasp != NULL)
		*hasp = false;
	if ((r = opt_array(obj, key, base, CODEC_IDS_MAX, &a, e)) != 0 ||
	    a == NULL)
		return r;
	if (hasp != NULL)
		*hasp = true;
	codec_path(w, sizeof(w), base, key);
	*idsp = xcalloc(json_array_size(a) + 1, sizeof(**idsp));
	json_array_foreach(a, i, v) {
		snprintf(wi, sizeof(wi), "%s[%zu]", w, i);
		if (!json_is_string(v))
			return err_set(e, ERR_INVALID, wi, "must be a string");
		if ((r = codec_check_id(json_string_value(v), wi, e)) != 0)
			return r;
		(*idsp)[(*np)++] = xstrdup(json_string_value(v));
	}
	return 0;
}

/* An array of SRLG numbers (integers 0..2^32-1). */
static int
srlgs(json_t *obj, const char *key, const char *base, size_t max,
    uint32_t **sp, size_t *np, struct err *e)
{
	json_t *a, *v;
	char w[ERR_WHERE_MAX], wi[ERR_WHERE_MAX + 24];
	json_int_t x;
	size_t i;
	int r;

	*sp = NULL;
	*np = 0;
	if ((r = opt_array(obj, key, base, max, &a, e)) != 0 || a == NULL)
		return r;
	codec_path(w, sizeof(w), base, key);
	*sp = xcalloc(json_array_size(a) + 1, sizeof(**sp));
	json_array_foreach(a, i, v) {
		snprintf(wi, sizeof(wi), "%s[%zu]", w, i);
		x = json_is_integer(v) ? json_integer_value(v) : -1;
		if (x < 0 || x > (json_int_t)UINT32_MAX)
			return err_set(e, ERR_INVALID, wi, "an SRLG is an "
			    "integer from 0 to 4294967295");
		(*sp)[(*np)++] = (uint32_t)x;
	}
	return 0;
}

static int
decode_fail(json_t *j, struct scenario *sc, struct err *e)
{
	json_t *f = json_object_get(j, "fail");
	int r;

	if (f == NULL)
		return 0;
	if (!json_is_object(f))
		return err_set(e, ERR_INVALID, "fail", "must be an object");
	if ((r = codec_check_keys(f, fail_keys, "fail", e)) != 0 ||
	    (r = ids(f, "links", "fail", &sc->fail_links, &sc->n_fail_links,
	    NULL, e)) != 0 ||
	    (r = ids(f, "nodes", "fail", &sc->fail_nodes, &sc->n_fail_nodes,
	    NULL, e)) != 0)
		return r;
	return srlgs(f, "srlgs", "fail", CODEC_IDS_MAX, &sc->fail_srlgs,
	    &sc->n_fail_srlgs, e);
}

static int
decode_scales(json_t *j, struct scenario *sc, struct err *e)
{
	struct scenario_scale *ss;
	json_t *a, *v;
	char w[ERR_WHERE_MAX];
	bool has;
	size_t i;
	int r;

	if ((r = opt_array(j, "scale_demands", "", CODEC_IDS_MAX, &a, e)) != 0
	    || a == NULL)
		return r;
	sc->scales = xcalloc(json_array_size(a) + 1, sizeof(*sc->scales));
	json_array_foreach(a, i, v) {
		snprintf(w, sizeof(w), "scale_demands[%zu]", i);
		if (!json_is_object(v))
			return err_set(e, ERR_INVALID, w, "must be an object");
		ss = &sc->scales[sc->n_scales++];
		if ((r = codec_check_keys(v, scale_keys, w, e)) != 0 ||
		    (r = ids(v, "from", w, &ss->from, &ss->n_from, &has,
		    e)) != 0)
			return r;
		ss->all_from = !has;
		if ((r = ids(v, "to", w, &ss->to, &ss->n_to, &has, e)) != 0)
			return r;
		ss->all_to = !has;
		/* The scenario checks the range, for one message. */
		if ((r = codec_get_num(v, "factor", w, true, -HUGE_VAL, false,
		    HUGE_VAL, &ss->factor, NULL, e)) != 0)
			return r;
	}
	return 0;
}

static int
decode_links(json_t *j, struct scenario *sc, struct err *e)
{
	struct scenario_link *sl;
	const char *id, *state;
	json_t *a, *v;
	char w[ERR_WHERE_MAX], wk[ERR_WHERE_MAX + 8];
	size_t i;
	int r;

	if ((r = opt_array(j, "links", "", CODEC_IDS_MAX, &a, e)) != 0 ||
	    a == NULL)
		return r;
	sc->links = xcalloc(json_array_size(a) + 1, sizeof(*sc->links));
	json_array_foreach(a, i, v) {
		snprintf(w, sizeof(w), "links[%zu]", i);
		if (!json_is_object(v))
			return err_set(e, ERR_INVALID, w, "must be an object");
		sl = &sc->links[sc->n_links++];
		if ((r = codec_check_keys(v, link_keys, w, e)) != 0 ||
		    (r = codec_get_str(v, "id", w, true, false, &id, e)) != 0)
			return r;
		sl->id = xstrdup(id);
		if ((r = codec_get_num(v, "capacity_bps", w, false, 0, true,
		    MODEL_RATE_MAX, &sl->capacity_bps, &sl->has_capacity,
		    e)) != 0 ||
		    (r = codec_get_num(v, "te_metric", w, false, 0, true,
		    MODEL_METRIC_MAX, &sl->te_metric, &sl->has_metric,
		    e)) != 0 ||
		    (r = codec_get_str(v, "state", w, false, false, &state,
		    e)) != 0)
			return r;
		if (state != NULL) {
			snprintf(wk, sizeof(wk), "%s.state", w);
			if (strcmp(state, "up") != 0 &&
			    strcmp(state, "down") != 0)
				return err_set(e, ERR_INVALID, wk, "must be "
				    "\"up\" or \"down\"");
			sl->has_state = true;
			sl->up = strcmp(state, "up") == 0;
		}
	}
	return 0;
}

static int
decode_add(json_t *j, struct scenario *sc, struct err *e)
{
	struct scenario_new_link *nl;
	const char *id, *a_id, *b_id;
	json_t *a, *v;
	char w[ERR_WHERE_MAX];
	size_t i;
	int r;

	if ((r = opt_array(j, "add_links", "", CODEC_IDS_MAX, &a, e)) != 0 ||
	    a == NULL)
		return r;
	sc->add = xcalloc(json_array_size(a) + 1, sizeof(*sc->add));
	json_array_foreach(a, i, v) {
		snprintf(w, sizeof(w), "add_links[%zu]", i);
		if (!json_is_object(v))
			return err_set(e, ERR_INVALID, w, "must be an object");
		nl = &sc->add[sc->n_add++];
		if ((r = codec_check_keys(v, add_keys, w, e)) != 0 ||
		    (r = codec_get_str(v, "id", w, true, false, &id, e)) != 0 ||
		    (r = codec_get_str(v, "a", w, true, false, &a_id, e)) != 0 ||
		    (r = codec_get_str(v, "b", w, true, false, &b_id, e)) != 0)
			return r;
		nl->id = xstrdup(id);
		nl->a = xstrdup(a_id);
		nl->b = xstrdup(b_id);
		if ((r = codec_get_num(v, "capacity_bps", w, true, 0, true,
		    MODEL_RATE_MAX, &nl->capacity_bps, NULL, e)) != 0 ||
		    (r = codec_get_num(v, "te_metric", w, true, 0, true,
		    MODEL_METRIC_MAX, &nl->te_metric, NULL, e)) != 0 ||
		    (r = srlgs(v, "srlgs", w, MODEL_SRLG_MAX, &nl->srlgs,
		    &nl->n_srlgs, e)) != 0)
			return r;
	}
	return 0;
}

/* The policy member: the live policy with the members given. */
static int
decode_policy(json_t *j, struct policy *p, struct err *e)
{
	json_t *o = json_object_get(j, "policy"), *v;
	const char *word;
	int r;

	if (o == NULL)
		return 0;
	if (!json_is_object(o))
		return err_set(e, ERR_INVALID, "policy", "must be an object");
	if ((r = codec_check_keys(o, policy_keys, "policy", e)) != 0 ||
	    (r = codec_get_str(o, "objective", "policy", false, false, &word,
	    e)) != 0)
		return r;
	if (word != NULL && objective_parse(word, &p->objective) != 0)
		return err_set(e, ERR_INVALID, "policy.objective", "must be "
		    "\"cost\", \"balance\" or \"congestion\"");
	if ((r = codec_get_str(o, "formulation", "policy", false, false,
	    &word, e)) != 0)
		return r;
	if (word != NULL && formulation_parse(word, &p->formulation) != 0)
		return err_set(e, ERR_INVALID, "policy.formulation", "must be "
		    "\"path\" or \"arc\"");
	if ((r = codec_get_num(o, "headroom", "policy", false, 0, true, 1,
	    &p->headroom, NULL, e)) != 0 ||
	    (r = codec_get_num(o, "balance_tolerance", "policy", false, 0,
	    false, 1, &p->balance_tol, NULL, e)) != 0 ||
	    (r = codec_get_num(o, "gap_target", "policy", false, 0, false,
	    0.5, &p->gap_target, NULL, e)) != 0 ||
	    (r = codec_get_num(o, "keep_paths_tolerance", "policy", false, 0,
	    false, 0.5, &p->keep_paths_tol, NULL, e)) != 0)
		return r;
	if ((v = json_object_get(o, "keep_paths")) != NULL) {
		if (!json_is_boolean(v))
			return err_set(e, ERR_INVALID, "policy.keep_paths",
			    "must be true or false");
		p->keep_paths = json_is_true(v);
	}
	return 0;
}

int
codec_whatif_decode(const char *text, size_t len, const struct policy *live,
    struct whatif_req *rq, struct err *e)
{
	json_t *j = NULL;
	const char *mname;
	int r;

	memset(rq, 0, sizeof(*rq));
	rq->sc = scenario_new();
	rq->policy = *live;
	rq->policy.matrix = NULL;
	if ((r = codec_parse_object(text, len, &j, e)) != 0 ||
	    (r = codec_check_keys(j, top_keys, "", e)) != 0 ||
	    (r = decode_fail(j, rq->sc, e)) != 0 ||
	    (r = codec_get_num(j, "scale", "", false, -HUGE_VAL, false,
	    HUGE_VAL, &rq->sc->scale, NULL, e)) != 0 ||
	    (r = decode_scales(j, rq->sc, e)) != 0 ||
	    (r = decode_links(j, rq->sc, e)) != 0 ||
	    (r = decode_add(j, rq->sc, e)) != 0 ||
	    (r = decode_policy(j, &rq->policy, e)) != 0 ||
	    (r = codec_get_num(j, "time_limit_s", "", false, 0, true, 86400,
	    &rq->time_limit_s, NULL, e)) != 0 ||
	    (r = codec_get_str(j, "matrix", "", false, false, &mname, e)) != 0)
		goto out;
	if (mname != NULL) {
		if (!codec_matrix_name_ok(mname)) {
			r = err_set(e, ERR_INVALID, "matrix", "a matrix name "
			    "is 1 to %d characters of A-Z a-z 0-9 . _ -",
			    CODEC_MATRIX_NAME_MAX);
			goto out;
		}
		rq->matrix = xstrdup(mname);
	}
	r = 0;
out:
	json_decref(j);
	if (r != 0)
		codec_whatif_req_clear(rq);
	return r;
}

void
codec_whatif_req_clear(struct whatif_req *rq)
{
	scenario_free(rq->sc);
	free(rq->matrix);
	memset(rq, 0, sizeof(*rq));
}

/* ---- encoding ---- */

static json_t *
totals(const struct plan *p)
{
	return json_pack("{s:o, s:o, s:o, s:o}",
	    "max_utilization", codec_num(p->max_util),
	    "total_cost", codec_num(p->total_cost),
	    "carried_bps", codec_num(p->carried_bps),
	    "unserved_bps", codec_num(p->unserved_bps));
}

struct rise {
	size_t arc;
	double rise;
};

static int
cmp_rise(const void *x, const void *y)
{
	double a = ((const struct rise *)x)->rise;
	double b = ((const struct rise *)y)->rise;

	return a < b ? 1 : a > b ? -1 : 0;
}

static int
cmp_unserved(const void *x, const void *y, void *arg)
{
	const struct plan *q = arg;
	double a = q->routes[*(const size_t *)x].unserved_bps;
	double b = q->routes[*(const size_t *)y].unserved_bps;

	return a < b ? 1 : a > b ? -1 : 0;
}

static json_t *
unserved_list(const struct model *sm, const struct plan *q, size_t *np,
    bool *okp)
{
	json_t *arr = json_array();
	const struct demand *d;
	bool *cut;
	size_t *ks, n = 0, k, i;

	cut = xcalloc(sm->n_demands + 1, sizeof(*cut));
	model_cut_off(sm, cut, NULL);
	ks = xcalloc(q->n_routes + 1, sizeof(*ks));
	for (k = 0; k < q->n_routes; k++)
		if (q->routes[k].unserved_bps > 0)
			ks[n++] = k;
	qsort_r(ks, n, sizeof(*ks), cmp_unserved, (void *)q);
	for (i = 0; i < n && i < CODEC_UNSERVED_MAX; i++) {
		d = &sm->demands[ks[i]];
		codec_append(arr, json_pack("{s:s, s:s, s:i, s:o, s:o, s:b}",
		    "src", sm->nodes[d->src].id, "dst", sm->nodes[d->dst].id,
		    "priority", d->priority, "rate_bps",
		    codec_num(d->rate_bps), "unserved_bps",
		    codec_num(q->routes[ks[i]].unserved_bps), "cut_off",
		    cut[ks[i]]), okp);
	}
	free(ks);
	free(cut);
	*np = n;
	return arr;
}

/* The ends of arc a of sm as from/to node ids. */
static void
ends(const struct model *sm, size_t a, const char **fromp, const char **top)
{
	const struct link *l = &sm->links[a / 2];

	*fromp = sm->nodes[a % 2 == 0 ? l->a : l->b].id;
	*top = sm->nodes[a % 2 == 0 ? l->b : l->a].id;
}

static json_t *
rising(const struct model *lm, const struct plan *p, const struct model *sm,
    const struct plan *q, bool *okp)
{
	json_t *arr = json_array();
	struct rise *rs;
	const char *from, *to;
	size_t a, n = 0, i;
	double live;

	rs = xcalloc(q->n_arcs + 1, sizeof(*rs));
	for (a = 0; a < q->n_arcs; a++) {
		if (!sm->links[a / 2].up)
			continue;
		live = a < p->n_arcs && a / 2 < lm->n_links ? p->arcs[a].util :
		    0;
		rs[n].arc = a;
		rs[n++].rise = q->arcs[a].util - live;
	}
	qsort(rs, n, sizeof(*rs), cmp_rise);
	for (i = 0; i < n && i < CODEC_RISING_MAX && rs[i].rise > 0; i++) {
		a = rs[i].arc;
		ends(sm, a, &from, &to);
		live = q->arcs[a].util - rs[i].rise;
		codec_append(arr, json_pack("{s:s, s:s, s:s, s:o, s:o, s:o}",
		    "link", sm->links[a / 2].id, "from", from, "to", to,
		    "utilization", codec_num(q->arcs[a].util),
		    "live_utilization", codec_num(live), "rise",
		    codec_num(rs[i].rise)), okp);
	}
	free(rs);
	return arr;
}

static json_t *
link_loads(const struct model *sm, const struct plan *q, bool *okp)
{
	json_t *arr = json_array();
	size_t i;

	for (i = 0; i < sm->n_links; i++)
		codec_append(arr, json_pack("{s:s, s:s, s:{s:o, s:o}, "
		    "s:{s:o, s:o}}", "link", sm->links[i].id, "state",
		    sm->links[i].up ? "up" : "down", "a_to_b", "load_bps",
		    codec_num(q->arcs[2 * i].load_bps), "utilization",
		    codec_num(q->arcs[2 * i].util), "b_to_a", "load_bps",
		    codec_num(q->arcs[2 * i + 1].load_bps), "utilization",
		    codec_num(q->arcs[2 * i + 1].util)), okp);
	return arr;
}

char *
codec_whatif_encode(const struct model *lm, const struct plan *p,
    int64_t rev, const struct model *sm, const struct plan *q,
    const size_t *failed, size_t n_failed, size_t *lenp)
{
	json_t *fl, *added, *unserved, *j;
	size_t i, n_unserved = 0;
	bool ok = true;

	fl = json_array();
	for (i = 0; i < n_failed; i++)
		codec_append(fl, json_string(sm->links[failed[i]].id), &ok);
	added = json_array();
	for (i = lm->n_links; i < sm->n_links; i++)
		codec_append(added, json_string(sm->links[i].id), &ok);
	unserved = unserved_list(sm, q, &n_unserved, &ok);
	j = json_pack("{s:I, s:I, s:{s:o, s:o, s:o}, s:o, "
	    "s:{s:o, s:o, s:o}, s:o, s:I, s:o, s:o}",
	    "model_revision", (json_int_t)lm->revision,
	    "plan_revision", (json_int_t)rev,
	    "scenario", "failed_links", fl, "added_links", added,
	    "demand_bps", codec_num(q->demand_bps),
	    "plan", codec_plan_summary(sm, q, 0, &ok),
	    "compare", "live", totals(p), "scenario", totals(q),
	    "moved_bps", codec_num(q->moved_bps),
	    "unserved_demands", unserved,
	    "unserved_demands_total", (json_int_t)n_unserved,
	    "rising_links", rising(lm, p, sm, q, &ok),
	    "links", link_loads(sm, q, &ok));
	if (!ok) {
		json_decref(j);
		j = NULL;
	}
	return codec_dump(j, lenp);
}
