/* SPDX-License-Identifier: GPL-3.0-or-later */
/* JSON and CSV for sweeps: requests, scenario labels, report, results. */

/*
 * DESIGN
 * The report is made once, when a sweep ends, from the live model and
 * plan it ran against, and stored as JSON text with the sweep; reads
 * embed it as it is.  links.csv is drawn from that stored report, so the
 * two can never disagree.  CSV follows RFC 4180: CRLF line ends, fields
 * quoted when they hold a comma, quote or line break, quotes doubled.
 */

#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <jansson.h>

#include "codec_sweep.h"
#include "codec_json.h"
#include "codec_strict.h"
#include "../daemon/base/err.h"
#include "../daemon/base/xalloc.h"
#include "../daemon/engine/model.h"
#include "../daemon/engine/plan.h"
#include "../storage/db.h"

/* ---- the request ---- */

static const char *const sweep_keys[] = { "kind", "scale", "time_limit_s",
	NULL };

int
codec_sweep_decode(const char *text, size_t len, struct sweep_req *rq,
    struct err *e)
{
	json_t *j = NULL;
	const char *kind;
	int r;

	memset(rq, 0, sizeof(*rq));
	rq->scale = 1;
	if ((r = codec_parse_object(text, len, &j, e)) != 0 ||
	    (r = codec_check_keys(j, sweep_keys, "", e)) != 0 ||
	    (r = codec_get_str(j, "kind", "", true, false, &kind, e)) != 0 ||
	    (r = codec_get_num(j, "scale", "", false, 0, false, 1e6,
	    &rq->scale, NULL, e)) != 0 ||
	    (r = codec_get_num(j, "time_limit_s", "", false, 0, true, 86400,
	    &rq->time_limit_s, NULL, e)) != 0)
		goto out;
	if (strcmp(kind, "links") != 0 && strcmp(kind, "nodes") != 0 &&
	    strcmp(kind, "srlgs") != 0 && strcmp(kind, "link-pairs") != 0) {
		r = err_set(e, ERR_INVALID, "kind", "must be \"links\", "
		    "\"nodes\", \"srlgs\" or \"link-pairs\"");
		goto out;
	}
	snprintf(rq->kind, sizeof(rq->kind), "%s", kind);
out:
	json_decref(j);
	return r;
}

char *
codec_sweep_params(const struct sweep_req *rq)
{
	size_t len;

	return codec_dump(json_pack("{s:s, s:o, s:o}", "kind", rq->kind,
	    "scale", codec_num(rq->scale), "time_limit_s",
	    codec_num(rq->time_limit_s)), &len);
}

/* ---- scenario labels ---- */

char *
codec_fail_json(const char *key, const char *const *ids, size_t n)
{
	json_t *arr = json_array();
	size_t i, len;
	bool ok = true;

	for (i = 0; i < n; i++)
		codec_append(arr, json_string(ids[i]), &ok);
	return codec_dump(ok ? json_pack("{s:o}", key, arr) : NULL, &len);
}

char *
codec_fail_srlg_json(uint32_t g)
{
	size_t len;

	return codec_dump(json_pack("{s:[I]}", "srlgs", (json_int_t)g), &len);
}

/* ---- the report ---- */

struct worst {
	size_t arc;
	double util;
};

static int
cmp_worst(const void *x, const void *y)
{
	double a = ((const struct worst *)x)->util;
	double b = ((const struct worst *)y)->util;

	return a < b ? 1 : a > b ? -1 : 0;
}

static int
cmp_unserved(const void *x, const void *y, void *arg)
{
	const struct db_sweep_result *all = arg;
	double a = all[*(const size_t *)x].unserved_bps;
	double b = all[*(const size_t *)y].unserved_bps;

	if (a != b)
		return a < b ? 1 : -1;
	return *(const size_t *)x < *(const size_t *)y ? -1 : 1;
}

char *
codec_sweep_report(const struct model *m, const struct plan *p,
    double headroom, const double *worst, const long *worst_idx,
    const struct db_sweep_result *all, const bool *have, size_t n)
{
	json_t *links, *unserved, *wmax, *fail;
	struct worst *ws;
	const struct link *l;
	size_t a, i, k, n_ws = 0, *us, n_us = 0, len;
	long best = -1;
	double cap;
	bool ok = true;

	ws = xcalloc(2 * m->n_links + 1, sizeof(*ws));
	for (a = 0; a < 2 * m->n_links; a++) {
		cap = m->links[a / 2].capacity_bps;
		if (worst_idx[a] < 0 || !(worst[a] > 0) || !(cap > 0))
			continue;
		ws[n_ws].arc = a;
		ws[n_ws++].util = worst[a] / cap;
	}
	qsort(ws, n_ws, sizeof(*ws), cmp_worst);
	links = json_array();
	for (i = 0; i < n_ws; i++) {
		a = ws[i].arc;
		l = &m->links[a / 2];
		codec_append(links, json_pack("{s:s, s:s, s:s, s:o, s:o, s:o, "
		    "s:o, s:I, s:o}", "link", l->id,
		    "from", m->nodes[a % 2 == 0 ? l->a : l->b].id,
		    "to", m->nodes[a % 2 == 0 ? l->b : l->a].id,
		    "capacity_bps", codec_num(l->capacity_bps),
		    "live_load_bps", codec_num(a < p->n_arcs ?
		    p->arcs[a].load_bps : 0),
		    "worst_load_bps", codec_num(worst[a]),
		    "worst_utilization", codec_num(ws[i].util),
		    "worst_index", (json_int_t)worst_idx[a],
		    "needed_capacity_bps", codec_num(worst[a] / headroom)),
		    &ok);
	}
	free(ws);
	us = xcalloc(n + 1, sizeof(*us));
	for (k = 0; k < n; k++) {
		if (!have[k] || strcmp(all[k].status, "failed") == 0)
			continue;
		if (all[k].unserved_bps > 0)
			us[n_us++] = k;
		if (best < 0 || all[k].max_util > all[best].max_util)
			best = (long)k;
	}
	qsort_r(us, n_us, sizeof(*us), cmp_unserved, (void *)all);
	unserved = json_array();
	for (i = 0; i < n_us; i++) {
		fail = json_loads(all[us[i]].fail_json, 0, NULL);
		codec_append(unserved, json_pack("{s:I, s:o, s:o, s:o}",
		    "index", (json_int_t)us[i], "fail", fail != NULL ? fail :
		    json_object(), "unserved_bps",
		    codec_num(all[us[i]].unserved_bps), "max_utilization",
		    codec_num(all[us[i]].max_util)), &ok);
	}
	free(us);
	wmax = best < 0 ? json_null() : json_pack("{s:o, s:I}", "value",
	    codec_num(all[best].max_util), "index", (json_int_t)best);
	return codec_dump(ok ? json_pack("{s:o, s:o, s:o, s:o}", "headroom",
	    codec_num(headroom), "worst_max_utilization", wmax, "unserved",
	    unserved, "links", links) : NULL, &len);
}

/* ---- reads ---- */

static json_t *
result_json(const struct db_sweep_result *r)
{
	json_t *fail = json_loads(r->fail_json != NULL ? r->fail_json :
	    "{}", 0, NULL);
	json_t *j;

	j = json_pack("{s:I, s:o, s:s, s:o, s:o, s:o, s:o, s:o, s:o}",
	    "index", (json_int_t)r->idx, "fail", fail != NULL ? fail :
	    json_object(), "status", r->status,
	    "max_utilization", codec_num(r->max_util),
	    "carried_bps", codec_num(r->carried_bps),
	    "unserved_bps", codec_num(r->unserved_bps),
	    "total_cost", codec_num(r->total_cost),
	    "solve_ms", codec_num(r->solve_ms),
	    "moved_bps", codec_num(r->moved_bps));
	if (j != NULL && r->error != NULL)
		json_object_set_new(j, "error", json_string(r->error));
	return j;
}

static json_t *
sweep_head(const struct db_sweep *s, long done, double elapsed_s)
{
	return json_pack("{s:I, s:s, s:s, s:I, s:I, s:o, s:I, s:I, s:s, "
	    "s:o}", "id", (json_int_t)s->id, "kind", s->kind, "state",
	    s->state, "done", (json_int_t)done, "total",
	    (json_int_t)s->total, "elapsed_s", codec_num(elapsed_s),
	    "model_revision", (json_int_t)s->model_revision,
	    "plan_revision", (json_int_t)s->plan_revision, "created_at",
	    s->created_at, "finished_at", s->finished_at[0] != '\0' ?
	    json_string(s->finished_at) : json_null());
}

char *
codec_sweep_encode(const struct db_sweep *s, const struct db_sweep_result *rs,
    size_t n, bool running, long done, double elapsed_s, size_t *lenp)
{
	json_t *j, *arr, *report = NULL;
	double eta = 0;
	size_t i;
	bool ok = true;

	/*
	 * done counts the results stored (and listed); the running count,
	 * up to a second ahead of it, only estimates the time left.
	 */
	if (running && done > 0)
		eta = elapsed_s / (double)done * (double)(s->total - done);
	if (!running)
		elapsed_s = s->elapsed_s;
	j = sweep_head(s, s->done, elapsed_s);
	if (j == NULL || json_object_set_new(j, "eta_s", running ?
	    codec_num(eta) : codec_num(0)) != 0)
		ok = false;
	arr = json_array();
	for (i = 0; i < n; i++)
		codec_append(arr, result_json(&rs[i]), &ok);
	if (j != NULL && json_object_set_new(j, "results", arr) != 0)
		ok = false;
	if (s->report_json != NULL)
		report = json_loads(s->report_json, 0, NULL);
	if (j != NULL && report != NULL &&
	    json_object_set_new(j, "report", report) != 0)
		ok = false;
	if (j != NULL && s->error != NULL &&
	    json_object_set_new(j, "error", json_string(s->error)) != 0)
		ok = false;
	if (!ok) {
		json_decref(j);
		j = NULL;
	}
	return codec_dump(j, lenp);
}

char *
codec_sweeps_encode(const struct db_sweep *s, size_t n, size_t *lenp)
{
	json_t *arr = json_array();
	size_t i;
	bool ok = true;

	for (i = 0; i < n; i++)
		codec_append(arr, sweep_head(&s[i], s[i].done, s[i].elapsed_s),
		    &ok);
	return codec_dump(ok ? json_pack("{s:o}", "sweeps", arr) : NULL, lenp);
}

/* ---- CSV ---- */

struct text {
	char *s;
	size_t len, cap;
};

static void
put(struct text *t, const char *s, size_t n)
{
	if (t->len + n + 1 > t->cap) {
		t->cap = 2 * (t->len + n + 1) + 1024;
		t->s = xreallocarray(t->s, 1, t->cap);
	}
	memcpy(t->s + t->len, s, n);
	t->len += n;
	t->s[t->len] = '\0';
}

/* One field, quoted when it must be (RFC 4180), then sep. */
static void
field(struct text *t, const char *s, const char *sep)
{
	const char *q;

	if (strpbrk(s, ",\"\r\n") == NULL) {
		put(t, s, strlen(s));
	} else {
		put(t, "\"", 1);
		for (q = s; *q != '\0'; q++)
			if (*q == '"')
				put(t, "\"\"", 2);
			else
				put(t, q, 1);
		put(t, "\"", 1);
	}
	put(t, sep, strlen(sep));
}

static void
num(struct text *t, double x, const char *sep)
{
	char buf[40];

	if (isfinite(x))
		snprintf(buf, sizeof(buf), "%.17g", x);
	else
		buf[0] = '\0';
	field(t, buf, sep);
}

char *
codec_sweep_results_csv(const struct db_sweep_result *rs, size_t n,
    size_t *lenp)
{
	struct text t = { 0 };
	size_t i;
	static const char head[] = "index,fail,status,max_utilization,"
	    "carried_bps,unserved_bps,total_cost,solve_ms,moved_bps,error\r\n";

	put(&t, head, sizeof(head) - 1);
	for (i = 0; i < n; i++) {
		num(&t, (double)rs[i].idx, ",");
		field(&t, rs[i].fail_json != NULL ? rs[i].fail_json : "", ",");
		field(&t, rs[i].status, ",");
		num(&t, rs[i].max_util, ",");
		num(&t, rs[i].carried_bps, ",");
		num(&t, rs[i].unserved_bps, ",");
		num(&t, rs[i].total_cost, ",");
		num(&t, rs[i].solve_ms, ",");
		num(&t, rs[i].moved_bps, ",");
		field(&t, rs[i].error != NULL ? rs[i].error : "", "\r\n");
	}
	*lenp = t.len;
	return t.s;
}

char *
codec_sweep_links_csv(const struct db_sweep *s, size_t *lenp)
{
	static const char *const cols[] = { "link", "from", "to",
		"capacity_bps", "live_load_bps", "worst_load_bps",
		"worst_utilization", "worst_index", "needed_capacity_bps" };
	struct text t = { 0 };
	json_t *rep, *links, *v, *x;
	size_t i, c, nc = sizeof(cols) / sizeof(cols[0]);

	for (c = 0; c < nc; c++)
		field(&t, cols[c], c + 1 < nc ? "," : "\r\n");
	rep = s->report_json != NULL ? json_loads(s->report_json, 0, NULL) :
	    NULL;
	links = rep != NULL ? json_object_get(rep, "links") : NULL;
	json_array_foreach(links, i, v) {
		for (c = 0; c < nc; c++) {
			x = json_object_get(v, cols[c]);
			if (json_is_string(x))
				field(&t, json_string_value(x),
				    c + 1 < nc ? "," : "\r\n");
			else
				num(&t, json_is_number(x) ?
				    json_number_value(x) : NAN,
				    c + 1 < nc ? "," : "\r\n");
		}
	}
	json_decref(rep);
	*lenp = t.len;
	return t.s;
}
